"""Thrust-line admissibility of unreinforced (no-tension) ribs: Heyman's safe theorem as linear programs.

Model (Heyman, *The Stone Skeleton*, 1966, and *The Masonry Arch*, 1982): masonry has no tensile
strength, crushing is far off, and the joints do not slide. The safe (lower-bound) theorem then says:
if a line of thrust in equilibrium with the loads lies wholly within the ring, the ring will not
collapse under those loads.

Formulation. The joints are the sections normal to the axis at the stations (radial joints for a
circular ring). For a given set of loads, the internal forces at every joint are affine in the
three reactions at the left springing (Rx, Ry in kN and a moment Mz in kNm):
``M = M_load + A_M r`` and ``N = N_load + A_N r`` (signs of `formfind.analysis.response`). The line of
thrust passes through joint i within a zone of half-width z_i about the axis iff

    |M_i| <= -N_i z_i        (which also demands compression, N_i <= 0),

two linear inequalities per joint side. Hinged springings or a crown hinge add M = 0 there. So:

- *admissibility* with a zone fraction s (z_i = s d_i / 2) is a feasibility LP in r;
- the *geometric factor of safety* (Heyman) is 1 / s_min, the smallest zone still holding a thrust
  line; feasibility is monotone in s, so s_min is found by bisection (the problem is quasi-convex);
- the *collapse load factor* on a live load is one LP: maximise lambda subject to the zone
  constraints for the loads ``dead + lambda live``; its active joints (where the line touches the
  intrados or the extrados) are the hinges of the collapse mechanism (the uniqueness theorem).

Temperature and support movement cause no forces in a statically admissible no-tension ring: the
ring accommodates them by cracking, which is Heyman's point. They are ignored here.

Finite compressive strength f (collapse only, ``strength_kN_m2``). A joint carrying N over a width b
crushes over a depth a = |N| / (f b) at the face it turns about (a rectangular stress block at f), so
the line of thrust can only come within a / 2 of that face: |M| <= -N z - N^2 / (2 f b) (Heyman, *The
Masonry Arch*, crushing at the hinges; Gilbert's and Harvey's ring models use the same block; from
memory). The constraint is convex in (M, N), hence in the reactions and the load factor; it is
solved by Kelley's cutting planes: LPs with tangents of N^2 / (2 f b) added where the line breaks the
true constraint, until no joint breaks it by more than 1e-7 of the largest moment capacity. The first LP is
the rigid-block one (N^2 term dropped), so the factors fall as f falls and tend to today's as f grows.

The programs are built once with cvxpy parameters (disciplined parametrised programming) and re-solved
for every load state, zone fraction or live-load position.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.statics import CutResultants, cut_resultants, internal_forces
from formfind.design.convex import silent_stdout
from formfind.enums import SupportKind
from formfind.errors import FormFindingError
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

ZONE_TOLERANCE = 1e-4  # relative bisection tolerance of the least zone fraction
LARGEST_ZONE = 50.0
SMALLEST_ZONE = 1e-6  # a line of thrust within a millionth of the depth: a funicular axis, factor "inf"  # a zone 50 times the ring: beyond it the line of thrust is "nowhere near"
NO_COLLAPSE = 1e4  # the live-load factor is capped here (a live load the ring carries at any factor)
HINGE_DUAL = 1e-7  # a joint constraint with a dual above this (relative to the largest) is a hinge


@dataclass(frozen=True, eq=False)
class JointForces:
    """Internal forces at the joints as affine functions of the left springing reactions.

    For load state k: ``M[k] + A_M @ r``, ``N[k] + A_N @ r``, ``N_left[k] + A_N @ r`` with
    r = (Rx kN, Ry kN, Mz kNm) the reactions of the left support on the ring.

    Attributes:
        M, N, N_left: (states, joints) kNm and kN for r = 0.
        A_M: (joints, 3) kNm per unit reaction component; A_N: (joints, 3) kN per unit.
        half_depth: (joints,) half the ring depth normal to the axis, m.
        hinges: joints where the moment must vanish (hinged springings, a crown hinge).
    """

    M: np.ndarray
    N: np.ndarray
    N_left: np.ndarray
    A_M: np.ndarray
    A_N: np.ndarray
    half_depth: np.ndarray
    hinges: tuple[int, ...]
    V: np.ndarray | None = None
    V_left: np.ndarray | None = None
    A_V: np.ndarray | None = None


def _unit_cuts(axis: Axis) -> CutResultants:
    zero = np.zeros((3, axis.count))
    return CutResultants(zero, zero, zero, zero, zero, np.zeros((3, 2)), np.zeros(3))


def joint_forces(axis: Axis, loads: StationLoads, depth_m: np.ndarray,
                 kind: SupportKind = SupportKind.FIXED, hinge_station: int | None = None) -> JointForces:
    """The affine joint forces of every state of ``loads`` on ``axis`` (depth (stations,) in m).

    ``kind`` decides which joints must carry no moment: none for fixed springings (the line of thrust
    may pass anywhere within the springing joint), the springings for two-hinged (and tied) ribs, and
    the crown hinge too for three-hinged ones.
    """
    cuts = cut_resultants(axis, loads)
    zero = np.zeros((loads.count, 2))
    N, V, M, N_left, V_left = internal_forces(axis, cuts, zero, np.zeros(loads.count))
    unit = np.eye(3)
    uN, uV, uM, _, _ = internal_forces(axis, _unit_cuts(axis), unit[:, :2], unit[:, 2])
    hinges: tuple[int, ...] = ()
    if kind is not SupportKind.FIXED:
        hinges = (0, axis.count - 1)
    if kind is SupportKind.THREE_HINGED and hinge_station is not None:
        hinges = (0, hinge_station, axis.count - 1)
    return JointForces(M, N, N_left, uM.T.copy(), uN.T.copy(), 0.5 * np.asarray(depth_m, dtype=float), hinges,
                       V, V_left, uV.T.copy())


class _ZoneProgram:
    """Feasibility of a thrust line within zone fraction s, re-solved with new loads or zones.

    Parameters (DPP): the load moments M, and the zone-weighted axial terms z N, z N_left and z A_N
    (z = s d / 2 per joint), so the constraints M + A_M r -+ ... stay affine in the parameters.
    """

    def __init__(self, joints: JointForces) -> None:
        import cvxpy as cp

        n = joints.half_depth.size
        self.r = cp.Variable(3)
        self.M = cp.Parameter(n)
        self.zN = cp.Parameter(n)
        self.zN_left = cp.Parameter(n)
        self.zA = cp.Parameter((n, 3))
        m = self.M + joints.A_M @ self.r
        cons = []
        for zn in (self.zN, self.zN_left):
            axial = zn + self.zA @ self.r  # z N, kNm: the largest moment a compressed joint can carry is -z N
            cons += [m + axial <= 0, -m + axial <= 0]
        if joints.hinges:
            h = list(joints.hinges)
            cons.append(joints.A_M[h] @ self.r == -self.M[h])
        self.problem = cp.Problem(cp.Minimize(0), cons)
        self.joints = joints

    def feasible(self, state: int, fraction: float) -> bool:
        """Whether a line of thrust of ``state`` lies within ``fraction`` of the ring at every joint."""
        j = self.joints
        z = fraction * j.half_depth
        self.M.value = j.M[state]
        self.zN.value = z * j.N[state]
        self.zN_left.value = z * j.N_left[state]
        self.zA.value = z[:, None] * j.A_N
        status = _solve(self.problem)
        return status in ("optimal", "optimal_inaccurate")


def _solve(problem) -> str:
    import cvxpy as cp

    with silent_stdout():
        try:
            problem.solve(solver=cp.HIGHS)
        except cp.SolverError:
            problem.solve(solver=cp.CLARABEL)
    return str(problem.status)


@dataclass(frozen=True)
class ZoneResult:
    """Thrust-line admissibility of one load state.

    Attributes:
        state: name of the load state.
        admissible: a line of thrust lies within the zone fraction asked for.
        geometric_factor: Heyman's geometric factor of safety, the ring depth over the depth of the
            thinnest concentric zone that still holds a line of thrust (below 1: none within the ring).
    """

    state: str
    admissible: bool
    geometric_factor: float


def least_zone_fraction(program: _ZoneProgram, state: int, tol: float = ZONE_TOLERANCE) -> float:
    """The least zone fraction s (zone half-width s d/2) that holds a thrust line, by bisection.

    Returns ``inf`` if not even a zone of ``LARGEST_ZONE`` times the ring does, and 0 if a zone of
    ``SMALLEST_ZONE`` already does (the axis is a funicular of the loads).
    """
    hi = 1.0
    while not program.feasible(state, hi):
        hi *= 2.0
        if hi > LARGEST_ZONE:
            return float("inf")
    if program.feasible(state, SMALLEST_ZONE):
        return 0.0  # the line of thrust (all but) follows the axis: no zone is too thin
    lo = SMALLEST_ZONE
    while hi - lo > tol * hi:
        mid = 0.5 * (lo + hi)
        if program.feasible(state, mid):
            hi = mid
        else:
            lo = mid
    return hi


def admissibility(axis: Axis, loads: StationLoads, depth_m: np.ndarray, required_factor: float = 1.0,
                  kind: SupportKind = SupportKind.FIXED, hinge_station: int | None = None,
                  order: np.ndarray | None = None) -> tuple[ZoneResult, ...]:
    """Admissibility of every state within the zone ``depth / required_factor``, and each group's
    geometric factor of safety.

    The verdict (a line of thrust within the reduced zone) is exact for every state: one LP each.
    The geometric factor of a group (a combination and its train positions) is that of its worst
    state: states are visited in ``order`` (default: as given; pass the states sorted by a guess of
    their need, e.g. the elastic max |M| / (-N d/2), to save work); a state that holds a line of
    thrust within the thinnest zone found so far cannot govern and costs one LP; any other is
    bisected. The governing state of each group gets its factor; the others report NaN (their
    factor is at least the group's).
    """
    joints = joint_forces(axis, loads, depth_m, kind, hinge_station)
    program = _ZoneProgram(joints)
    s_req = 1.0 / required_factor
    ok = [program.feasible(k, s_req) for k in range(loads.count)]
    factor = np.full(loads.count, np.nan)
    visit = list(range(loads.count)) if order is None else [int(k) for k in order]
    for group in dict.fromkeys(loads.groups):
        worst_s, worst_k = 0.0, None
        for k in visit:
            if loads.groups[k] != group:
                continue
            if worst_k is not None and program.feasible(k, worst_s):
                continue
            s = least_zone_fraction(program, k)
            if worst_k is None or s > worst_s:
                worst_s, worst_k = s, k
        if worst_k is not None:
            factor[worst_k] = 1.0 / worst_s if worst_s > 0 else np.inf
    return tuple(ZoneResult(loads.names[k], bool(ok[k]), float(factor[k])) for k in range(loads.count))


def least_friction(joints: JointForces, state: int, fraction: float, tol: float = 1e-4) -> tuple[float, int]:
    """The least friction coefficient that some line of thrust within zone ``fraction`` (half-width
    fraction x d/2) needs at every joint: min over admissible lines of max |V| / (-N) at the joints, and
    the joint where that line needs it most. Feasibility with |V| <= mu (-N) added is monotone in mu, so
    mu is found by bisection on small LPs in the three reactions. (inf, -1) if no line fits the zone.

    Joints are the sections normal to the axis at the stations; V and N are the shear and normal force
    across them (`formfind.analysis.response`).
    """
    import cvxpy as cp

    r = cp.Variable(3)
    mu = cp.Parameter(nonneg=True)
    j = joints
    m = j.M[state] + j.A_M @ r
    cons = []
    for n_load, v_load in ((j.N[state], j.V[state]), (j.N_left[state], j.V_left[state])):
        n = n_load + j.A_N @ r
        v = v_load + j.A_V @ r
        z = fraction * j.half_depth
        cons += [m + cp.multiply(z, n) <= 0, -m + cp.multiply(z, n) <= 0, v + mu * n <= 0, -v + mu * n <= 0]
    if j.hinges:
        h = list(j.hinges)
        cons.append(j.A_M[h] @ r == -j.M[state][h])
    problem = cp.Problem(cp.Minimize(0), cons)

    def holds(value: float) -> bool:
        mu.value = value
        return _solve(problem) in ("optimal", "optimal_inaccurate")

    hi = 1.0
    while not holds(hi):
        hi *= 2.0
        if hi > 1e3:
            return float("inf"), -1
    lo = 0.0
    if holds(0.0):
        hi = 0.0
    while hi - lo > tol * max(hi, 1e-6):
        mid = 0.5 * (lo + hi)
        if holds(mid):
            hi = mid
        else:
            lo = mid
    holds(hi)
    rv = np.asarray(r.value, dtype=float)
    ratios = []
    for n_load, v_load in ((j.N[state], j.V[state]), (j.N_left[state], j.V_left[state])):
        n = n_load + j.A_N @ rv
        v = v_load + j.A_V @ rv
        with np.errstate(divide="ignore", invalid="ignore"):
            ratios.append(np.where(n < 0, np.abs(v) / -n, np.inf))
    worst = np.maximum(*ratios)
    return float(hi), int(np.argmax(worst))


# ------------------------------------------------------------------------------------- collapse
@dataclass(frozen=True)
class Hinge:
    """A joint where the line of thrust touches a face at collapse: station, x (m) and the face."""

    station: int
    x_m: float
    face: str  # "intrados" or "extrados": where the line of thrust touches the ring
    crushed_depth_m: float = 0.0  # finite strength: depth of the stress block |N| / (f b); the line passes at its middle


@dataclass(frozen=True, eq=False)
class CollapseResult:
    """The collapse load factor of a live load at one position.

    Attributes:
        state: name of the live-load state (e.g. a train position).
        factor: the largest factor on the live load for which a thrust line still lies within the
            zone (``inf`` if it exceeds ``NO_COLLAPSE``; 0 if the dead load alone has none).
        hinges: the joints where the line of thrust touches the ring at that factor.
        status: the LP's status.
        moment_kNm, axial_kN: (joints,) M and N (just right of each joint) of the line of thrust at
            collapse, or None where there is no finite collapse factor.
    """

    state: str
    factor: float
    hinges: tuple[Hinge, ...]
    status: str
    moment_kNm: np.ndarray | None = None
    axial_kN: np.ndarray | None = None


class _CollapseProgram:
    """max lambda: thrust line within the zone for dead + lambda live (live loads as parameters)."""

    def __init__(self, dead: JointForces, zone_fraction: float) -> None:
        import cvxpy as cp

        n = dead.half_depth.size
        z = zone_fraction * dead.half_depth
        self.r = cp.Variable(3)
        self.lam = cp.Variable()
        self.M_live = cp.Parameter(n)
        self.N_live = cp.Parameter(n)
        self.N_left_live = cp.Parameter(n)
        m = dead.M[0] + dead.A_M @ self.r + self.M_live * self.lam
        self.cons = []
        for n_dead, n_live in ((dead.N[0], self.N_live), (dead.N_left[0], self.N_left_live)):
            axial = n_dead + dead.A_N @ self.r + n_live * self.lam
            self.cons += [m + cp.multiply(z, axial) <= 0, -m + cp.multiply(z, axial) <= 0]
        if dead.hinges:
            self.cons.append(m[list(dead.hinges)] == 0)
        self.cons += [self.lam >= 0, self.lam <= NO_COLLAPSE]
        self.problem = cp.Problem(cp.Maximize(self.lam), self.cons)


def collapse_factors(axis: Axis, dead: StationLoads, live: StationLoads, depth_m: np.ndarray,
                     kind: SupportKind = SupportKind.FIXED, hinge_station: int | None = None,
                     zone_fraction: float = 1.0, strength_kN_m2: float | None = None,
                     width_m: float = 1.0) -> tuple[CollapseResult, ...]:
    """The collapse load factor of each live state (one per position of a moving load) on ``dead``.

    ``dead`` holds one state (the unfactored permanent loads); ``live`` one state per position. The
    line of thrust must lie within ``zone_fraction`` of the ring (1: the whole ring, the rigid-block
    collapse of a no-tension ring; below 1: a reduced zone). ``strength_kN_m2``: the masonry's
    compressive strength (None: infinite, Heyman's assumption), over the ring's ``width_m``; the hinges
    then sit inside the faces by half the crushed depth (module docstring).

    Raises:
        FormFindingError: never for an infeasible LP (that is a factor of 0, reported), only if the
            solvers fail outright.
    """
    import cvxpy as cp

    if dead.count != 1:
        raise ValueError("the dead load must be a single state")
    joints_dead = joint_forces(axis, dead, depth_m, kind, hinge_station)
    joints_live = joint_forces(axis, live, depth_m, kind, hinge_station)
    if strength_kN_m2 is not None:
        if not strength_kN_m2 > 0 or not width_m > 0:
            raise ValueError("a compressive strength and a width must be positive")
        return tuple(_crushing_collapse(axis, joints_dead, joints_live, k, live.names[k],
                                        zone_fraction * joints_dead.half_depth, strength_kN_m2 * width_m)
                     for k in range(live.count))
    program = _CollapseProgram(joints_dead, zone_fraction)
    out = []
    for k in range(live.count):
        program.M_live.value = joints_live.M[k]
        program.N_live.value = joints_live.N[k]
        program.N_left_live.value = joints_live.N_left[k]
        try:
            status = _solve(program.problem)
        except cp.SolverError as exc:
            raise FormFindingError(f"collapse LP for {live.names[k]!r} failed in every solver: {exc}") from None
        if status not in ("optimal", "optimal_inaccurate"):
            out.append(CollapseResult(live.names[k], 0.0, (), status))
            continue
        lam = float(program.lam.value)
        factor = float("inf") if lam >= 0.999 * NO_COLLAPSE else lam
        if not np.isfinite(factor):
            out.append(CollapseResult(live.names[k], factor, (), status))
            continue
        r = np.asarray(program.r.value, dtype=float)
        moment = joints_dead.M[0] + joints_dead.A_M @ r + lam * joints_live.M[k]
        axial = joints_dead.N[0] + joints_dead.A_N @ r + lam * joints_live.N[k]
        out.append(CollapseResult(live.names[k], factor, _hinges(program, axis), status, moment, axial))
    return tuple(out)


CUTTING_PLANE_ROUNDS = 60  # Kelley's method converges in a handful on the rings met; this bounds it
CRUSHING_TOLERANCE = 1e-7  # of the largest moment capacity -N z: how far the line may break the true
# constraint (the LP solver's own feasibility tolerance is of this order: a finer one cannot be met)


def _crushing_collapse(axis: Axis, dead: JointForces, live: JointForces, k: int, name: str, z: np.ndarray,
                       fb: float) -> CollapseResult:
    """The collapse factor of live state ``k`` with finite strength (``fb`` = f b, kN/m): Kelley's
    cutting planes on |M| + N z + N^2 / (2 f b) <= 0 at every joint side (module docstring).

    Variables (Rx, Ry, Mz, lambda); rows per cut: +-M(x) + N(x) (z + N_k / fb) <= N_k^2 / (2 fb), the
    tangent at N_k of the convex term (N_k = 0: the rigid-block row)."""
    import scipy.sparse as sp

    from formfind.design.convex import ConvexProblem, solve_convex
    from formfind.enums import Solver

    n = z.size
    sides = ((dead.N[0], live.N[k]), (dead.N_left[0], live.N_left[k]))
    m_const = dead.M[0]
    m_coeff = np.column_stack([dead.A_M, live.M[k]])  # (joints, 4): M = m_const + m_coeff @ x
    n_const = [d for d, _ in sides]
    n_coeff = [np.column_stack([dead.A_N, lv]) for _, lv in sides]
    tangents: list[list[np.ndarray]] = [[np.zeros(n)], [np.zeros(n)]]  # per side: the N_k of each round of cuts
    active: list[list[np.ndarray]] = [[np.ones(n, dtype=bool)], [np.ones(n, dtype=bool)]]
    equality = sp.csr_matrix((0, 4))
    b_eq = np.zeros(0)
    if dead.hinges:
        h = list(dead.hinges)
        equality = sp.csr_matrix(m_coeff[h])
        b_eq = -m_const[h]
    lower = np.array([-np.inf, -np.inf, -np.inf, 0.0])
    upper = np.array([np.inf, np.inf, np.inf, NO_COLLAPSE])
    rounds = 0
    for rounds in range(1, CUTTING_PLANE_ROUNDS + 1):  # noqa: B007 - the count is kept
        rows, rhs, tags = [], [], []
        for side in (0, 1):
            for nk, keep in zip(tangents[side], active[side], strict=True):
                slope = z + nk / fb  # (joints,)
                const = nk**2 / (2.0 * fb)
                for sign, face in ((1.0, "extrados"), (-1.0, "intrados")):
                    a = sign * m_coeff + slope[:, None] * n_coeff[side]
                    b = const - sign * m_const - slope * n_const[side]
                    rows.append(a[keep])
                    rhs.append(b[keep])
                    tags += [(int(i), face, side) for i in np.flatnonzero(keep)]
        problem = ConvexProblem(np.array([0.0, 0.0, 0.0, -1.0]), sp.csr_matrix(np.vstack(rows)), np.concatenate(rhs),
                                equality, b_eq, lower, upper)
        solution = solve_convex(problem, Solver.HIGHS)
        if not solution.solved:
            return CollapseResult(name, 0.0, (), solution.status.value)
        x = solution.z
        moment = m_const + m_coeff @ x
        axial = [n_const[s] + n_coeff[s] @ x for s in (0, 1)]
        capacity = max(float(np.max(np.abs(a) * z)) for a in axial) or 1.0
        broken = False
        for side in (0, 1):
            n_now = np.minimum(axial[side], 0.0)
            excess = np.abs(moment) + axial[side] * z + n_now**2 / (2.0 * fb)
            bad = excess > CRUSHING_TOLERANCE * capacity
            if bad.any():
                broken = True
                tangents[side].append(n_now)
                active[side].append(bad)
        if not broken:
            break
    else:
        raise FormFindingError(f"collapse with crushing for {name!r}: the cutting planes did not settle in "
                               f"{CUTTING_PLANE_ROUNDS} rounds")
    lam = float(x[3])
    if lam >= 0.999 * NO_COLLAPSE:
        return CollapseResult(name, float("inf"), (), solution.status.value)
    duals = solution.mu
    top = float(duals.max()) if duals.size else 0.0
    faces: dict[int, tuple[str, int]] = {}
    if top > 0:
        for (i, face, side), d in zip(tags, duals, strict=True):
            if d > HINGE_DUAL * top:
                faces.setdefault(i, (face, side))
    hinges = tuple(Hinge(i, float(axis.x[i]), face, float(-min(axial[side][i], 0.0) / fb))
                   for i, (face, side) in sorted(faces.items()))
    return CollapseResult(name, lam, hinges, solution.status.value, moment, axial[0])


def _hinges(program: _CollapseProgram, axis: Axis) -> tuple[Hinge, ...]:
    """Joints whose zone constraint carries a dual: the line touches a face there."""
    duals = [np.abs(np.asarray(c.dual_value, dtype=float)) for c in program.cons[:4]]
    top = max(float(d.max()) for d in duals)
    if top <= 0:
        return ()
    faces: dict[int, str] = {}
    for index, d in enumerate(duals):
        # constraint 0 and 2: M + N z <= 0 (line on the extrados side); 1 and 3: the intrados side
        face = "extrados" if index % 2 == 0 else "intrados"
        for i in np.flatnonzero(d > HINGE_DUAL * top):
            faces.setdefault(int(i), face)
    return tuple(Hinge(i, float(axis.x[i]), faces[i]) for i in sorted(faces))


# ------------------------------------------------------------------------------ ring self-weight
def voussoir_weight(axis: Axis, depth_m: float, width_m: float, unit_weight_kN_m3: float,
                    at_centroid: bool = True) -> StationLoads:
    """Self-weight of a ring of constant depth cut by joints normal to the axis, as one load state.

    Each slice between two joints weighs gamma b d ds (ds: arc length). With ``at_centroid`` its weight
    acts at the slice's centroid, outwards of the chord midpoint (away from the centre of curvature)
    by kappa (d^2 + L^2) / 12: d^2/12 because a thin annular sector of radii R -+ d/2 has its centroid
    at R + d^2 / (12 R), and L^2/12 (L: chord) for the arc's bulge beyond its chord. Placing the
    weight at the chord midpoints instead (``at_centroid=False``) changes the least thickness of a
    semicircular ring by under 0.1 %. Vertical loads only.
    """
    x, y = axis.x, axis.y
    dx, dy = np.diff(x), np.diff(y)
    ds = np.diff(axis.arc_length)
    weight = unit_weight_kN_m3 * width_m * depth_m * ds
    x_centroid = 0.5 * (x[:-1] + x[1:])
    if at_centroid:
        theta_mid = np.arctan2(dy, dx)
        kappa = axis.curvature
        kappa_mid = 0.5 * (kappa[:-1] + kappa[1:])
        chord = np.hypot(dx, dy)
        offset = -kappa_mid * (depth_m**2 + chord**2) / 12.0  # + towards the extrados (kappa < 0 in an arch)
        x_centroid = x_centroid - np.sin(theta_mid) * offset
    t = (x_centroid - x[:-1]) / dx  # the centroid's parameter on its element (for a vertical force x is all)
    # linear density f(t) = fa + (fb - fa) t with resultant W and first moment W t
    fb = weight * (6.0 * t - 2.0)
    fa = 2.0 * weight - fb
    dist = np.zeros((1, x.size - 1, 2, 2))
    dist[0, :, 0, 1] = -fa
    dist[0, :, 1, 1] = -fb
    return StationLoads.from_densities(dist, group="ring self-weight")


def least_thickness(axis: Axis, kind: SupportKind | str = SupportKind.FIXED, at_centroid: bool = True,
                    tol: float = ZONE_TOLERANCE) -> float:
    """The least constant depth (m) of a ring on ``axis`` that holds a line of thrust under its own weight
    (public as ``formfind.least_thickness``).

    ``kind``: "fixed" (springings that take a moment: the thrust line may meet them anywhere within the
    depth), "two_hinged" or "three_hinged" (through the axis there). ``at_centroid``: each voussoir's
    weight at its own centroid (True), or at the chord midpoint between joints (False, the simpler model
    of many hand calculations; it gives a slightly different least thickness). Bisection on the depth:
    each step asks whether a thrust line lies within the ring (one LP); the answer does not depend on
    the unit weight or the width.

    Raises:
        FormFindingError: if a ring as deep as the span still holds none.
        ArgumentError: for an argument of the wrong kind.
    """
    from formfind import arguments

    arguments.axis(axis, "least_thickness", optional=False)
    try:
        kind = SupportKind(kind)
    except ValueError:
        raise arguments.ArgumentError(f"least_thickness: kind: expected one of "
                                      f"{', '.join(k.value for k in SupportKind)}, got {kind!r}") from None
    arguments.flag(at_centroid, "least_thickness", "at_centroid")

    def feasible(depth: float) -> bool:
        loads = voussoir_weight(axis, depth, 1.0, 1.0, at_centroid)
        joints = joint_forces(axis, loads, np.full(axis.count, depth), kind)
        return _ZoneProgram(joints).feasible(0, 1.0)

    hi = axis.span_m
    if not feasible(hi):
        raise FormFindingError(f"no ring up to {hi:g} m deep holds a thrust line under its own weight")
    lo = 0.0
    while hi - lo > tol * hi:
        mid = 0.5 * (lo + hi)
        if feasible(mid):
            hi = mid
        else:
            lo = mid
    return hi
