"""The admissible axis nearest the architect's curve (``[find] objective = "nearest"``).

An architect brings a curve and asks how close to it the structure can stay. The answer is the axis
that deviates least from the reference (the largest vertical distance, or its root mean square along
the arch) among those whose peak |M| under the governing states stays within ``moment_limit_kNm``,
every other constraint of `[find]` holding too. A loose limit gives the reference itself; tightening
it moves the axis towards the funicular, and below the least peak any admissible axis can reach there
is no answer (the message says what that least peak is).

Two paths, as for the other objectives (`formfind.design.shape`):

- Exact: a three-hinged arch with its hinge held, under vertical loads that do not follow the shape.
  The moments are affine in the ordinates, so one convex program (an LP for the largest deviation, a
  QP for the RMS) gives the nearest axis and its dual bound certifies that no admissible axis is
  nearer.
- Sequential: everything else. Starting from the reference, each step solves the program with the
  moments linearised at the current axis within a trust region; a step is kept where the exact engine
  confirms the peak within the limit (or, while the axis is still outside it, where the peak falls),
  and the program aims below the limit by any overshoot the exact engine finds. It stops when no
  ordinate moves more than the tolerance; the last program's dual bound is a first-order certificate.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from formfind.analysis.response import Response
from formfind.design.constraints import Limits, admissible, half_depth, infeasible_message
from formfind.design.fairness import assess
from formfind.design.governing import (
    analyse_governing,
    frozen_model,
    has_horizontal,
    kink_stations,
    loads_move,
    tributary,
)
from formfind.design.program import NearestSolution, ProgramData, nearest_within, solve_program
from formfind.design.result import ActiveConstraint, GoverningPoint, NearestReport, ShapeResult
from formfind.design.sequential import TOLERANCE_OF_SPAN, Iteration, Outcome, linearise, search
from formfind.design.simple_curves import nearby_curves
from formfind.enums import Deviation, Objective, ShapeMethod, SupportKind
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis, axis_through
from formfind.model.section import Section

LIMIT_ROUND_OFF = 1e-9  # relative: a peak within this of the limit is within it (the engines' round-off)
STALL = 1e-5  # relative: a feasible step that comes nearer by less than this ends the search
BINDS = 1e-6  # relative: the limit binds where the peak is within this of it


def reference_axis(case: Case, axis: Axis) -> Axis:
    """The reference curve at ``axis``'s stations (tangents from splines, breaking where point loads act)."""
    reference = case.find.reference
    if reference is None:
        raise FormFindingError("objective = \"nearest\" needs a reference curve ([find] reference_x_m / _y_m or "
                               "reference_file)")
    y = reference.ordinate(axis.x)
    y[0], y[-1] = axis.y[0], axis.y[-1]
    return axis_through(axis.x, y, kink_stations(case, axis.x))


def find_nearest(case: Case, axis: Axis, section: Section, limits: Limits) -> ShapeResult:
    """The admissible axis nearest the reference with its peak |M| within the limit (module docstring).

    Raises:
        FormFindingError: if no admissible axis keeps the moments within the limit, the constraints
            conflict, or the sequential method does not settle.
    """
    f = case.find
    reference = reference_axis(case, axis)
    response, loads, model = analyse_governing(case, reference, section)
    peak = float(np.abs(response.M).max()) if response.count else 0.0
    history = [Iteration(0, 0.0, 0.0, 0.0)]
    q = limits.rhs(half_depth(section, reference))
    if peak <= f.moment_limit_kNm * (1 + LIMIT_ROUND_OFF) and admissible(limits, q, reference.y):
        return _result(case, reference, reference, response, peak, None, limits, section, ShapeMethod.REFERENCE,
                       tuple(history), 0.0)  # the reference itself is admissible: nothing to move
    exact = (case.supports.kind is SupportKind.THREE_HINGED and limits.fixed_rise and not loads_move(case)
             and not has_horizontal(loads))
    if exact:
        return _exact(case, reference, section, limits, response, loads, peak)
    return _sequential(case, reference, section, limits, response, loads, model, peak)


