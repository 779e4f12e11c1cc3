"""Form finding: the axis that bends least under the governing load states, with a certificate.

The stations' abscissae stay where the case puts them; their ordinates y are the variables, and the
springing levels are kept. Three paths, chosen by what the moments depend on:

- Exact (three-hinged arch, hinge ordinate fixed, vertical loads that do not change with the shape).
  The station moments are then affine and diagonal in the ordinates, M[k, i] = M0[k, i] -
  H[k] (y_i - y0_i), so one convex program gives the optimum, and its dual bound certifies that no
  admissible axis does better. Without coupling constraints the minimax separates by station and is
  solved exactly station by station (`formfind.design.separable`).
- Fixed point on the loads (the same arch under loads that follow the shape: self-weight per arc
  length, fill, normal pressure, horizontal loads). With the loads frozen on the current axis the
  moments are again affine in y, so each iterate is the exact optimum for the loads of the previous
  axis; the iteration stops when the axis no longer moves. A funicular (every governing moment
  vanishing: the catenary of a rib's own weight, the filled-spandrel curve, the circle of a radial
  pressure) is then the global optimum. Where bending remains, the sequential method finishes from
  the fixed point, since the loads' own change with the shape enters the optimum too.
- Sequential (two-hinged, fixed and tied arches, a rise free between bounds, the min_depth objective):
  trust-region sequential convex programming with the exact engine's linearisation
  (`formfind.design.sequential`), a local optimum certified to first order.

Clearance and site envelopes act on the intrados and extrados measured vertically: half the depth
divided by cos(theta) of the current axis. Curvature bounds act on d2y/dx2 (second differences).
"""

from __future__ import annotations

import logging
from dataclasses import replace

import numpy as np

from formfind.analysis.response import Response
from formfind.analysis.sensitivity import MomentModel
from formfind.design.constraints import (
    Limits,
    build_limits,
    half_depth,
    infeasible_message,
    station_bounds,
)
from formfind.design.fairness import assess
from formfind.design.governing import (
    analyse_governing,
    exact_value,
    frozen_model,
    governing_groups,
    governing_loads,
    has_horizontal,
    horizontal_resultant,
    kink_stations,
    loads_move,
    mirror_symmetric,
    objective_weights,
    reported,
    tributary,
)
from formfind.design.nearest import find_nearest, reference_axis
from formfind.design.program import ProgramData, ProgramSolution, smoothest_within, solve_program
from formfind.design.result import UNITS, ActiveConstraint, GoverningPoint, ShapeResult
from formfind.design.separable import per_station_minimax
from formfind.design.sequential import Iteration, Outcome, search
from formfind.design.simple_curves import nearby_curves
from formfind.enums import Objective, ShapeMethod, SupportKind
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis, axis_through
from formfind.model.loads import StationLoads
from formfind.model.section import Section

__all__ = [
    "ActiveConstraint",
    "GoverningPoint",
    "Iteration",
    "ShapeResult",
    "axis_through",
    "find_shape",
    "governing_groups",
    "governing_loads",
    "required_depth",
]

log = logging.getLogger(__name__)

ACTIVE_SLACK_M = 1e-7  # a constraint row counts as active within this slack
ATTAINED = 1e-6  # a (state, station) governs where its moment is within this fraction of the optimum
FIXED_POINT_TOLERANCE = 1e-10  # of the span: the fixed point on the loads stops when no ordinate moves more
FIXED_POINT_ITERATIONS = 60  # ... or gives up (the sequential method takes over) after this many
FUNICULAR = 1e-9  # of the moment scale H x rise: a governing moment this small is no moment at all


