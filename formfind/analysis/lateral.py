"""Out-of-plane (lateral-torsional) buckling of the rib: a linear eigenproblem on the chord polygon.

Model. The same straight elements between stations as the in-plane frame, with the three freedoms out
of the arch's plane at each node: the lateral displacement w (along global Z, out of the plane), and
the rotations about global X and Y. In each element's axes (x along the chord, y the in-plane normal,
z = Z) they are w, the twist phi (about x) and the lateral bending rotation psi (about y, psi = -dw/dx).
Elastic stiffness: lateral bending E I_lat with the cubic (Hermite) shapes, St Venant torsion G J with
linear shapes; where the section has a warping constant (an I-section), warping stiffness E I_w too, the
twist then cubic with its rate as a fourth freedom (free at a fork, held at a fixed springing). The arch's curvature couples twist and lateral bending through the turn of the
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

GAUSS_T = 0.5 + 0.5 * np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])  # three-point rule on [0, 1]
GAUSS_W = np.array([5.0, 8.0, 5.0]) / 18.0


@dataclass(frozen=True)
class LateralRestraints:
    """What holds the rib out of its plane.

    ``springings``: "fork" or "fixed"; ``plan_stiffness_kNm_rad``: an elastic fork, a rotational spring
    against the rib's turn in plan at each springing (None: free). ``brace_x_m``: abscissae of lateral braces (m) with
    ``brace_stiffness_kN_m`` each (None: rigid). ``hanger_force_kN``: the tension of a hanger at each
    station (kN, per unit load factor; zeros: none) and ``hanger_length_m`` its length to the laterally held
    deck (m; stations without a hanger ignored).
    """

    springings: str = "fork"
    brace_x_m: tuple[float, ...] = ()
    plan_stiffness_kNm_rad: float | None = None
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
                      r0_sq: np.ndarray, moment_i: np.ndarray, moment_j: np.ndarray,
                      EIw: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Local elastic and geometric stiffness (elements, 2m, 2m) on (w, phi, psi[, beta]) at each end, m = 3,
    or 4 with warping (``EIw``): beta = dphi/dx, the twist then cubic (Hermite) instead of linear."""
    L = length
    ne = L.size
    m = 3 if EIw is None else 4
    ke = np.zeros((ne, 2 * m, 2 * m))
    kg = np.zeros((ne, 2 * m, 2 * m))
    bend = [0, 2, m, m + 2]  # w1, psi1, w2, psi2 (psi = -dw/dx)
    kb = np.array([[12.0, -6.0, -12.0, -6.0], [-6.0, 4.0, 6.0, 2.0], [-12.0, 6.0, 12.0, 6.0], [-6.0, 2.0, 6.0, 4.0]])
    gb = np.array([[36.0, -3.0, -36.0, -3.0], [-3.0, 4.0, 3.0, -1.0], [-36.0, 3.0, 36.0, 3.0], [-3.0, -1.0, 3.0, 4.0]])
    lpow = np.array([[0, 1, 0, 1], [1, 2, 1, 2], [0, 1, 0, 1], [1, 2, 1, 2]])
    for a in range(4):
        for b in range(4):
            ke[:, bend[a], bend[b]] = EI_lat / L**3 * kb[a, b] * L ** lpow[a, b]
            kg[:, bend[a], bend[b]] = axial / (30.0 * L) * gb[a, b] * L ** lpow[a, b]
    if EIw is None:  # linear twist
        twist = [1, m + 1]
        for a, sa in ((0, 1.0), (1, -1.0)):
            for b, sb in ((0, 1.0), (1, -1.0)):
                ke[:, twist[a], twist[b]] = sa * sb * GJ / L
                kg[:, twist[a], twist[b]] = sa * sb * axial * r0_sq / L
    else:  # cubic twist with its rate beta = +dphi/dx: the patterns of a beam with theta = +v'
        twist = [1, 3, m + 1, m + 3]
        gt = np.array([[36.0, 3.0, -36.0, 3.0], [3.0, 4.0, -3.0, -1.0], [-36.0, -3.0, 36.0, -3.0], [3.0, -1.0, -3.0, 4.0]])
        kt = np.array([[12.0, 6.0, -12.0, 6.0], [6.0, 4.0, -6.0, 2.0], [-12.0, -6.0, 12.0, -6.0], [6.0, 2.0, -6.0, 4.0]])
        for a in range(4):
            for b in range(4):
                ke[:, twist[a], twist[b]] = (GJ / (30.0 * L) * gt[a, b] + EIw / L**3 * kt[a, b]) * L ** lpow[a, b]
                kg[:, twist[a], twist[b]] = axial * r0_sq / (30.0 * L) * gt[a, b] * L ** lpow[a, b]
    # integral of M phi w'' dx: w'' of the Hermite shapes, phi linear or Hermite, M linear (3-point Gauss:
    # exact for these polynomials of degree 5 at most)
    for t, weight in zip(GAUSS_T, GAUSS_W, strict=True):
        mom = (1.0 - t) * moment_i + t * moment_j
        d2 = np.stack([(-6.0 + 12.0 * t) / L**2, (4.0 - 6.0 * t) / L, (6.0 - 12.0 * t) / L**2,
                       (2.0 - 6.0 * t) / L], axis=-1)  # (elements, 4) on (w1, psi1, w2, psi2)
        if EIw is None:
            phi = np.stack([np.full(ne, 1.0 - t), np.full(ne, t)], axis=-1)
        else:
            phi = np.stack([np.full(ne, 1 - 3 * t**2 + 2 * t**3), (t - 2 * t**2 + t**3) * L,
                            np.full(ne, 3 * t**2 - 2 * t**3), (-(t**2) + t**3) * L], axis=-1)
        for a in range(4):
            for b in range(len(twist)):
                value = weight * L * mom * d2[:, a] * phi[:, b]
                kg[:, bend[a], twist[b]] += value
                kg[:, twist[b], bend[a]] += value
    return ke, kg


