"""Form finding: the axis that bends least under the governing load states, with a certificate.

The stations' abscissae stay where the case puts them; their ordinates y are the variables, and the
springing levels are kept. Two paths:

- Exact (three-hinged arch, hinge ordinate fixed, loads that do not change with the shape). The
  station moments are then affine in the ordinates, M[k, i] = M[k, i](y0) - H[k] (y_i - y0_i), so
  one convex program gives the optimum, and its dual bound certifies that no admissible axis does
  better. Without coupling constraints the minimax separates by station and is solved exactly
  station by station (`formfind.design.separable`).
- Sequential (two-hinged, fixed and tied arches, shape-dependent loads such as self-weight per arc
  length, fill, normal pressure or horizontal loads, a rise between bounds, the min_depth objective).
  Trust-region sequential convex programming: the moments are linearised at the current axis with the
  Jacobian of the exact engine (finite differences, loads frozen at the current axis), the program is
  solved within the trust region, and the exact engine re-analyses the candidate with its refreshed
  loads; the step is kept only if the exact objective does not increase, else the region halves. It
  stops when a kept step or the region falls below ``tolerance_m``, or raises after
  ``max_iterations``. The result is a local optimum; its certificate is the dual bound of the
  program linearised at the found axis (no axis does better to first order), and the history
  records each step with the residual between the linear model and the exact engine.

Freezing the redundants (the thrust, or the springing reactions of a fixed arch) instead of taking
their sensitivity does not work: with them frozen, many axes are self-consistent fixed points, so the
loop ends wherever it starts. The Jacobian carries that sensitivity.

Clearance and site envelopes act on the intrados and extrados measured vertically: half the depth
divided by cos(theta) of the current axis. Curvature bounds act on d2y/dx2 (second differences).
"""

from __future__ import annotations

import itertools
import logging
from dataclasses import dataclass, replace

import numpy as np
import scipy.sparse as sp

from formfind.analysis.engine import frame_model, respond
from formfind.analysis.response import Response
from formfind.analysis.sensitivity import frame_jacobian, statics_jacobian
from formfind.design.program import FormProgram, ProgramData, ProgramSolution, Structure, solve_program
from formfind.design.separable import per_station_minimax
from formfind.enums import Objective, SupportKind
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis, PointSpline
from formfind.model.loads import StationLoads, build_load_set
from formfind.model.section import Section

log = logging.getLogger(__name__)

UNITS = {Objective.MINIMAX: "kNm", Objective.RMS: "kNm", Objective.OFFSET: "m", Objective.MIN_DEPTH: "m"}
ACTIVE_SLACK_M = 1e-7  # a constraint row counts as active within this slack
TOLERANCE_OF_SPAN = 1e-5  # default step tolerance of the sequential method, relative to the span
STALL = 1e-6  # ... which also stops when two kept steps together gain less than this, relative
SHRINK_BELOW, EXPAND_ABOVE = 0.1, 0.5  # trust-region ratio thresholds (actual / predicted decrease)
POLISH_RADIUS = 0.05  # the smoothing steps move at most this x the rise at first
POLISH_STEPS = 8  # smoothing steps at most
POLISH_SLACK = 1e-5  # a smoothing step may give up this fraction of the optimum (checked exactly)


@dataclass(frozen=True)
class GoverningPoint:
    """A state and station where the objective's bound is attained (positive multiplier)."""

    state: str
    station: int
    x_m: float
    multiplier: float


@dataclass(frozen=True)
class ActiveConstraint:
    """A constraint block with active rows: where, and what it costs.

    ``cost`` is the sum of its multipliers: how much the objective would improve per metre of relief
    of every active row (objective unit per m), e.g. kNm per m of a lower clearance line.
    """

    name: str
    stations: tuple[int, ...]
    cost: float
    unit: str


@dataclass(frozen=True)
class Iteration:
    """One pass of the loop: its objective, the largest ordinate change (m) and, at the new axis,
    the largest difference between the linear model's moments and the exact engine's (kNm)."""

    number: int
    objective: float
    max_change_m: float
    residual_kNm: float


@dataclass(frozen=True, eq=False)
class ShapeResult:
    """The found axis and the evidence that it is best.

    Attributes:
        axis: the found axis (ordinates at the case's stations, tangents from a cubic spline).
        objective: what was minimised; ``value`` its optimum in ``unit``.
        checked_value: the objective re-evaluated by the exact engine on the found axis.
        dual_bound: the program's dual bound in ``unit``: for the exact path a lower bound over every
            admissible axis; for the sequential path (``method`` says "local") the bound of the
            program linearised at the found axis, a first-order certificate. Equal to ``value`` for the
            exact per-station method.
        gap: (value - dual_bound) / value.
        stationarity: residual of the dual certificate (relative); small means the bound is sound.
        governing: where the optimum is attained.
        active: constraint blocks that bind, with their cost.
        method: "per-station exact" or "convex program".
        solver, status, solve_time_s: of the last solve (time summed over iterations).
        iterations: the loop's history.
        section: the rib used (its depth is the optimum for ``min_depth``).
        states: names of the governing load states.
    """

    axis: Axis
    objective: Objective
    value: float
    unit: str
    checked_value: float
    dual_bound: float | None
    gap: float
    stationarity: float
    governing: tuple[GoverningPoint, ...]
    active: tuple[ActiveConstraint, ...]
    method: str
    solver: str
    status: str
    solve_time_s: float
    iterations: tuple[Iteration, ...]
    section: Section
    states: tuple[str, ...]