# ------------------------------------------------------------------------------------ finding
def find_shape(case: Case, start: Axis | None = None) -> ShapeResult:
    """Find the axis of least bending for the case's governing states within its limits.

    Args:
        case: the validated case (its ``[find]`` settings drive the search).
        start: the first iterate (default: the case's given axis); it fixes the abscissae.

    Raises:
        FormFindingError: if the constraints conflict (the message names them), the solver fails,
            or the loop does not converge within ``max_iterations``.
        ArgumentError: if ``case`` is not a Case or ``start`` not an Axis.
    """
    from formfind import arguments

    arguments.case(case, "find_shape")
    arguments.axis(start, "find_shape", "start")
    axis = start if start is not None else case.axis()
    if case.find.objective is Objective.MIN_DEPTH:
        return _min_depth(case, axis)
    return _find(case, axis, case.section)


def required_depth(case: Case, depth_m: float, start: Axis | None = None) -> ShapeResult:
    """The least depth the thrust lines need over all admissible axes when the rib is ``depth_m``
    deep (its self-weight follows): ``value`` of the result, in m. A depth is sufficient when the
    returned value does not exceed it; `find_shape` with ``min_depth`` finds the least such depth.

    Raises:
        ArgumentError: if ``case`` is not a Case, ``depth_m`` not a positive number or ``start`` not an Axis.
    """
    from formfind import arguments

    arguments.case(case, "required_depth")
    arguments.positive(depth_m, "required_depth", "depth_m", "m")
    arguments.axis(start, "required_depth", "start")
    axis = start if start is not None else case.axis()
    return _find(case, axis, _with_depth(case.section, depth_m))


def _min_depth(case: Case, axis: Axis) -> ShapeResult:
    """The least rib depth d with s*(d) <= d, s*(d) the least required depth over all admissible axes
    when the rib (hence its self-weight) is d deep: Brent's method on s*(d) - d."""
    from scipy.optimize import brentq

    results: dict[float, ShapeResult] = {}

    def excess(depth: float) -> float:
        result = _find(case, axis, _with_depth(case.section, depth))
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


def _with_depth(section: Section, depth: float) -> Section:
    width = float(section.width_m)
    return replace(section, depth_m=depth, area_m2=width * depth, second_moment_m4=width * depth**3 / 12.0)


def _find(case: Case, axis: Axis, section: Section) -> ShapeResult:
    """Form finding at a fixed rib section: pick the path (module docstring) and run it."""
    loads = governing_loads(case, axis, section)
    if loads.count == 0:
        raise FormFindingError("no governing load states: name combinations or cases in [find] governing")
    nearest = case.find.objective is Objective.NEAREST
    if nearest:  # the architect's curve is the start, and its own symmetry counts too
        axis = reference_axis(case, axis)
    mirrored = mirror_symmetric(case, axis, loads)
    if nearest:
        mirrored = mirrored and bool(np.abs(axis.y - axis.y[::-1]).max() <= 1e-9 * axis.span_m)
    symmetric = mirrored if case.find.symmetric is None else case.find.symmetric
    limits = build_limits(case, axis.x, axis.y, loads.count, symmetric, mirrored)
    if nearest:
        return find_nearest(case, axis, section, limits)
    three_hinged = case.supports.kind is SupportKind.THREE_HINGED
    if three_hinged and limits.fixed_rise and case.find.objective is not Objective.MIN_DEPTH:
        if not loads_move(case) and not has_horizontal(loads):
            return _exact(case, axis, section, limits)
        return _fixed_point(case, axis, section, limits)
    outcome = search(case, axis, section, limits)
    return _result(case, outcome, limits, section, ShapeMethod.SEQUENTIAL)


