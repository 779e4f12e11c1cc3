"""Out-of-plane (lateral-torsional) buckling of the rib: a linear eigenproblem on the chord polygon.

Model. The same straight elements between stations as the in-plane frame, with the three freedoms out
of the arch's plane at each node: the lateral displacement w (along global Z, out of the plane), and
the rotations about global X and Y. In each element's axes (x along the chord, y the in-plane normal,
z = Z) they are w, the twist phi (about x) and the lateral bending rotation psi (about y, psi = -dw/dx).
Elastic stiffness: lateral bending E I_lat with the cubic (Hermite) shapes, St Venant torsion G J with
linear shapes; warping stiffness is left out (conservative for open sections; closed and solid ribs
have none to speak of). The arch's curvature couples twist and lateral bending through the turn of the
element axes from one element to the next.

Geometric stiffness of a load state (the factor lambda multiplies all of it):
- the element's axial force P (tension positive): P/(30 L) [[36, -3L, -36, -3L], ...] on (w, psi), and
  the Wagner term P r0^2 / L [[1, -1], [-1, 1]] on the twist, r0^2 = (I + I_lat) / A (a doubly
  symmetric section);
- the in-plane bending moment M (linear along the element): the energy term integral of M phi w'' dx,
  which gives the lateral-torsional buckling of a straight beam under a moment (Timoshenko & Gere);
- hangers to a laterally held deck: a hanger of length h carrying T tilts as the rib sways and pushes it
  back with T w / h (a pendulum), a stiffness T / h proportional to the load;
- lateral bracing as elastic springs (kN/m) at given abscissae, or rigid (w = 0) where no stiffness is
  given; elastic stiffness, not scaled by the load.

Springings: "fork" (w = 0 and no twist; free to rotate about the vertical and in plan) or "fixed" (all
three out-of-plane freedoms held). The eigenproblem K phi = -lambda K_G phi is solved for the smallest
positive lambda (the out-of-plane buckling factor) with its mode.

Units: m, kN, kNm; mode shapes scaled to a largest lateral displacement of 1 (w) with the twist in rad
per unit w.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from formfind.errors import AnalysisError
from formfind.model.geometry import Axis

GAUSS_T = np.array([0.5 - 0.5 / np.sqrt(3.0), 0.5 + 0.5 / np.sqrt(3.0)])  # two-point rule on [0, 1]


@dataclass(frozen=True)
class LateralRestraints:
    """What holds the rib out of its plane.

    ``springings``: "fork" or "fixed". ``brace_x_m``: abscissae of lateral braces (m) with
    ``brace_stiffness_kN_m`` each (None: rigid). ``hanger_force_kN``: the tension of a hanger at each
    station (kN, per unit load factor; zeros: none) and ``hanger_length_m`` its length to the laterally held
    deck (m; stations without a hanger ignored).
    """

    springings: str = "fork"
    brace_x_m: tuple[float, ...] = ()
    brace_stiffness_kN_m: float | None = None
    hanger_force_kN: np.ndarray | None = None
    hanger_length_m: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class LateralBuckling:
    """Out-of-plane buckling of one load state.

    Attributes:
        state, group: the reference state and its case or combination.
        factors: load factors on the state, ascending, positive (empty if nothing compresses the rib).
        modes: (modes, stations, 3): lateral displacement w (scaled to a largest |w| of 1), twist about
            the tangent (rad per unit w), lateral bending rotation (rad per unit w).
        restraint: the restraints in words, for the report.
    """

    state: str
    group: str
    factors: np.ndarray
    modes: np.ndarray
    restraint: str

    @property
    def critical_factor(self) -> float:
        """The smallest positive factor (inf if none)."""
        return float(self.factors[0]) if self.factors.size else float("inf")


def _element_matrices(length: np.ndarray, EI_lat: np.ndarray, GJ: np.ndarray, axial: np.ndarray,
                      r0_sq: np.ndarray, moment_i: np.ndarray, moment_j: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Local elastic and geometric stiffness (elements, 6, 6) on (w1, phi1, psi1, w2, phi2, psi2)."""
    L = length
    ne = L.size
    ke = np.zeros((ne, 6, 6))
    kg = np.zeros((ne, 6, 6))
    bend = [0, 2, 3, 5]  # w1, psi1, w2, psi2
    twist = [1, 4]
    # lateral bending with psi = -dw/dx
    kb = np.array([[12.0, -6.0, -12.0, -6.0], [-6.0, 4.0, 6.0, 2.0], [-12.0, 6.0, 12.0, 6.0], [-6.0, 2.0, 6.0, 4.0]])
    lpow = np.array([[0, 1, 0, 1], [1, 2, 1, 2], [0, 1, 0, 1], [1, 2, 1, 2]])
    for a in range(4):
        for b in range(4):
            ke[:, bend[a], bend[b]] = EI_lat / L**3 * kb[a, b] * L ** lpow[a, b]
    gb = np.array([[36.0, -3.0, -36.0, -3.0], [-3.0, 4.0, 3.0, -1.0], [-36.0, 3.0, 36.0, 3.0], [-3.0, -1.0, 3.0, 4.0]])
    for a in range(4):
        for b in range(4):
            kg[:, bend[a], bend[b]] = axial / (30.0 * L) * gb[a, b] * L ** lpow[a, b]
    for a, sa in ((0, 1.0), (1, -1.0)):
        for b, sb in ((0, 1.0), (1, -1.0)):
            ke[:, twist[a], twist[b]] = sa * sb * GJ / L
            kg[:, twist[a], twist[b]] = sa * sb * axial * r0_sq / L
    # integral of M phi w'' dx: w'' of the Hermite shapes (psi = -w'), phi linear, M linear
    for t in GAUSS_T:
        weight = 0.5 * L
        m = (1.0 - t) * moment_i + t * moment_j
        d2 = np.stack([(-6.0 + 12.0 * t) / L**2, -(-4.0 + 6.0 * t) / L, (6.0 - 12.0 * t) / L**2,
                       -(-2.0 + 6.0 * t) / L], axis=-1)  # (elements, 4) on (w1, psi1, w2, psi2)
        phi = np.array([1.0 - t, t])
        for a in range(4):
            for b in range(2):
                value = weight * m * d2[:, a] * phi[b]
                kg[:, bend[a], twist[b]] += value
                kg[:, twist[b], bend[a]] += value
    return ke, kg