def _transform(cos: np.ndarray, sin: np.ndarray, m: int = 3) -> np.ndarray:
    """(elements, 2m, 2m): local (w, phi, psi[, beta]) per node from global (w, theta_X, theta_Y[, beta])."""
    ne = cos.size
    t = np.zeros((ne, 2 * m, 2 * m))
    for base in (0, m):
        t[:, base, base] = 1.0
        t[:, base + 1, base + 1] = cos  # phi = c theta_X + s theta_Y
        t[:, base + 1, base + 2] = sin
        t[:, base + 2, base + 1] = -sin  # psi = -s theta_X + c theta_Y
        t[:, base + 2, base + 2] = cos
        if m == 4:
            t[:, base + 3, base + 3] = 1.0  # the rate of twist is a scalar along the rib
    return t


def assemble(axis: Axis, EI_lat: np.ndarray, GJ: np.ndarray, axial: np.ndarray, r0_sq: np.ndarray,
             moment: np.ndarray, restraints: LateralRestraints,
             EIw: np.ndarray | None = None) -> tuple[sp.csr_matrix, sp.csr_matrix, np.ndarray]:
    """Global K, K_G (per station: w, theta_X, theta_Y, and the rate of twist with warping ``EIw``) and the
    free dofs. ``EI_lat``, ``GJ``, ``r0_sq``, ``axial`` and ``EIw`` per element; ``moment`` the in-plane M
    at the stations (kNm)."""
    n = axis.count
    m = 3 if EIw is None else 4
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    length = np.hypot(dx, dy)
    cos, sin = dx / length, dy / length
    ke, kg = _element_matrices(length, EI_lat, GJ, axial, r0_sq, moment[:-1], moment[1:], EIw)
    t = _transform(cos, sin, m)
    ke = np.matmul(np.matmul(t.transpose(0, 2, 1), ke), t)
    kg = np.matmul(np.matmul(t.transpose(0, 2, 1), kg), t)
    dofs = np.concatenate([m * np.arange(n - 1)[:, None] + np.arange(m), m * np.arange(1, n)[:, None] + np.arange(m)],
                          axis=1)
    rows = np.repeat(dofs, 2 * m, axis=1).ravel()
    cols = np.tile(dofs, (1, 2 * m)).ravel()
    size = m * n
    K = sp.coo_matrix((ke.ravel(), (rows, cols)), shape=(size, size)).tocsr()
    KG = sp.coo_matrix((kg.ravel(), (rows, cols)), shape=(size, size)).tocsr()
    held: set[int] = set()
    for end in (0, n - 1):
        held.add(m * end)  # w; a fork's twist is held by `solve` (a change of basis), its warping is free
        if restraints.springings == "fixed":
            held.update(m * end + j for j in range(1, m))
    springs = np.zeros(size)
    for x in restraints.brace_x_m:
        i = int(np.argmin(np.abs(axis.x - x)))
        if restraints.brace_stiffness_kN_m is None:
            held.add(m * i)
        else:
            springs[m * i] += restraints.brace_stiffness_kN_m
    K = K + sp.diags(springs)
    if restraints.springings == "fork" and restraints.plan_stiffness_kNm_rad:  # an elastic fork
        k = restraints.plan_stiffness_kNm_rad
        spring_rows, spring_cols, spring_vals = [], [], []
        for end, (c, s) in ((0, (cos[0], sin[0])), (n - 1, (cos[-1], sin[-1]))):
            normal = np.array([-s, c])  # the turn in plan: rotation about the in-plane normal
            idx = [m * end + 1, m * end + 2]
            for a in range(2):
                for b in range(2):
                    spring_rows.append(idx[a])
                    spring_cols.append(idx[b])
                    spring_vals.append(k * normal[a] * normal[b])
        K = K + sp.coo_matrix((spring_vals, (spring_rows, spring_cols)), shape=(size, size)).tocsr()
    if restraints.hanger_force_kN is not None and restraints.hanger_length_m is not None:
        force, hang = np.asarray(restraints.hanger_force_kN), np.asarray(restraints.hanger_length_m)
        with np.errstate(divide="ignore", invalid="ignore"):
            k_hanger = np.where((force > 0) & (hang > 0), force / np.where(hang > 0, hang, 1.0), 0.0)
        restoring = np.zeros(size)
        restoring[0::m] = k_hanger
        KG = KG + sp.diags(restoring)  # a stabilising stiffness that grows with the load
    free = np.setdiff1d(np.arange(size), np.array(sorted(held), dtype=int))
    return K, KG, free