# ---------------------------------------------------------------------------- the exact program
def _solve_frozen(case: Case, axis: Axis, section: Section, limits: Limits, response: Response,
                  loads: StationLoads) -> tuple[np.ndarray, ProgramSolution | None, float]:
    """The optimal ordinates for the loads frozen on ``axis`` (exact), the certifying solution (None
    for the per-station method) and the solve time (s). Clearance and site lines are measured with the
    half-depth of the axis found, re-solved until it settles."""
    f = case.find
    model = frozen_model(axis, loads, response, limits.crown)
    h = horizontal_resultant(response, axis)
    separable = f.objective is Objective.MINIMAX and not limits.coupled and model.steps is None
    current = axis
    sol: ProgramSolution | None = None
    elapsed = 0.0
    y_new = axis.y
    for _ in range(50):  # the vertical half-depth of clearance and envelope lines follows the shape
        half = half_depth(section, current)
        if separable:
            lower, upper = station_bounds(limits, half, axis.x)
            y_new, _ = per_station_minimax(model.M0 + h * axis.y[None, :], h, lower, upper)
            if limits.symmetric:  # a mirrored problem: the twins agree to round-off; make them agree exactly
                y_new = 0.5 * (y_new + y_new[::-1])
            sol = None
            if f.concave and not _is_concave(axis.x, y_new):
                separable = False  # the per-station optimum sags: solve with the concavity bound
        if not separable:
            n = axis.count
            data = ProgramData(model=model, c=objective_weights(f.objective, h, response, f.kern_fraction),
                               w=tributary(axis), g=limits.g, q=limits.rhs(half), lower=np.full(n, -np.inf),
                               upper=np.full(n, np.inf))
            sol = solve_program(limits.structure, data, axis.y)
            if sol.y is None:
                raise FormFindingError(infeasible_message(limits, data.q, sol.status.value))
            y_new = sol.y
            elapsed += sol.solve_time_s
        current = axis_through(axis.x, y_new, kink_stations(case, axis.x))
        if not (limits.clearance_rows.size or limits.envelope_rows.size):
            break
        if np.abs(half_depth(section, current) - half).max() <= 1e-9 * axis.span_m:
            break
    return y_new, sol, elapsed


def _exact(case: Case, axis: Axis, section: Section, limits: Limits) -> ShapeResult:
    """Three-hinged, hinge held, vertical loads independent of the shape: one solve is the optimum."""
    response, loads, _ = analyse_governing(case, axis, section)
    y_new, sol, elapsed = _solve_frozen(case, axis, section, limits, response, loads)
    model = frozen_model(axis, loads, response, limits.crown)
    found = axis_through(axis.x, y_new, kink_stations(case, axis.x))
    checked, loads, _ = analyse_governing(case, found, section)
    residual = float(np.abs(model.moments(y_new) - checked.M).max())
    if residual > 1e-6 * max(float(np.abs(checked.M).max()), 1.0):
        raise FormFindingError(f"form finding: the exact model disagrees with the statics engine by {residual:.3g} kNm")
    f = case.find
    value = exact_value(f.objective, checked, found, f.kern_fraction)
    history = [Iteration(1, value, float(np.abs(y_new - axis.y).max()), residual)]
    method = ShapeMethod.PER_STATION if sol is None else ShapeMethod.PROGRAM
    fair_axis, fair_response, fair_loads, spent = _fair_exact(case, limits, axis, found, section, response, model,
                                                              value, history)
    outcome = Outcome(fair_axis, fair_response if fair_response is not None else checked,
                      fair_loads if fair_loads is not None else loads, sol, tuple(history), elapsed + spent, value)
    return _result(case, outcome, limits, section, method)