def _transform(cos: np.ndarray, sin: np.ndarray) -> np.ndarray:
    """(elements, 6, 6): local (w, phi, psi) per node from global (w, theta_X, theta_Y)."""
    ne = cos.size
    t = np.zeros((ne, 6, 6))
    for base in (0, 3):
        t[:, base, base] = 1.0
        t[:, base + 1, base + 1] = cos  # phi = c theta_X + s theta_Y
        t[:, base + 1, base + 2] = sin
        t[:, base + 2, base + 1] = -sin  # psi = -s theta_X + c theta_Y
        t[:, base + 2, base + 2] = cos
    return t


def assemble(axis: Axis, EI_lat: np.ndarray, GJ: np.ndarray, axial: np.ndarray, r0_sq: np.ndarray,
             moment: np.ndarray, restraints: LateralRestraints) -> tuple[sp.csr_matrix, sp.csr_matrix, np.ndarray]:
    """Global K, K_G (3 per station: w, theta_X, theta_Y) and the free dofs. ``EI_lat``, ``GJ``, ``r0_sq``
    and ``axial`` per element; ``moment`` the in-plane M at the stations (kNm)."""
    n = axis.count
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    length = np.hypot(dx, dy)
    cos, sin = dx / length, dy / length
    ke, kg = _element_matrices(length, EI_lat, GJ, axial, r0_sq, moment[:-1], moment[1:])
    t = _transform(cos, sin)
    ke = np.matmul(np.matmul(t.transpose(0, 2, 1), ke), t)
    kg = np.matmul(np.matmul(t.transpose(0, 2, 1), kg), t)
    dofs = np.concatenate([3 * np.arange(n - 1)[:, None] + np.arange(3), 3 * np.arange(1, n)[:, None] + np.arange(3)],
                          axis=1)
    rows = np.repeat(dofs, 6, axis=1).ravel()
    cols = np.tile(dofs, (1, 6)).ravel()
    size = 3 * n
    K = sp.coo_matrix((ke.ravel(), (rows, cols)), shape=(size, size)).tocsr()
    KG = sp.coo_matrix((kg.ravel(), (rows, cols)), shape=(size, size)).tocsr()
    held: set[int] = set()
    for end in (0, n - 1):
        held.add(3 * end)  # w; a fork's twist is held by `solve` (a change of basis)
        if restraints.springings == "fixed":
            held.update((3 * end + 1, 3 * end + 2))
    springs = np.zeros(size)
    for x in restraints.brace_x_m:
        i = int(np.argmin(np.abs(axis.x - x)))
        if restraints.brace_stiffness_kN_m is None:
            held.add(3 * i)
        else:
            springs[3 * i] += restraints.brace_stiffness_kN_m
    K = K + sp.diags(springs)
    if restraints.hanger_force_kN is not None and restraints.hanger_length_m is not None:
        force, hang = np.asarray(restraints.hanger_force_kN), np.asarray(restraints.hanger_length_m)
        with np.errstate(divide="ignore", invalid="ignore"):
            k_hanger = np.where((force > 0) & (hang > 0), force / np.where(hang > 0, hang, 1.0), 0.0)
        restoring = np.zeros(size)
        restoring[0::3] = k_hanger
        KG = KG + sp.diags(restoring)  # a stabilising stiffness that grows with the load
    free = np.setdiff1d(np.arange(size), np.array(sorted(held), dtype=int))
    return K, KG, free