DENSE_BELOW = 120  # freedoms: below this a dense eigensolution is quicker than the iterative one


def _largest(g: sp.csc_matrix, k: sp.csc_matrix, modes: int) -> tuple[np.ndarray, np.ndarray]:
    """The largest eigenvalues mu (and vectors) of g phi = mu k phi, k positive definite: by ARPACK on the
    banded sparse matrices with k factorised once (a seeded start vector: the same answer every run),
    dense for small problems or where ARPACK does not converge.

    Raises:
        AnalysisError: if k is singular (the rib is not held out of its plane).
    """
    import scipy.linalg
    from scipy.sparse.linalg import ArpackError, ArpackNoConvergence, LinearOperator, eigsh, splu

    size = k.shape[0]
    if size >= DENSE_BELOW:
        try:
            lu = splu(k)
            k_inv = LinearOperator(k.shape, matvec=lambda v: lu.solve(np.ravel(v)), dtype=float)
            start = np.random.default_rng(20241205).standard_normal(size)
            return eigsh(g, k=min(modes + 3, size - 2), M=k, Minv=k_inv, which="LA", tol=1e-10, v0=start)
        except RuntimeError as exc:  # a singular k: splu says "Factor is exactly singular"
            if "singular" in str(exc):
                raise AnalysisError("out-of-plane buckling: the rib is not held out of its plane") from None
        except (ArpackError, ArpackNoConvergence):
            pass
    try:
        return scipy.linalg.eigh(g.toarray(), k.toarray())
    except np.linalg.LinAlgError as exc:
        raise AnalysisError(f"out-of-plane buckling: the rib is not held out of its plane ({exc})") from None