def _fair_exact(case: Case, limits: Limits, start: Axis, found: Axis, section: Section, response: Response,
                model: MomentModel, optimum: float, history: list[Iteration]):
    """The fairest axis within the fairness tolerance of the optimum, for a model that is exact (one
    program: no step, no region). Returns the axis, its response and loads (None: unchanged) and the
    solver's time (s)."""
    f = case.find
    if (not f.fair or f.objective is Objective.RMS or assess(found).fair
            or optimum <= FUNICULAR * _moment_scale(response, found, f.objective)):
        return found, None, None, 0.0
    n = found.count
    h = horizontal_resultant(response, start)
    limit = optimum * (1 + f.fairness_tolerance)
    breaks = kink_stations(case, found.x)
    fair, spent = found, 0.0
    for _ in range(50):  # the vertical half-depth of clearance and envelope lines follows the shape
        half = half_depth(section, fair)
        data = ProgramData(model=model, c=objective_weights(f.objective, h, response, f.kern_fraction),
                           w=tributary(start), g=limits.g, q=limits.rhs(half),
                           lower=np.full(n, -np.inf), upper=np.full(n, np.inf))
        y_fair, seconds = smoothest_within(limits.structure, data, limit, None, found.y)
        spent += seconds
        if y_fair is None:
            return found, None, None, spent
        fair = axis_through(found.x, y_fair, breaks)
        if not (limits.clearance_rows.size or limits.envelope_rows.size):
            break
        if np.abs(half_depth(section, fair) - half).max() <= 1e-9 * found.span_m:
            break
    if float(np.abs(fair.y - found.y).max()) <= 1e-12 * found.span_m:
        return found, None, None, spent
    checked, loads, _ = analyse_governing(case, fair, section)
    value = exact_value(f.objective, checked, fair, f.kern_fraction)
    if value > limit * (1 + 1e-7) + 1e-12:  # the exact model cannot be out by more than round-off
        return found, None, None, spent
    history.append(Iteration(len(history) + 1, value, float(np.abs(y_fair - found.y).max()),
                             float(np.abs(data.moments(y_fair) - checked.M).max())))
    return fair, checked, loads, spent


def _fixed_point(case: Case, axis: Axis, section: Section, limits: Limits) -> ShapeResult:
    """Three-hinged, hinge held, loads that follow the shape: iterate the exact optimum on the loads
    of the previous axis until the axis stands still (module docstring)."""
    f = case.find
    start = axis
    history: list[Iteration] = []
    elapsed = 0.0
    response, loads, _ = analyse_governing(case, axis, section)
    sol: ProgramSolution | None = None
    settled = False
    previous_change = np.inf
    for number in range(1, FIXED_POINT_ITERATIONS + 1):
        y_new, sol, spent = _solve_frozen(case, axis, section, limits, response, loads)
        elapsed += spent
        change = float(np.abs(y_new - axis.y).max())
        model = frozen_model(axis, loads, response, limits.crown)
        axis = axis_through(axis.x, y_new, kink_stations(case, axis.x))
        response, loads, _ = analyse_governing(case, axis, section)
        residual = float(np.abs(model.moments(y_new) - response.M).max())
        history.append(Iteration(number, exact_value(f.objective, response, axis, f.kern_fraction), change, residual))
        if change <= FIXED_POINT_TOLERANCE * axis.span_m:
            settled = True
            break
        if number > 5 and change > 0.9 * previous_change:
            break  # not contracting: leave it to the sequential method
        previous_change = change
    if not settled:
        log.info("form finding: the loads' fixed point did not settle in %d iterations; sequential method", len(history))
        outcome = search(case, start, section, limits)
        return _result(case, outcome, limits, section, ShapeMethod.SEQUENTIAL)
    value = history[-1].objective
    if value <= FUNICULAR * _moment_scale(response, axis, f.objective):
        outcome = Outcome(axis, response, loads, sol, tuple(history), elapsed, value)
        return _result(case, outcome, limits, section, ShapeMethod.FIXED_POINT)
    outcome = search(case, axis, section, limits)  # bending remains: the loads' own change matters too
    outcome = replace(outcome, history=tuple(history) + outcome.history, time_s=outcome.time_s + elapsed)
    return _result(case, outcome, limits, section, ShapeMethod.SEQUENTIAL)


def _moment_scale(response: Response, axis: Axis, objective: Objective) -> float:
    """The natural size of the objective: H x rise for moments, the rise for offsets and depths."""
    rise = max(float(np.ptp(axis.y)), 1e-3 * axis.span_m)
    if objective in (Objective.OFFSET, Objective.MIN_DEPTH):
        return rise
    return max(float(np.abs(horizontal_resultant(response, axis)).max()), 1e-12) * rise


def _is_concave(x: np.ndarray, y: np.ndarray) -> bool:
    """True if d2y/dx2 <= 0 at every interior station (to round-off)."""
    slope = np.diff(y) / np.diff(x)
    return bool(np.all(np.diff(slope) <= 1e-9 * max(1.0, float(np.abs(slope).max()))))