def solve(axis: Axis, EI_lat: np.ndarray, GJ: np.ndarray, axial: np.ndarray, r0_sq: np.ndarray,
          moment: np.ndarray, restraints: LateralRestraints, modes: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Buckling factors (ascending, positive) and modes (modes, stations, 3: w, twist, lateral rotation).

    Raises:
        AnalysisError: if the rib is free to move out of its plane (no restraint), or the eigensolver fails.
    """
    import scipy.linalg

    n = axis.count
    K, KG, free = assemble(axis, EI_lat, GJ, axial, r0_sq, moment, restraints)
    size = 3 * n
    # basis of the admissible displacements: identity on the free dofs, with a fork's twist removed by
    # keeping at each springing only the rotation about the in-plane normal of its end element
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    length = np.hypot(dx, dy)
    ends = {0: (dx[0] / length[0], dy[0] / length[0]), n - 1: (dx[-1] / length[-1], dy[-1] / length[-1])}
    rows, cols, vals = [], [], []
    col = 0
    for dof in free:
        node, kind = divmod(int(dof), 3)
        if restraints.springings == "fork" and node in ends and kind in (1, 2):
            if kind == 2:
                continue
            c, s = ends[node]
            rows += [3 * node + 1, 3 * node + 2]  # the rotation about the normal: theta = psi (-s, c)
            cols += [col, col]
            vals += [-s, c]
        else:
            rows.append(int(dof))
            cols.append(col)
            vals.append(1.0)
        col += 1
    T = sp.csr_matrix((vals, (rows, cols)), shape=(size, col))
    k = (T.T @ K @ T).toarray()
    g = -(T.T @ KG @ T).toarray()
    k = 0.5 * (k + k.T)
    g = 0.5 * (g + g.T)
    try:
        # mu = 1 / lambda: g phi = mu k phi, k positive definite; the largest mu are the smallest factors
        mu, vec = scipy.linalg.eigh(g, k)
    except np.linalg.LinAlgError as exc:
        raise AnalysisError(f"out-of-plane buckling: the rib is not held out of its plane ({exc})") from None
    order = np.argsort(mu)[::-1]
    mu, vec = mu[order], vec[:, order]
    scale = max(float(np.abs(mu).max()), 1e-300)
    keep = mu > 1e-12 * scale
    mu, vec = mu[keep][:modes], vec[:, keep][:, :modes]
    factors = 1.0 / mu
    full = (T @ vec).T  # (modes, size)
    shapes = np.zeros((factors.size, n, 3))
    c_st, s_st = np.cos(axis.theta), np.sin(axis.theta)
    for m in range(factors.size):
        u = full[m].reshape(n, 3)
        w = u[:, 0]
        twist = c_st * u[:, 1] + s_st * u[:, 2]
        rotation = -s_st * u[:, 1] + c_st * u[:, 2]
        big = float(np.abs(w).max())
        if big == 0.0:
            big = float(np.abs(u).max()) or 1.0
        sign = np.sign(w[int(np.argmax(np.abs(w)))]) or 1.0
        shapes[m] = np.stack([w, twist, rotation], axis=-1) * sign / big
    return factors, shapes


LATERAL_STATIONS = 241  # the eigenproblem runs on at most this many stations (an even subset, ends kept)


def properties_known(section) -> bool:
    """True if the rib's out-of-plane properties are known (a profile, a rectangle, or given keys)."""
    return section.lateral_second_moment_m4 is not None and section.torsion_constant_m4 is not None


def restraints_of(case, axis: Axis, loads, state: int) -> tuple[LateralRestraints, str]:
    """The case's `[lateral]` restraints for one load state of ``loads`` (hanger tensions from its
    downward point loads), and a sentence saying what they are."""
    lat = case.lateral
    words = [f"springings {lat.springings.value}"]
    force = length = None
    if lat.deck_level_m is not None:
        force = np.zeros(axis.count)
        mine = np.flatnonzero(loads.point_state == state)
        down = -loads.point_force[mine, 1]
        at = np.clip(np.searchsorted(axis.x, loads.point_x[mine] - 1e-9 * axis.span_m), 0, axis.count - 1)
        np.add.at(force, at, np.maximum(down, 0.0))
        length = axis.y - lat.deck_level_m
        hung = int(np.count_nonzero((force > 0) & (length > 0)))
        words.append(f"{hung} hangers to a deck held sideways at y = {lat.deck_level_m:g} m")
    if lat.brace_x_m:
        stiffness = ("rigid" if lat.brace_stiffness_kN_m is None else f"{lat.brace_stiffness_kN_m:g} kN/m each")
        words.append(f"braces at x = {', '.join(f'{x:g}' for x in lat.brace_x_m)} m ({stiffness})")
    return (LateralRestraints(lat.springings.value, lat.brace_x_m, lat.brace_stiffness_kN_m, force, length),
            "; ".join(words))


def state_lateral(case, analysis, response, loads, k: int, modes: int = 2) -> LateralBuckling:
    """Out-of-plane buckling of state ``k`` of ``response`` (its ``loads``) on the analysed axis.

    Element axial forces are the means of the station values at the element's ends (the right-hand value
    at its start, the left-hand one at its end); the in-plane moments are the stations'. Above
    ``LATERAL_STATIONS`` stations an even subset of them carries the eigenproblem (the factor converges
    with the element length, about 0.4 % above the closed form at 121 stations for a quarter-circle).
    """
    axis, section = analysis.axis, analysis.section
    rib = case.section
    n = axis.count
    keep = np.arange(n)
    if n > LATERAL_STATIONS:
        keep = np.unique(np.round(np.linspace(0, n - 1, LATERAL_STATIONS)).astype(int))
    sub = Axis(axis.x[keep], axis.y[keep], axis.theta[keep])
    E = section.elastic_modulus_kN_m2[keep]
    G = section.shear_modulus_kN_m2[keep]
    scale_I = section.second_moment_m4[keep] / rib.second_moment_m4  # secant or tapered ribs vary alike
    I_lat = rib.lateral_second_moment_m4 * scale_I
    J = rib.torsion_constant_m4 * scale_I
    A = section.area_m2[keep]
    I_in = section.second_moment_m4[keep]

    def mean(values: np.ndarray) -> np.ndarray:
        return 0.5 * (values[:-1] + values[1:])

    N_right, N_left = response.N[k][keep], response.N_left[k][keep]
    axial = 0.5 * (N_right[:-1] + N_left[1:])
    r0_sq = mean((I_in + I_lat) / A)
    restraints, words = restraints_of(case, axis, loads, k)
    if restraints.hanger_force_kN is not None:
        force = np.add.reduceat(restraints.hanger_force_kN, keep) if n > LATERAL_STATIONS else \
            restraints.hanger_force_kN
        restraints = LateralRestraints(restraints.springings, restraints.brace_x_m, restraints.brace_stiffness_kN_m,
                                       force, restraints.hanger_length_m[keep])
    if not np.any(axial < 0.0):
        return LateralBuckling(response.names[k], response.groups[k], np.zeros(0), np.zeros((0, n, 3)), words)
    factors, shapes = solve(sub, mean(E * I_lat), mean(G * J), axial, r0_sq, response.M[k][keep], restraints, modes)
    if n > LATERAL_STATIONS:
        shapes = np.stack([np.stack([np.interp(axis.x, sub.x, m[:, c]) for c in range(3)], axis=-1) for m in shapes])
    return LateralBuckling(response.names[k], response.groups[k], factors, shapes, words)
