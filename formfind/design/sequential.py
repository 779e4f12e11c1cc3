"""Form finding where the moments are not affine in the ordinates: trust-region sequential convex
programming with the exact engine's linearisation.

Used for two-hinged, fixed and tied arches, for a three-hinged arch whose rise is free between bounds,
for the min_depth objective, and to finish a three-hinged search whose loads follow the shape. Each
step linearises the governing states' moments at the current axis (`formfind.analysis.sensitivity`:
the engine's own sensitivity, redundants by the adjoint, plus the loads' own shape dependence),
solves the convex program within a trust region (bounds on every ordinate), and re-analyses the
candidate with the exact engine and its refreshed loads. The ratio of the actual to the predicted
decrease steers the region (halved to the attempted step below 0.1, doubled above 0.5 when the step
reached it); a step is kept when the exact objective does not increase. It stops when a kept step or
the region falls below the tolerance, or raises after ``max_iterations``.

Every accepted axis is linearised once and the program there with the region opened gives the
certificate (a dual bound that no axis does better, to first order); the search stops as soon as the
axis is within ``[find] optimality_gap`` of that bound. Then, among the axes within the fairness
tolerance of the optimum the fairest is returned (`fairest`), checked by the exact engine.

Freezing the redundants (the thrust, or the springing reactions of a fixed arch) instead of taking
their sensitivity does not work: with them frozen, many axes are self-consistent fixed points, so the
loop ends wherever it starts. The linearisation carries that sensitivity.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace

import numpy as np

from formfind.analysis.frame import FrameModel
from formfind.analysis.response import Response
from formfind.analysis.sensitivity import MomentModel, frame_model_moments, statics_model
from formfind.design.constraints import Limits, admissible, half_depth, infeasible_message
from formfind.design.fairness import assess
from formfind.design.governing import (
    analyse_governing,
    density_rates,
    exact_value,
    horizontal_resultant,
    kink_stations,
    objective_weights,
    reported,
    tributary,
)
from formfind.design.program import (
    ProgramData,
    ProgramSolution,
    fairness_matrix,
    second_differences,
    smoothest_within,
    solve_program,
)
from formfind.enums import Objective, SupportKind
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis, axis_through
from formfind.model.loads import StationLoads
from formfind.model.section import Section

log = logging.getLogger(__name__)

TOLERANCE_OF_SPAN = 1e-5  # default step tolerance, relative to the span
STALL = 1e-6  # ... which also stops when two kept steps together gain less than this, relative
SHRINK_BELOW, EXPAND_ABOVE = 0.1, 0.5  # trust-region ratio thresholds (actual / predicted decrease)
FAIR_STEPS = 8  # fairness steps at most
FAIR_HALVINGS = 6  # a fairness step is halved at most this many times
FAIR_PROGRESS = 0.01  # a fairness step must take at least this fraction off the axis's roughness (numerical choice)
FAIR_SLACK = 1e-5  # without [find] fair (or for a fair axis), the slack that only settles a non-unique optimum (checked exactly)
OPEN_REGION = 10.0  # x span: the trust region of the certificate's program, open in effect


@dataclass(frozen=True)
class Iteration:
    """One pass of a loop: its objective, the largest ordinate change (m) and, at the new axis, the
    largest difference between the linear model's moments and the exact engine's (kNm)."""

    number: int
    objective: float
    max_change_m: float
    residual_kNm: float


@dataclass(frozen=True, eq=False)
class Outcome:
    """Where a search ended: the axis, the governing states' response and loads there, the program
    that certifies it, the history, the solvers' time (s), and the objective of the certified optimum
    (the returned axis may give up the fairness tolerance of it)."""

    axis: Axis
    response: Response
    loads: StationLoads
    solution: ProgramSolution | None
    history: tuple[Iteration, ...]
    time_s: float
    optimum: float = float("nan")


def linearise(case: Case, axis: Axis, section: Section, response: Response, loads: StationLoads,
              model: FrameModel | None) -> MomentModel:
    """The governing states' moments at ``axis`` as affine functions of the ordinates."""
    rates = density_rates(case, axis, section, loads)
    if case.supports.kind is SupportKind.THREE_HINGED:
        return statics_model(axis, loads, response, case.hinge_station(axis), rates)
    return frame_model_moments(model, loads, response, rates)


def program_data(case: Case, limits: Limits, axis: Axis, section: Section, response: Response, moments: MomentModel,
                 radius: float | None) -> ProgramData:
    """The program's numbers at ``axis``: weights, right-hand sides and the trust region (m; None: none)."""
    f = case.find
    h = horizontal_resultant(response, axis)
    n = axis.count
    lower = np.full(n, -np.inf) if radius is None else axis.y - radius
    upper = np.full(n, np.inf) if radius is None else axis.y + radius
    return ProgramData(model=moments, c=objective_weights(f.objective, h, response, f.kern_fraction), w=tributary(axis),
                       g=limits.g, q=limits.rhs(half_depth(section, axis)), lower=lower, upper=upper)