# ----------------------------------------------------------------------------------- helpers
def governing_groups(case: Case) -> tuple[str, ...]:
    """Names of the combinations or cases that govern form finding."""
    if case.find.governing:
        return case.find.governing
    if case.combinations:
        return tuple(c.name for c in case.combinations)
    return tuple(c.name for c in case.cases)


def governing_loads(case: Case, axis: Axis, section: Section) -> StationLoads:
    """Station loads of the governing states on ``axis``."""
    load_set = build_load_set(case.cases, case.combinations, axis, section.at(axis))
    wanted = set(governing_groups(case))
    parts = []
    for loads in (load_set.combinations, load_set.cases):
        idx = [i for i, g in enumerate(loads.groups) if g in wanted]
        if idx:
            parts.append(loads.select(idx))
    return StationLoads.concatenate(parts, axis.count - 1)


def axis_through(x: np.ndarray, y: np.ndarray) -> Axis:
    """The axis through given station ordinates, tangents from a not-a-knot cubic spline."""
    curve = PointSpline(tuple(float(v) for v in x - x[0]), tuple(float(v) for v in y))
    return Axis(x=x, y=np.asarray(y, dtype=float), theta=curve.angle(x - x[0]))


def _horizontal_resultant(response: Response, axis: Axis) -> np.ndarray:
    """Horizontal component (kN) of the resultant left of each station (just right of it)."""
    cos, sin = np.cos(axis.theta), np.sin(axis.theta)
    return -response.N * cos - response.V * sin