def _data(limits: Limits, axis: Axis, section: Section, moments, radius: float | None) -> ProgramData:
    """The program's numbers at ``axis``: unit moment weights, tributary lengths, a trust region (m)."""
    n = axis.count
    lower = np.full(n, -np.inf) if radius is None else axis.y - radius
    upper = np.full(n, np.inf) if radius is None else axis.y + radius
    return ProgramData(model=moments, c=np.ones((moments.states, n)), w=tributary(axis), g=limits.g,
                       q=limits.rhs(half_depth(section, axis)), lower=lower, upper=upper)


def _exact(case: Case, reference: Axis, section: Section, limits: Limits, response: Response, loads,
           reference_peak: float) -> ShapeResult:
    f = case.find
    model = frozen_model(reference, loads, response, limits.crown)
    current = reference
    elapsed = 0.0
    solution: NearestSolution | None = None
    for _ in range(50):  # the vertical half-depth of clearance and envelope lines follows the shape
        half = half_depth(section, current)
        data = replace(_data(limits, reference, section, model, None), q=limits.rhs(half))
        solution = nearest_within(limits.structure, data, f.moment_limit_kNm, reference.y,
                                  f.deviation is Deviation.RMS, None, _fair_slack(case))
        elapsed += solution.solve_time_s
        if solution.y is None:
            raise FormFindingError(_infeasible(limits, data, solution, f.moment_limit_kNm))
        current = axis_through(reference.x, solution.y, kink_stations(case, reference.x))
        if not (limits.clearance_rows.size or limits.envelope_rows.size):
            break
        if np.abs(half_depth(section, current) - half).max() <= 1e-9 * reference.span_m:
            break
    checked, _, _ = analyse_governing(case, current, section)
    residual = float(np.abs(model.moments(current.y) - checked.M).max())
    if residual > 1e-6 * max(float(np.abs(checked.M).max()), 1.0):
        raise FormFindingError(f"form finding: the exact model disagrees with the statics engine by {residual:.3g} kNm")
    history = (Iteration(1, _measure(case, current, reference), float(np.abs(current.y - reference.y).max()), residual),)
    return _result(case, current, reference, checked, reference_peak, solution, limits, section, ShapeMethod.PROGRAM,
                   history, elapsed)