def search(case: Case, axis: Axis, section: Section, limits: Limits) -> Outcome:
    """The trust-region search from ``axis`` (module docstring).

    Every accepted axis is linearised once; the program with the region opened there gives the
    first-order bound, and the search stops as soon as the axis is within ``[find] optimality_gap``
    of it (or a step, or the region, falls below the tolerance). The region's step reuses that
    program's solution where it already lies inside the region, and every solve starts from the
    previous optimal basis.

    Raises:
        FormFindingError: if the constraints conflict, a solver fails, or the loop does not converge.
    """
    f = case.find
    x = axis.x
    y = axis.y.copy()
    breaks = kink_stations(case, x)
    tolerance = f.tolerance_m if f.tolerance_m is not None else TOLERANCE_OF_SPAN * axis.span_m
    radius = f.step_limit_m if f.step_limit_m is not None else 0.25 * max(f.rise_max_m, 1e-3)
    largest = 4.0 * radius
    response, loads, model = analyse_governing(case, axis, section)
    current = exact_value(f.objective, response, axis, f.kern_fraction)
    history: list[Iteration] = []
    total_time = 0.0
    states = loads.count
    moments = linearise(case, axis, section, response, loads, model)
    open_data = program_data(case, limits, axis, section, response, moments, OPEN_REGION * axis.span_m)
    certificate = solve_program(limits.structure, open_data, y, select=False, resolving=True)
    total_time += certificate.solve_time_s
    basis = certificate.basis
    if certificate.y is None:
        raise FormFindingError(infeasible_message(limits, open_data.q, certificate.status.value))
    for number in range(1, f.max_iterations + 1):
        restoring = not admissible(limits, open_data.q, y)
        if not restoring and _certified(case, current, certificate, states, axis):
            break
        if restoring or float(np.abs(certificate.y - y).max()) <= radius:
            # the open program's step already lies in the region (or the current axis breaks a limit,
            # and the step to an admissible axis is kept whatever it costs: the region is for
            # stability, not feasibility)
            data, sol = open_data, certificate
        else:
            data = replace(open_data, lower=y - radius, upper=y + radius)
            sol = solve_program(limits.structure, data, y, select=False, warm=basis)
            total_time += sol.solve_time_s
            basis = sol.basis or basis
            if sol.y is None:
                data, sol, restoring = open_data, certificate, True
        change = float(np.abs(sol.y - y).max())
        candidate = axis_through(x, sol.y, breaks)
        trial, trial_loads, trial_model = analyse_governing(case, candidate, section)
        value = exact_value(f.objective, trial, candidate, f.kern_fraction)
        residual = float(np.abs(data.moments(sol.y) - trial.M).max())
        predicted = current - reported(f.objective, float(sol.value), states, axis)
        actual = current - value
        ratio = actual / predicted if predicted > 0 else (1.0 if actual >= 0 else -1.0)
        if ratio < SHRINK_BELOW:
            radius = 0.5 * min(change, radius) if change > 0 else 0.5 * radius
        elif ratio > EXPAND_ABOVE and change >= 0.99 * radius:
            radius = min(2.0 * radius, largest)
        log.debug("step %d: radius %.3g change %.3g current %.9g trial %.9g ratio %.3g", number, radius, change,
                  current, value, ratio)
        if restoring or (actual >= -1e-10 * max(abs(current), 1e-12) and ratio > 0.01):
            history.append(Iteration(number, value, change, residual))
            y, axis, response, loads, model, current = sol.y, candidate, trial, trial_loads, trial_model, value
            moments = linearise(case, axis, section, response, loads, model)
            open_data = program_data(case, limits, axis, section, response, moments, OPEN_REGION * axis.span_m)
            certificate = solve_program(limits.structure, open_data, y, select=False, warm=basis)
            total_time += certificate.solve_time_s
            basis = certificate.basis or basis
            if certificate.y is None:
                raise FormFindingError(
                    f"form finding: the program at the axis found could not be solved ({certificate.status.value})")
            stalled = len(history) >= 3 and history[-3].objective - value <= STALL * max(abs(value), 1e-12)
            if change <= tolerance or stalled:
                break
        elif radius <= tolerance:
            if not history:
                history.append(Iteration(number, current, 0.0, 0.0))
            break  # no step longer than the tolerance decreases the objective: a local optimum
    else:
        if not (admissible(limits, open_data.q, y) and _certified(case, current, certificate, states, axis)):
            hint = ("; HiGHS returns vertex solutions, which a sequential loop may not settle on: try solver = "
                    '"clarabel"') if f.solver.value == "highs" else ""
            moved = history[-1].max_change_m if history else float("nan")
            raise FormFindingError(
                f"form finding did not converge in {f.max_iterations} iterations: the last accepted step moved an "
                f"ordinate {moved:.3g} m (tolerance {tolerance:g} m); raise [find] max_iterations{hint}"
            )
    if not history:
        history.append(Iteration(1, current, 0.0, 0.0))
    optimum = current
    axis, response, loads, spent = fairest(case, limits, axis, section, response, loads, model, current, history,
                                           moments)
    return Outcome(axis, response, loads, certificate, tuple(history), total_time + spent, optimum)