def _interp_line(points: tuple[tuple[float, float], ...], x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    px = np.array([p[0] for p in points])
    py = np.array([p[1] for p in points])
    inside = (x >= px[0] - 1e-9) & (x <= px[-1] + 1e-9)
    return inside, np.interp(x, px, py)


@dataclass(frozen=True, eq=False)
class _Setup:
    structure: Structure
    q_static: dict[str, np.ndarray]
    g: np.ndarray
    crown: int
    chord: np.ndarray
    clearance_rows: np.ndarray
    clearance_level: np.ndarray
    envelope_rows: np.ndarray
    envelope_level: np.ndarray
    separable: bool
    stepped: bool


def _setup(case: Case, x: np.ndarray, y0: np.ndarray, states: int, iterative: bool) -> _Setup:
    """Constraint matrices (fixed for the whole loop) and their static right-hand sides."""
    f = case.find
    n = x.size
    span = x[-1] - x[0]
    chord = y0[0] + (y0[-1] - y0[0]) * (x - x[0]) / span
    three_hinged = case.supports.kind is SupportKind.THREE_HINGED
    if three_hinged:
        hinge_x = case.supports.hinge_x_m if case.supports.hinge_x_m is not None else x[0] + 0.5 * span
        crown = int(np.argmin(np.abs(x - hinge_x)))
    else:
        crown = int(np.argmin(np.abs(x - (x[0] + 0.5 * span))))
    fixed_rise = abs(f.rise_max_m - f.rise_min_m) <= 1e-12 * span
    rows_eq: list[np.ndarray] = []
    g: list[float] = []
    eye = np.eye(n)
    for i in (0, n - 1):
        rows_eq.append(eye[i])
        g.append(y0[i])
    if fixed_rise:
        rows_eq.append(eye[crown])
        g.append(chord[crown] + f.rise_max_m)
    if f.symmetric:
        if not np.allclose(x + x[::-1], x[0] + x[-1], atol=1e-9 * span):
            raise FormFindingError("a symmetric axis needs stations placed symmetrically about midspan")
        for i in range(1, n // 2):
            rows_eq.append(eye[i] - eye[n - 1 - i])
            g.append(0.0)
    blocks: list[tuple[str, sp.csr_matrix]] = []
    q: dict[str, np.ndarray] = {}
    interior = np.arange(1, n - 1)
    blocks.append(("rise_max", sp.csr_matrix(eye[interior])))
    q["rise_max"] = chord[interior] + f.rise_max_m
    if not fixed_rise:
        blocks.append(("rise_min", sp.csr_matrix(-eye[[crown]])))
        q["rise_min"] = -np.array([chord[crown] + f.rise_min_m])
    clearance_rows = envelope_rows = np.zeros(0, dtype=int)
    clearance_level = envelope_level = np.zeros(0)
    if f.clearance:
        inside, level = _interp_line(f.clearance, x)
        clearance_rows = np.flatnonzero(inside)
        clearance_level = level[clearance_rows]
        blocks.append(("clearance", sp.csr_matrix(-eye[clearance_rows])))
    if f.envelope:
        inside, level = _interp_line(f.envelope, x)
        envelope_rows = np.flatnonzero(inside)
        envelope_level = level[envelope_rows]
        blocks.append(("envelope", sp.csr_matrix(eye[envelope_rows])))
    dx = np.diff(x)
    if f.max_slope is not None:
        d1 = sp.diags([-np.ones(n - 1), np.ones(n - 1)], [0, 1], shape=(n - 1, n)).tocsr()
        blocks.append(("slope", sp.vstack([d1, -d1]).tocsr()))
        q["slope"] = np.concatenate([f.max_slope * dx, f.max_slope * dx])
    if f.concave:
        h0, h1 = dx[:-1], dx[1:]
        mean = 0.5 * (h0 + h1)
        blocks.append(("concave", sp.diags([1 / (h0 * mean), -(1 / h0 + 1 / h1) / mean, 1 / (h1 * mean)], [0, 1, 2],
                                           shape=(n - 2, n)).tocsr()))
        q["concave"] = np.zeros(n - 2)
    if f.max_curvature_per_m is not None:
        h0, h1 = dx[:-1], dx[1:]
        mean = 0.5 * (h0 + h1)
        d2 = sp.diags([1 / (h0 * mean), -(1 / h0 + 1 / h1) / mean, 1 / (h1 * mean)], [0, 1, 2], shape=(n - 2, n)).tocsr()
        blocks.append(("curvature", sp.vstack([d2, -d2]).tocsr()))
        q["curvature"] = np.full(2 * (n - 2), f.max_curvature_per_m)
    stepped = iterative or not fixed_rise or not three_hinged
    if stepped:
        blocks.append(("step", sp.vstack([sp.identity(n), -sp.identity(n)]).tocsr()))
    coupling = f.symmetric or f.max_slope is not None or f.max_curvature_per_m is not None or not fixed_rise
    separable = f.objective is Objective.MINIMAX and three_hinged and not coupling and not iterative
    structure = Structure(f.objective, n, states, sp.csr_matrix(np.array(rows_eq)), tuple(blocks), f.solver)
    return _Setup(structure, q, np.array(g), crown, chord, clearance_rows, clearance_level, envelope_rows,
                  envelope_level, separable, stepped)


def _shape_dependent(case: Case) -> bool:
    """True if some governing load changes with the shape (so the loop must iterate)."""
    from formfind.model.loads import FillLoad, LineLoad, NormalPressure, SelfWeight

    wanted = set(governing_groups(case))
    used = set()
    for combo in case.combinations:
        if combo.name in wanted:
            used.update(name for name, _ in combo.factors)
    used.update(c.name for c in case.cases if c.name in wanted)
    for lc in case.cases:
        if lc.name not in used:
            continue
        for ld in lc.loads:
            if isinstance(ld, SelfWeight | FillLoad | NormalPressure):
                return True
            if isinstance(ld, LineLoad) and (ld.direction.value == "right" or ld.projection.value != "horizontal"):
                return True
            if getattr(ld, "right_kN", 0.0):
                return True
    return False


# ------------------------------------------------------------------------------------ finding
def find_shape(case: Case, start: Axis | None = None, program: FormProgram | None = None) -> ShapeResult:
    """Find the axis of least bending for the case's governing states within its limits.

    Args:
        case: the validated case (its ``[find]`` settings drive the search).
        start: the first iterate (default: the case's given axis); it fixes the abscissae.
        program: a compiled `FormProgram` of the same structure to reuse (a study's re-solves); by
            default each solve builds the program afresh with constant data (constraint generation).

    Raises:
        FormFindingError: if the constraints conflict (the message names them), the solver fails,
            or the loop does not converge within ``max_iterations``.
    """
    axis = start if start is not None else case.axis()
    if case.find.objective is Objective.MIN_DEPTH:
        return _min_depth(case, axis, program)
    return _loop(case, axis, case.section, program)


def required_depth(case: Case, depth_m: float, start: Axis | None = None) -> ShapeResult:
    """The least depth the thrust lines need over all admissible axes when the rib is ``depth_m``
    deep (its self-weight follows): ``value`` of the result, in m. A depth is sufficient when the
    returned value does not exceed it; `find_shape` with ``min_depth`` finds the least such depth."""
    axis = start if start is not None else case.axis()
    return _loop(case, axis, _with_depth(case.section, depth_m), None)


def _min_depth(case: Case, axis: Axis, program: FormProgram | None) -> ShapeResult:
    """The least rib depth d with s*(d) <= d, s*(d) the least required depth over all admissible axes
    when the rib (hence its self-weight) is d deep: Brent's method on s*(d) - d."""
    from scipy.optimize import brentq

    results: dict[float, ShapeResult] = {}

    def excess(depth: float) -> float:
        result = _loop(case, axis, _with_depth(case.section, depth), program)
        results[depth] = result
        return result.value - depth

    lo, hi = 1e-4 * axis.span_m, max(case.section.depth_m, 1e-3 * axis.span_m)
    while excess(hi) > 0:
        lo, hi = hi, 2.0 * hi
        if hi > axis.span_m:
            raise FormFindingError(
                "min_depth: no rib depth up to the span keeps every thrust line inside the kern fraction")
    if excess(lo) <= 0:
        return results[lo]
    tolerance = case.find.tolerance_m if case.find.tolerance_m is not None else 1e-7 * axis.span_m
    depth = brentq(excess, lo, hi, xtol=tolerance, rtol=1e-12)
    if depth not in results:
        excess(depth)
    return results[depth]


def _loop(case: Case, axis: Axis, section: Section, program: FormProgram | None) -> ShapeResult:
    """Form finding at a fixed rib section: the exact program, or the trust-region sequence."""
    loads = governing_loads(case, axis, section)
    if loads.count == 0:
        raise FormFindingError("no governing load states: name combinations or cases in [find] governing")
    iterative = (_shape_dependent(case) or case.supports.kind is not SupportKind.THREE_HINGED
                 or case.find.objective is Objective.MIN_DEPTH)  # min_depth: N moves with the shape
    setup = _setup(case, axis.x, axis.y, loads.count, iterative)
    if program is not None and program.structure != setup.structure:
        program = None
    if not setup.stepped:
        return _exact(case, axis, section, setup, program)
    return _sequential(case, axis, section, setup)


def _solve(setup: _Setup, data: ProgramData, y: np.ndarray, program: FormProgram | None,
           select: bool = True) -> ProgramSolution:
    sol = program.solve(data) if program is not None else solve_program(setup.structure, data, y, select)
    if sol.y is not None and sol.status != "optimal":
        log.warning("form finding: solver status %s (the solution may be inaccurate)", sol.status)
    return sol


def _exact(case: Case, axis: Axis, section: Section, setup: _Setup, program: FormProgram | None) -> ShapeResult:
    """Three-hinged, fixed hinge, loads independent of the shape: one solve is the optimum."""
    f = case.find
    x, y = axis.x, axis.y
    response, loads = _analyse(case, axis, section)
    h = _horizontal_resultant(response, axis)
    a = response.M + h * y[None, :]
    sol = None
    elapsed = 0.0
    current = axis
    for _ in range(50):  # the vertical half-depth of clearance and envelope lines follows the shape
        half = _half_depth(section, current)
        if setup.separable:
            y_new, value, _ = _solve_separable(setup, a, h, half, x)
            if case.find.concave and not _is_concave(x, y_new):
                setup = replace(setup, separable=False)  # the per-station optimum sags: solve with the bound
        if not setup.separable:
            data = ProgramData(a=a, h=h, c=_weights(f.objective, h, response, f.kern_fraction), w=_tributary(axis),
                               g=setup.g, q=_rhs(setup, y, half, 0.0), x=x)
            sol = _solve(setup, data, y, program)
            if sol.y is None:
                raise FormFindingError(_infeasible_message(case, setup, data, sol))
            y_new, value = sol.y, float(sol.value)
            elapsed += sol.solve_time_s
        current = axis_through(x, y_new)
        if not (setup.clearance_rows.size or setup.envelope_rows.size):
            break
        if np.abs(_half_depth(section, current) - half).max() <= 1e-9 * axis.span_m:
            break
    found = axis_through(x, y_new)
    checked, loads = _analyse(case, found, section)
    residual = float(np.abs(a - h * y_new[None, :] - checked.M).max())
    if residual > 1e-6 * max(float(np.abs(checked.M).max()), 1.0):
        raise FormFindingError(f"form finding: the exact model disagrees with the statics engine by {residual:.3g} kNm")
    history = [Iteration(1, _report(f.objective, value, setup, axis), float(np.abs(y_new - y).max()), residual)]
    return _result(case, found, checked, loads, setup, sol, history, elapsed, section, local=False)


def _jacobian(case: Case, axis: Axis, section: Section, loads: StationLoads, free: np.ndarray) -> np.ndarray:
    """dM/dy (K, n, n) at ``axis``: the engine's sensitivity with loads held
    (`formfind.analysis.sensitivity`) plus that of the loads that move with the shape."""
    three_hinged = case.supports.kind is SupportKind.THREE_HINGED
    model = None if three_hinged else frame_model(replace(case, section=section), axis, section.at(axis))
    if three_hinged:
        jac = statics_jacobian(axis, loads, case.hinge_station(axis), free)
    else:
        jac = frame_jacobian(model, loads, free)
    return jac + _load_jacobian(case, axis, section, loads, free, model)


def _state_case_factors(case: Case, loads: StationLoads) -> np.ndarray:
    """(states, cases): the factor of each load case in each governing state."""
    names = [c.name for c in case.cases]
    combos = {c.name: dict(c.factors) for c in case.combinations}
    factors = np.zeros((loads.count, len(names)))
    for k, group in enumerate(loads.groups):
        for c, name in enumerate(names):
            factors[k, c] = combos[group].get(name, 0.0) if group in combos else float(group == name)
    return factors


def _load_jacobian(case: Case, axis: Axis, section: Section, loads: StationLoads, free: np.ndarray,
                   model) -> np.ndarray:
    """dM/dy from the loads' own dependence on the shape (self-weight per arc length, fill, pressure,
    loads per vertical projection), one central difference per free station, all in one batch."""
    n = axis.count
    jac = np.zeros((loads.count, n, n))
    if not _shape_dependent(case):
        return jac
    from formfind.model.loads import case_distributed

    factors = _state_case_factors(case, loads)
    along = section.at(axis)
    eps = 1e-5 * axis.span_m
    columns = np.flatnonzero(free)
    delta = np.zeros((columns.size, len(case.cases), n - 1, 2, 2))
    for col, j in enumerate(columns):
        for sign in (1.0, -1.0):
            y = axis.y.copy()
            y[j] += sign * eps
            moved = Axis(axis.x, y, axis.theta)
            for c, lc in enumerate(case.cases):
                delta[col, c] += sign * case_distributed(lc, moved, along)
    delta /= 2 * eps
    # the engine is linear in the loads: analyse each (station, case) once, then combine by factors
    cases = len(case.cases)
    batch = StationLoads.from_densities(delta.reshape(-1, n - 1, 2, 2), "d")  # (columns x cases)
    per_case = respond(case, axis, batch, model).M.reshape(columns.size, cases, n)  # (columns, cases, n)
    jac[:, :, columns] = np.einsum("kc,jci->kij", factors, per_case)
    return jac


def _sequential(case: Case, axis: Axis, section: Section, setup: _Setup) -> ShapeResult:
    """Trust-region sequential convex programming with the exact engine's Jacobian.

    Each step solves the program linearised at the current axis within the trust region; the exact
    engine then re-analyses the candidate with its own (refreshed) loads. The ratio of the actual to
    the predicted decrease steers the region (halved to the attempted step below 0.1, doubled above
    0.5 when the step reached it); a step is kept when the exact objective does not increase. It stops when an accepted step
    or the region falls below ``tolerance_m``.
    """
    f = case.find
    x = axis.x
    y = axis.y.copy()
    tolerance = f.tolerance_m if f.tolerance_m is not None else TOLERANCE_OF_SPAN * axis.span_m
    radius = f.step_limit_m if f.step_limit_m is not None else 0.25 * max(f.rise_max_m, 1e-3)
    largest = 4.0 * radius
    response, loads = _analyse(case, axis, section)
    current = _exact_value(f.objective, response, axis, _horizontal_resultant(response, axis), section,
                           f.kern_fraction)
    fixed = np.abs(setup.structure.equality.toarray()).sum(axis=0) > 0
    fixed[[0, -1]] = True
    free = ~fixed
    history: list[Iteration] = []
    total_time = 0.0
    last: ProgramSolution | None = None
    converged = False
    for number in range(1, f.max_iterations + 1):
        h = _horizontal_resultant(response, axis)
        jac = _jacobian(case, axis, section, loads, free)
        a = response.M - np.einsum("kij,j->ki", jac, y)
        half = _half_depth(section, axis)
        data = ProgramData(a=a, h=h, c=_weights(f.objective, h, response, f.kern_fraction), w=_tributary(axis),
                           g=setup.g, q=_rhs(setup, y, half, radius), jac=jac, x=x)
        sol = _solve(setup, data, y, None)
        total_time += sol.solve_time_s
        restoring = False
        if sol.y is None:
            # the trust region is for stability, not feasibility: open it if it shuts out every axis.
            # The current axis then breaks a limit (e.g. the start is steeper than max_slope), so its
            # objective is no yardstick: the step to an admissible axis is kept whatever it costs.
            data = replace(data, q=_rhs(setup, y, half, 10.0 * axis.span_m))
            sol = _solve(setup, data, y, None)
            total_time += sol.solve_time_s
            restoring = True
        if sol.y is None:
            raise FormFindingError(_infeasible_message(case, setup, data, sol))
        change = float(np.abs(sol.y - y).max())
        candidate = axis_through(x, sol.y)
        trial, trial_loads = _analyse(case, candidate, section)
        value = _exact_value(f.objective, trial, candidate, _horizontal_resultant(trial, candidate), section,
                             f.kern_fraction)
        residual = float(np.abs(data.moments(sol.y) - trial.M).max())
        predicted = current - _report(f.objective, float(sol.value), setup, axis)
        actual = current - value
        ratio = actual / predicted if predicted > 0 else (1.0 if actual >= 0 else -1.0)
        if ratio < SHRINK_BELOW:
            radius = max(0.5 * change, 0.25 * radius) if change > 0 else 0.5 * radius
        elif ratio > EXPAND_ABOVE and change >= 0.99 * radius:
            radius = min(2.0 * radius, largest)
        log.debug("step %d: radius %.3g change %.3g current %.9g trial %.9g ratio %.3g", number, radius, change,
                  current, value, ratio)
        if restoring or (actual >= -1e-10 * max(abs(current), 1e-12) and ratio > 0.01):
            history.append(Iteration(number, value, change, residual))
            y, axis, response, loads, current, last = sol.y, candidate, trial, trial_loads, value, sol
            stalled = len(history) >= 3 and history[-3].objective - value <= STALL * max(abs(value), 1e-12)
            if change <= tolerance or stalled:
                converged = True
                break
        elif radius <= tolerance:
            converged = True  # no step longer than the tolerance decreases the objective: a local optimum
            if not history:
                history.append(Iteration(number, current, 0.0, 0.0))
            break
    if not converged:
        hint = ("; HiGHS returns vertex solutions, which a sequential loop may not settle on: try solver = "
                '"clarabel"') if f.solver.value == "highs" else ""
        moved = history[-1].max_change_m if history else float("nan")
        raise FormFindingError(
            f"form finding did not converge in {f.max_iterations} iterations: the last accepted step moved an "
            f"ordinate {moved:.3g} m (tolerance {tolerance:g} m); raise [find] max_iterations{hint}"
        )
    # the smoothest axis among the (locally) optimal ones: short sequence of smoothing steps, each kept
    # only if the exact engine confirms the objective within POLISH_SLACK of the optimum
    optimum = current
    polish_radius = POLISH_RADIUS * max(f.rise_max_m, 1e-3)
    for _ in range(POLISH_STEPS):
        h = _horizontal_resultant(response, axis)
        jac = _jacobian(case, axis, section, loads, free)
        half = _half_depth(section, axis)
        data = ProgramData(a=response.M - np.einsum("kij,j->ki", jac, y), h=h,
                           c=_weights(f.objective, h, response, f.kern_fraction), w=_tributary(axis), g=setup.g,
                           q=_rhs(setup, y, half, polish_radius), jac=jac, x=x)
        polished = _solve(setup, data, y, None, select=True)
        total_time += polished.solve_time_s
        if polished.y is None:
            break
        change = float(np.abs(polished.y - y).max())
        if change <= tolerance:
            break
        candidate = axis_through(x, polished.y)
        trial, trial_loads = _analyse(case, candidate, section)
        value = _exact_value(f.objective, trial, candidate, _horizontal_resultant(trial, candidate), section,
                             f.kern_fraction)
        if value <= optimum * (1 + POLISH_SLACK) + 1e-12:
            history.append(Iteration(len(history) + 1, value, change,
                                     float(np.abs(data.moments(polished.y) - trial.M).max())))
            y, axis, response, loads, current = polished.y, candidate, trial, trial_loads, value
        else:
            polish_radius = 0.5 * change
    # certify at the final axis: the program linearised there with the region opened
    h = _horizontal_resultant(response, axis)
    jac = _jacobian(case, axis, section, loads, free)
    data = ProgramData(a=response.M - np.einsum("kij,j->ki", jac, y), h=h,
                       c=_weights(f.objective, h, response, f.kern_fraction), w=_tributary(axis), g=setup.g,
                       q=_rhs(setup, y, _half_depth(section, axis), 10.0 * axis.span_m), jac=jac, x=x)
    certificate = _solve(setup, data, y, None, select=False)
    total_time += certificate.solve_time_s
    if certificate.y is not None:
        last = certificate
    if last is None:
        raise FormFindingError(f"form finding: the program at the found axis could not be solved ({certificate.status})")
    return _result(case, axis, response, loads, setup, last, history, total_time, section, local=True)


def _is_concave(x: np.ndarray, y: np.ndarray) -> bool:
    """True if d2y/dx2 <= 0 at every interior station (to round-off)."""
    slope = np.diff(y) / np.diff(x)
    return bool(np.all(np.diff(slope) <= 1e-9 * max(1.0, float(np.abs(slope).max()))))


def _half_depth(section: Section, axis: Axis) -> np.ndarray:
    """Half the rib depth measured vertically at each station (m)."""
    return 0.5 * section.at(axis).depth_m / np.maximum(np.abs(np.cos(axis.theta)), 1e-6)


def _analyse(case: Case, axis: Axis, section: Section) -> tuple[Response, StationLoads]:
    loads = governing_loads(case, axis, section)
    along = section.at(axis)
    model = None if case.supports.kind is SupportKind.THREE_HINGED else frame_model(
        replace(case, section=section), axis, along)
    return respond(case, axis, loads, model), loads


def _with_depth(section: Section, depth: float) -> Section:
    width = float(section.width_m)
    return replace(section, depth_m=depth, area_m2=width * depth, second_moment_m4=width * depth**3 / 12.0)


def _weights(objective: Objective, h: np.ndarray, response: Response, kern_fraction: float) -> np.ndarray:
    if objective is Objective.OFFSET:
        if np.any(h <= 0):
            raise FormFindingError("the offset objective needs every governing state in compression (H > 0)")
        return h
    if objective is Objective.MIN_DEPTH:
        return 0.5 * kern_fraction * np.abs(response.N)
    return np.ones_like(h)


def _tributary(axis: Axis) -> np.ndarray:
    lengths = axis.chord_lengths
    w = np.zeros(axis.count)
    w[:-1] += 0.5 * lengths
    w[1:] += 0.5 * lengths
    return w


def _rhs(setup: _Setup, y: np.ndarray, half: np.ndarray, step: float) -> tuple[np.ndarray, ...]:
    out = []
    for name, _ in setup.structure.blocks:
        if name == "clearance":
            out.append(-(setup.clearance_level + half[setup.clearance_rows]))
        elif name == "envelope":
            out.append(setup.envelope_level - half[setup.envelope_rows])
        elif name == "step":
            out.append(np.concatenate([y + step, -(y - step)]))
        else:
            out.append(setup.q_static[name])
    return tuple(out)


def _solve_separable(setup: _Setup, a: np.ndarray, h: np.ndarray, half: np.ndarray, x: np.ndarray):
    n = x.size
    lower = np.full(n, -np.inf)
    upper = np.full(n, np.inf)
    span = x[-1] - x[0]
    upper[1:-1] = setup.q_static["rise_max"]
    lower[1:-1] = setup.chord[1:-1] - 2.0 * span
    if setup.clearance_rows.size:
        lower[setup.clearance_rows] = np.maximum(lower[setup.clearance_rows], setup.clearance_level + half[setup.clearance_rows])
    if setup.envelope_rows.size:
        upper[setup.envelope_rows] = np.minimum(upper[setup.envelope_rows], setup.envelope_level - half[setup.envelope_rows])
    fixed = setup.structure.equality.toarray()
    for row, value in zip(fixed, setup.g, strict=True):
        i = int(np.flatnonzero(row)[0])
        lower[i] = upper[i] = value
    if np.any(lower > upper + 1e-12):
        bad = int(np.flatnonzero(lower > upper + 1e-12)[0])
        raise FormFindingError(
            f"constraints conflict at x = {x[bad]:.3f} m: the clearance line needs y >= {lower[bad]:.3f} m but the "
            f"rise or site envelope allows at most {upper[bad]:.3f} m"
        )
    y, values = per_station_minimax(a, h, lower, upper)
    return y, float(values.max()), None


def _report(objective: Objective, value: float, setup: _Setup, axis: Axis) -> float:
    """The objective in its reported unit (rms: the root mean square moment, kNm)."""
    if objective is Objective.RMS:
        total = float(np.sum(_tributary(axis))) * setup.structure.states
        return float(np.sqrt(max(value, 0.0) / total))
    return value


def _exact_value(objective: Objective, response: Response, axis: Axis, h: np.ndarray, section: Section,
                 kern_fraction: float) -> float:
    M = response.M
    if objective is Objective.MINIMAX:
        return float(np.abs(M).max())
    if objective is Objective.RMS:
        w = _tributary(axis)
        return float(np.sqrt(np.sum(w * M**2) / (np.sum(w) * M.shape[0])))
    if objective is Objective.OFFSET:
        return float(np.max(np.abs(M) / h))
    return float(np.max(np.abs(M) / (0.5 * kern_fraction * np.abs(response.N))))


def _result(case, axis, response, loads, setup, sol, history, total_time, section, local: bool) -> ShapeResult:
    f = case.find
    h = _horizontal_resultant(response, axis)
    checked = _exact_value(f.objective, response, axis, h, section, f.kern_fraction)
    value = history[-1].objective if not local else checked
    governing: list[GoverningPoint] = []
    active: list[ActiveConstraint] = []
    unit = UNITS[f.objective]
    if sol is None:  # the exact per-station method
        peak = np.abs(response.M)
        top = peak.max()
        for k, i in zip(*np.nonzero(peak >= top * (1 - 1e-9)), strict=True):
            governing.append(GoverningPoint(loads.names[k], int(i), float(axis.x[i]), 1.0))
        bound, gap, stationarity, method, solver, status = value, 0.0, 0.0, "per-station exact", "bisection", "optimal"
        h_now = _horizontal_resultant(response, axis)
        for name, rows, level, sign in (("clearance", setup.clearance_rows, setup.clearance_level, 1.0),
                                        ("envelope", setup.envelope_rows, setup.envelope_level, -1.0)):
            if rows.size:
                half = 0.5 * section.at(axis).depth_m[rows] / np.maximum(np.abs(np.cos(axis.theta[rows])), 1e-6)
                slack = sign * (axis.y[rows] - level) - half
                hit = rows[slack <= ACTIVE_SLACK_M]
                if hit.size:
                    # cost: where the bound holds the peak at the optimum, the slope of the governing
                    # piece |M_k| in the direction the bound pushes (exact derivative of the optimum)
                    cost = 0.0
                    for i in hit:
                        if peak[:, i].max() >= top * (1 - 1e-9):
                            k = int(np.argmax(peak[:, i]))
                            cost += max(0.0, -sign * h_now[k, i] * np.sign(response.M[k, i]))
                    active.append(ActiveConstraint(name, tuple(int(i) for i in hit), cost, f"{unit}/m"))
    else:
        method = "sequential convex (local)" if local else "convex program"
        solver, status = sol.solver, sol.status
        bound = _report(f.objective, sol.dual_bound, setup, axis) if sol.dual_bound is not None else None
        reference = checked if local else value
        gap = (reference - bound) / max(abs(reference), 1e-300) if bound is not None else float("nan")
        stationarity = sol.stationarity
        if sol.epigraph_duals is not None:
            lam = sol.epigraph_duals.sum(axis=0)
            top = lam.max()
            for k, i in zip(*np.nonzero(lam > 1e-6 * max(top, 1e-300)), strict=True):
                governing.append(GoverningPoint(loads.names[k], int(i), float(axis.x[i]), float(lam[k, i])))
        else:
            peak = np.abs(response.M)
            k, i = np.unravel_index(int(np.argmax(peak)), peak.shape)
            governing.append(GoverningPoint(loads.names[k], int(i), float(axis.x[i]), 1.0))
        for (name, block), mu, slack in zip(setup.structure.blocks, sol.block_duals, sol.block_slacks, strict=True):
            if name == "step":
                continue
            rows = np.flatnonzero((mu > 1e-9 * max(1.0, abs(sol.value))) & (slack <= 1e-5))
            if rows.size:
                stations = sorted({int(j) for r in rows for j in block.getrow(r).indices})
                active.append(ActiveConstraint(name, tuple(stations), float(mu[rows].sum()), f"{unit}/m"))
    governing.sort(key=lambda g: -g.multiplier)
    return ShapeResult(
        axis=axis,
        objective=f.objective,
        value=value,
        unit=unit,
        checked_value=checked,
        dual_bound=bound,
        gap=gap,
        stationarity=stationarity,
        governing=tuple(governing[:20]),
        active=tuple(active),
        method=method,
        solver=solver,
        status=status,
        solve_time_s=total_time,
        iterations=tuple(history),
        section=section,
        states=loads.names,
    )


def _infeasible_message(case: Case, setup: _Setup, data: ProgramData, sol: ProgramSolution) -> str:
    """Name the smallest set of constraint blocks that cannot hold together."""
    names = [name for name, _ in setup.structure.blocks if name != "step"]
    if not sol.status.startswith("infeasible"):
        return f"form finding: the solver stopped with status {sol.status!r}"
    for size in range(1, len(names) + 1):
        for subset in itertools.combinations(names, size):
            if not _feasible(setup, data, subset):
                listed = " and ".join(subset)
                return (f"form finding: the constraints conflict: {listed} cannot hold together with the "
                        "springings and the crown (check rise limits, clearance and site lines, slope bounds)")
    return "form finding: the constraints conflict (infeasible program)"


def _feasible(setup: _Setup, data: ProgramData, subset: tuple[str, ...]) -> bool:
    import cvxpy as cp

    n = setup.structure.stations
    y = cp.Variable(n)
    cons = []
    if setup.structure.equality.shape[0]:
        cons.append(setup.structure.equality @ y == data.g)
    for (name, block), q in zip(setup.structure.blocks, data.q, strict=True):
        if name in subset:
            cons.append(block @ y <= q)
    problem = cp.Problem(cp.Minimize(0), cons)
    problem.solve(solver="CLARABEL")
    return problem.status in ("optimal", "optimal_inaccurate")