def solve(axis: Axis, EI_lat: np.ndarray, GJ: np.ndarray, axial: np.ndarray, r0_sq: np.ndarray,
          moment: np.ndarray, restraints: LateralRestraints, modes: int = 3,
          EIw: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Buckling factors (ascending, positive) and modes (modes, stations, 3: w, twist, lateral rotation);
    ``EIw`` (per element, kNm4) adds the warping stiffness of an open section.

    Raises:
        AnalysisError: if the rib is free to move out of its plane (no restraint), or the eigensolver fails.
    """
    n = axis.count
    if EIw is not None and not np.any(EIw > 0):
        EIw = None
    m = 3 if EIw is None else 4
    K, KG, free = assemble(axis, EI_lat, GJ, axial, r0_sq, moment, restraints, EIw)
    size = m * n
    # basis of the admissible displacements: identity on the free dofs, with a fork's twist removed by
    # keeping at each springing only the rotation about the in-plane normal of its end element
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    length = np.hypot(dx, dy)
    ends = {0: (dx[0] / length[0], dy[0] / length[0]), n - 1: (dx[-1] / length[-1], dy[-1] / length[-1])}
    node, kind = np.divmod(free, m)
    forked = (restraints.springings == "fork") & np.isin(node, list(ends)) & np.isin(kind, (1, 2))
    kept = free[~(forked & (kind == 2))]  # a fork keeps one rotation per springing, in its column 1
    col_of = np.arange(kept.size)
    plain = ~np.isin(kept, free[forked])
    rows, cols, vals = [kept[plain]], [col_of[plain]], [np.ones(int(plain.sum()))]
    for dof, col in zip(kept[~plain], col_of[~plain], strict=True):
        c, s = ends[int(dof) // m]
        rows.append(np.array([dof, dof + 1]))  # the rotation about the normal: theta = psi (-s, c)
        cols.append(np.array([col, col]))
        vals.append(np.array([-s, c]))
    T = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(size, kept.size))
    k = (T.T @ K @ T).tocsc()
    g = -(T.T @ KG @ T).tocsc()
    k = 0.5 * (k + k.T)
    g = 0.5 * (g + g.T)
    # mu = 1 / lambda: g phi = mu k phi, k positive definite; the largest mu are the smallest factors
    mu, vec = _largest(g, k, modes)
    order = np.argsort(mu)[::-1]
    mu, vec = mu[order], vec[:, order]
    scale = max(float(np.abs(mu).max()), 1e-300)
    keep = mu > 1e-12 * scale
    mu, vec = mu[keep][:modes], vec[:, keep][:, :modes]
    factors = 1.0 / mu
    full = (T @ vec).T  # (modes, size)
    shapes = np.zeros((factors.size, n, 3))
    c_st, s_st = np.cos(axis.theta), np.sin(axis.theta)
    for j in range(factors.size):
        u = full[j].reshape(n, -1)
        w = u[:, 0]
        twist = c_st * u[:, 1] + s_st * u[:, 2]
        rotation = -s_st * u[:, 1] + c_st * u[:, 2]
        big = float(np.abs(w).max())
        if big == 0.0:
            big = float(np.abs(u).max()) or 1.0
        sign = np.sign(w[int(np.argmax(np.abs(w)))]) or 1.0
        shapes[j] = np.stack([w, twist, rotation], axis=-1) * sign / big
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
    if lat.plan_stiffness_kNm_rad is not None and lat.springings.value == "fork":
        words[0] += f" with a spring of {lat.plan_stiffness_kNm_rad:g} kNm/rad against turning in plan"
    return (LateralRestraints(lat.springings.value, lat.brace_x_m, lat.plan_stiffness_kNm_rad, lat.brace_stiffness_kN_m,
                              force, length), "; ".join(words))


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
        restraints = LateralRestraints(restraints.springings, restraints.brace_x_m, restraints.plan_stiffness_kNm_rad,
                                       restraints.brace_stiffness_kN_m, force, restraints.hanger_length_m[keep])
    if not np.any(axial < 0.0):
        return LateralBuckling(response.names[k], response.groups[k], np.zeros(0), np.zeros((0, n, 3)), words)
    warping = None
    if rib.warping_constant_m6:
        warping = mean(E * rib.warping_constant_m6 * scale_I)
    factors, shapes = solve(sub, mean(E * I_lat), mean(G * J), axial, r0_sq, response.M[k][keep], restraints, modes,
                            warping)
    if n > LATERAL_STATIONS:
        shapes = np.stack([np.stack([np.interp(axis.x, sub.x, m[:, c]) for c in range(3)], axis=-1) for m in shapes])
    return LateralBuckling(response.names[k], response.groups[k], factors, shapes, words)