# ------------------------------------------------------------------------------------- results
def _result(case: Case, outcome: Outcome, limits: Limits, section: Section, method: ShapeMethod) -> ShapeResult:
    f = case.find
    axis, response, loads, sol = outcome.axis, outcome.response, outcome.loads, outcome.solution
    checked = exact_value(f.objective, response, axis, f.kern_fraction)
    value = checked if method is ShapeMethod.SEQUENTIAL else outcome.history[-1].objective
    optimum = outcome.optimum if np.isfinite(outcome.optimum) else value
    governing: list[GoverningPoint] = []
    active: list[ActiveConstraint] = []
    unit = UNITS[f.objective]
    floor = FUNICULAR * _moment_scale(response, axis, f.objective)
    # where the optimum is attained (to ATTAINED of it), weighted by the certificate's multipliers
    weights = objective_weights(f.objective, horizontal_resultant(response, axis), response, f.kern_fraction)
    ratio = np.abs(response.M) / np.where(weights > 0, weights, np.inf)
    lam = sol.epigraph_duals.sum(axis=0) if sol is not None and sol.epigraph_duals is not None else None
    top = float(ratio.max()) if ratio.size else 0.0
    for k, i in zip(*np.nonzero(ratio >= top * (1 - ATTAINED) - 1e-300), strict=True):
        weight = 1.0 if lam is None else float(lam[k, i])
        governing.append(GoverningPoint(loads.names[k], int(i), float(axis.x[i]), weight))
    if sol is None:  # the exact per-station method
        peak = np.abs(response.M)
        top = peak.max()
        bound, gap, stationarity, solver, status = value, 0.0, 0.0, "bisection", "optimal"
        h_now = horizontal_resultant(response, axis)
        for name, rows, level, sign in (("clearance", limits.clearance_rows, limits.clearance_level, 1.0),
                                        ("envelope", limits.envelope_rows, limits.envelope_level, -1.0)):
            if rows.size:
                half = half_depth(section, axis)[rows]
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
        solver, status = sol.solver, sol.status.value
        bound = reported(f.objective, sol.dual_bound, loads.count, axis) if sol.dual_bound is not None else None
        gap = (optimum - bound) / max(abs(optimum), floor, 1e-300) if bound is not None else float("nan")
        stationarity = sol.stationarity
        for (name, block), mu, slack in zip(limits.structure.blocks, sol.block_duals, sol.block_slacks, strict=True):
            rows = np.flatnonzero((mu > 1e-9 * max(1.0, abs(sol.value))) & (slack <= 1e-5))
            if rows.size:
                stations = sorted({int(j) for r in rows for j in block.getrow(r).indices})
                active.append(ActiveConstraint(name, tuple(stations), float(mu[rows].sum()), f"{unit}/m"))
    governing.sort(key=lambda g: -g.multiplier)
    thrust = float(np.abs(response.thrust).max()) if response.count else float("nan")
    fairness = assess(axis)
    notes = list(fairness.warnings(f.concave))
    loaded = set(kink_stations(case, axis.x))
    if any(k.station in loaded for k in fairness.kinks):
        notes.append("a point load acts at " + ", ".join(f"x = {k.x_m:.3f} m" for k in fairness.kinks
                                                         if k.station in loaded)
                     + ": the funicular kinks under a point load, and the axis follows it")
    if f.fair and any(k.station not in loaded for k in fairness.kinks):
        notes.append(f"a fairer axis would cost more than the fairness tolerance ({f.fairness_tolerance:.1%} of the "
                     "optimum); raise [find] fairness_tolerance to trade more bending for a fairer axis")
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
        solve_time_s=outcome.time_s,
        iterations=outcome.history,
        section=section,
        states=loads.names,
        thrust_kN=thrust,
        optimum=optimum,
        symmetric=limits.symmetric,
        fairness=fairness,
        simple_curves=nearby_curves(axis),
        warnings=tuple(notes),
    )