def _certified(case: Case, current: float, certificate: ProgramSolution, states: int, axis: Axis) -> bool:
    """True if the first-order bound puts ``current`` within the optimality gap of the best axis."""
    if certificate.dual_bound is None or not np.isfinite(certificate.dual_bound):
        return False
    bound = reported(case.find.objective, certificate.dual_bound, states, axis)
    return current - bound <= case.find.optimality_gap * max(abs(current), 1e-300)


def fairest(case: Case, limits: Limits, axis: Axis, section: Section, response: Response, loads: StationLoads,
            model: FrameModel | None, optimum: float, history: list[Iteration],
            moments: MomentModel | None = None) -> tuple[Axis, Response, StationLoads, float]:
    """Among the axes within the fairness tolerance of the optimum, the fairest the exact engine confirms
    (``[find] fair``, where the optimum is not fair already; otherwise the smallest slack only settles
    a non-unique optimum). Each step solves for the fairest axis of the program linearised at the
    current one, then walks towards it, halving the step until the exact objective stays within the
    limit (the set of admissible axes of the linear model is convex, so every point on the way is
    admissible to first order, and the model's error falls with the square of the step). Where the
    exact objective overshoots, the next linear program aims lower by the overshoot. ``moments``: the
    linear model at ``axis`` where the caller has it. Returns the axis, its response and loads, and the
    time spent in the solver (s)."""
    f = case.find
    if f.objective is Objective.RMS:  # a strictly convex objective: its optimum is already definite
        return axis, response, loads, 0.0
    slack = f.fairness_tolerance if f.fair and not assess(axis).fair else FAIR_SLACK
    limit = optimum * (1 + slack) + 1e-12  # the epigraph bound s is in the objective's own unit
    aim = limit
    breaks = kink_stations(case, axis.x)
    tolerance = TOLERANCE_OF_SPAN * axis.span_m
    elapsed = 0.0
    bends = fairness_matrix(axis.x) if axis.count > 3 else second_differences(axis.x)
    roughness = float(np.sum((bends @ axis.y) ** 2))
    for _ in range(FAIR_STEPS):
        if moments is None:
            moments = linearise(case, axis, section, response, loads, model)
        data = program_data(case, limits, axis, section, response, moments, None)
        y_fair, spent = smoothest_within(limits.structure, data, aim, None, axis.y)
        elapsed += spent
        if y_fair is None:
            break
        direction = y_fair - axis.y
        if float(np.abs(direction).max()) <= tolerance:
            break
        for halving in range(FAIR_HALVINGS):
            t = 0.5 ** halving
            y = axis.y + t * direction
            rough = float(np.sum((bends @ y) ** 2))
            if rough > (1.0 - FAIR_PROGRESS) * roughness:
                continue  # not fairer by enough to be worth a step (nor its analysis)
            candidate = axis_through(axis.x, y, breaks)
            trial, trial_loads, trial_model = analyse_governing(case, candidate, section)
            value = exact_value(f.objective, trial, candidate, f.kern_fraction)
            if halving == 0 and value > limit:  # aim the next program below the limit by the overshoot
                aim = max(optimum * (1 + 0.5 * slack), aim - (value - limit))
            if value <= limit and admissible(limits, limits.rhs(half_depth(section, candidate)), y):
                roughness = rough
                history.append(Iteration(history[-1].number + 1, value, t * float(np.abs(direction).max()),
                                         float(np.abs(data.moments(y) - trial.M).max())))
                axis, response, loads, model = candidate, trial, trial_loads, trial_model
                moments = None
                break
        else:
            break  # no step towards the fairer axis keeps within the limit and makes it fairer: stay
        if halving == 0:
            # the whole step held: the axis is the linear model's fairest and the exact objective keeps
            # within the limit; a program at the new axis could only correct the model's second-order error
            break
    return axis, response, loads, elapsed