def _sequential(case: Case, reference: Axis, section: Section, limits: Limits, response: Response, loads, model,
                reference_peak: float) -> ShapeResult:
    f = case.find
    limit = f.moment_limit_kNm
    tolerance = f.tolerance_m if f.tolerance_m is not None else TOLERANCE_OF_SPAN * reference.span_m
    radius = f.step_limit_m if f.step_limit_m is not None else 0.25 * max(f.rise_max_m, 1e-3)
    largest = 4.0 * radius
    breaks = kink_stations(case, reference.x)
    current, current_response, current_loads, current_model = reference, response, loads, model
    current_peak = reference_peak
    current_measure = 0.0
    restored = False
    aim = limit
    elapsed = 0.0
    solution: NearestSolution | None = None
    history: list[Iteration] = []
    settled = False
    for number in range(1, f.max_iterations + 1):
        moments = linearise(case, current, section, current_response, current_loads, current_model)
        data = _data(limits, current, section, moments, radius)
        solution = nearest_within(limits.structure, data, aim, reference.y, f.deviation is Deviation.RMS, current.y,
                                  _fair_slack(case))
        elapsed += solution.solve_time_s
        if solution.y is None and aim < limit and current_peak <= limit * (1 + LIMIT_ROUND_OFF):
            aim = limit  # aimed below what the region reaches: the current axis itself meets the limit
            continue
        if solution.y is None:  # no nearby axis reaches the limit: find the least bending first
            if restored:
                raise FormFindingError(_too_tight(limit, current_peak))
            restored = True
            least = _least_bending(case, current, section, limits)
            elapsed += least.time_s
            peak = float(np.abs(least.response.M).max())
            if peak > limit * (1 + LIMIT_ROUND_OFF):
                raise FormFindingError(_too_tight(limit, peak))
            current, current_response, current_loads = least.axis, least.response, least.loads
            current_model = None if case.supports.kind is SupportKind.THREE_HINGED else analyse_governing(
                case, current, section)[2]
            current_peak, current_measure, aim = peak, _measure(case, current, reference), limit
            history.append(Iteration(number, current_measure, float(np.abs(current.y - reference.y).max()), 0.0))
            continue
        y_new = solution.y
        change = float(np.abs(y_new - current.y).max())
        candidate = axis_through(current.x, y_new, breaks)
        trial, trial_loads, trial_model = analyse_governing(case, candidate, section)
        peak = float(np.abs(trial.M).max())
        inside = peak <= limit * (1 + LIMIT_ROUND_OFF)
        measure = _measure(case, candidate, reference)
        current_inside = current_peak <= limit * (1 + LIMIT_ROUND_OFF)
        nearer = measure <= current_measure + 1e-9 * reference.span_m
        if (inside and (nearer or not current_inside)) or (not current_inside and peak < current_peak):
            progress = current_measure - measure
            current, current_response, current_loads, current_model = candidate, trial, trial_loads, trial_model
            current_peak, current_measure = peak, measure
            history.append(Iteration(number, measure, change, float(np.abs(data.moments(y_new) - trial.M).max())))
            if not inside:
                aim = max(0.5 * limit, aim - (peak - limit))
            else:
                aim = min(limit, aim + 0.5 * (limit - peak))
                radius = min(2.0 * radius, largest)
            if inside and current_inside and (change <= tolerance or 0 <= progress <= STALL * max(measure, tolerance)):
                settled = True
                break
        else:
            if peak > limit:
                aim = max(0.5 * limit, aim - (peak - limit))
            radius = 0.5 * min(radius, max(change, tolerance))
            if radius <= tolerance and current_peak <= limit * (1 + LIMIT_ROUND_OFF):
                settled = True  # no step longer than the tolerance keeps within the limit and comes nearer
                break
    if not settled or current_peak > limit * (1 + LIMIT_ROUND_OFF):
        raise FormFindingError(
            f"form finding did not settle on an axis within the moment limit in {f.max_iterations} iterations (peak "
            f"|M| {current_peak:.4g} kNm against {limit:g} kNm); raise [find] max_iterations or the limit")
    # the certificate: the program linearised at the axis found, its region open
    moments = linearise(case, current, section, current_response, current_loads, current_model)
    data = _data(limits, current, section, moments, None)
    certificate = nearest_within(limits.structure, data, limit, reference.y, f.deviation is Deviation.RMS, current.y,
                                 _fair_slack(case))
    elapsed += certificate.solve_time_s
    return _result(case, current, reference, current_response, reference_peak,
                   certificate if certificate.y is not None else solution, limits, section, ShapeMethod.SEQUENTIAL,
                   tuple(history), elapsed)


def _least_bending(case: Case, axis: Axis, section: Section, limits: Limits) -> Outcome:
    """The minimax search from ``axis`` (the optimum itself, not a fairer neighbour): the least peak
    |M| any nearby admissible axis reaches, and that axis."""
    minimax = replace(case, find=replace(case.find, objective=Objective.MINIMAX, fair=False))
    structure = replace(limits.structure, objective=Objective.MINIMAX)
    return search(minimax, axis, section, replace(limits, structure=structure))


def _fair_slack(case: Case) -> float | None:
    """With ``[find] fair`` (the default) the largest deviation may grow by the fairness tolerance to
    make the axis fair; None: the nearest in the weighted sum of squares among the nearest."""
    f = case.find
    return f.fairness_tolerance if f.fair and f.deviation is Deviation.LARGEST else None


def _measure(case: Case, axis: Axis, reference: Axis) -> float:
    """The deviation measure of ``axis`` from the reference, m."""
    d = axis.y - reference.y
    if case.find.deviation is Deviation.RMS:
        w = tributary(axis)
        return float(np.sqrt(np.sum(w * d**2) / np.sum(w)))
    return float(np.abs(d).max())


def _too_tight(limit: float, least: float) -> str:
    return (f"no admissible axis keeps |M| within {limit:g} kNm under the governing states: the least peak any "
            f"admissible axis reaches is about {least:.4g} kNm (the minimax optimum); raise [find] moment_limit_kNm")


def _infeasible(limits: Limits, data: ProgramData, solution: NearestSolution, limit_kNm: float) -> str:
    """Why the exact program failed: the geometric limits conflict, or the moment limit is below the
    least peak any admissible axis reaches (found by solving the minimax program)."""
    minimax = solve_program(replace(limits.structure, objective=Objective.MINIMAX), data, None, select=False)
    if minimax.y is None or minimax.value is None:
        return infeasible_message(limits, data.q, minimax.status.value)
    if solution.status.value != "infeasible":
        return f"form finding: the solver stopped with status {solution.status.value!r}"
    return _too_tight(limit_kNm, float(np.max(np.abs(data.moments(minimax.y)))))


def _result(case: Case, axis: Axis, reference: Axis, response: Response, reference_peak: float,
            solution: NearestSolution | None, limits: Limits, section: Section, method: ShapeMethod,
            history: tuple[Iteration, ...], elapsed: float) -> ShapeResult:
    f = case.find
    limit = f.moment_limit_kNm
    d = axis.y - reference.y
    i = int(np.argmax(np.abs(d)))
    w = tributary(axis)
    abs_m = np.abs(response.M)
    k, j = np.unravel_index(int(np.argmax(abs_m)), abs_m.shape)
    peak = float(abs_m[k, j])
    value = _measure(case, axis, reference)
    binds = peak >= limit * (1 - BINDS) and value > 0
    governing: list[GoverningPoint] = []
    if binds:
        duals = solution.moment_duals if solution is not None and solution.moment_duals is not None else None
        for kk, jj in zip(*np.nonzero(abs_m >= limit * (1 - BINDS)), strict=True):
            weight = float(duals[kk, jj]) if duals is not None and duals.shape == abs_m.shape else 0.0
            governing.append(GoverningPoint(response.names[kk], int(jj), float(axis.x[jj]), weight))
        governing.sort(key=lambda g: -g.multiplier)
    active: list[ActiveConstraint] = []
    data_q = limits.rhs(half_depth(section, axis))
    for (name, block), q in zip(limits.structure.blocks, data_q, strict=True):
        rows = np.flatnonzero(np.abs(block @ axis.y - q) <= 1e-7)
        if rows.size and value > 0:
            stations = sorted({int(s) for s in block[rows].indices})
            active.append(ActiveConstraint(name, tuple(stations), float("nan"), "m/m"))
    bound = solution.bound_m if solution is not None else 0.0
    floor = 1e-9 * axis.span_m
    optimum = min(value, solution.least_m) if solution is not None and np.isfinite(solution.least_m) else value
    gap = (optimum - bound) / max(optimum, floor) if bound is not None else float("nan")
    report = NearestReport(
        reference_y_m=reference.y,
        deviation=f.deviation,
        largest_deviation_m=float(abs(d[i])),
        signed_largest_m=float(d[i]),
        largest_at_x_m=float(axis.x[i]),
        rms_deviation_m=float(np.sqrt(np.sum(w * d**2) / np.sum(w))),
        peak_moment_kNm=peak,
        peak_state=response.names[k],
        peak_at_x_m=float(axis.x[j]),
        moment_limit_kNm=limit,
        reference_peak_moment_kNm=reference_peak,
        limit_binds=bool(binds),
    )
    notes = []
    if value == 0:
        notes.append(f"the reference itself keeps |M| within {limit:g} kNm (peak {peak:.4g} kNm) and meets every "
                     "limit: it is returned unchanged")
    fairness = assess(axis)
    notes += list(fairness.warnings(f.concave))
    return ShapeResult(
        axis=axis,
        objective=Objective.NEAREST,
        value=value,
        unit="m",
        checked_value=value,
        dual_bound=bound,
        gap=float(max(gap, 0.0)) if np.isfinite(gap) else gap,
        stationarity=solution.stationarity if solution is not None else 0.0,
        governing=tuple(governing),
        active=tuple(active),
        method=method,
        solver=solution.solver if solution is not None else "none",
        status={ShapeMethod.PROGRAM: "optimal", ShapeMethod.SEQUENTIAL: "converged"}.get(method, "admissible"),
        solve_time_s=elapsed,
        iterations=history,
        section=section,
        states=response.names,
        thrust_kN=float(np.abs(response.thrust).max()) if response.count else float("nan"),
        optimum=optimum,
        symmetric=limits.symmetric,
        fairness=fairness,
        simple_curves=nearby_curves(axis),
        warnings=tuple(notes),
        nearest=report,
    )
