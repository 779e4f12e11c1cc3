"""What form finding returns: the found axis and the evidence that it is best (`ShapeResult`), the
points where the optimum is attained, the constraints that bind, and for the nearest objective how far
the axis strays from the reference and what bending that buys."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.design.fairness import FairnessReport
from formfind.design.sequential import Iteration
from formfind.design.simple_curves import CurveDeviation
from formfind.enums import Deviation, Objective, ShapeMethod
from formfind.model.geometry import Axis
from formfind.model.section import Section

UNITS = {Objective.MINIMAX: "kNm", Objective.RMS: "kNm", Objective.OFFSET: "m", Objective.MIN_DEPTH: "m",
         Objective.NEAREST: "m"}


@dataclass(frozen=True, eq=False)
class NearestReport:
    """The axis nearest the reference (objective nearest): how far it strays and what bending remains.

    Attributes:
        reference_y_m: the reference's ordinates at the stations (m).
        deviation: the measure minimised (`Deviation`).
        largest_deviation_m: the largest |y - y_ref| (m) and where (``largest_at_x_m``, m); positive
            ``signed_largest_m`` where the axis lies above the reference.
        rms_deviation_m: the root mean square of y - y_ref along the arch (tributary weights, m).
        peak_moment_kNm: the largest |M| of the governing states on the axis found, by the exact engine,
            with its state and abscissa (m).
        moment_limit_kNm: the limit it had to respect.
        reference_peak_moment_kNm: the reference's own largest |M| under the same states.
        limit_binds: whether the limit holds the axis away from the reference.
    """

    reference_y_m: np.ndarray
    deviation: Deviation
    largest_deviation_m: float
    signed_largest_m: float
    largest_at_x_m: float
    rms_deviation_m: float
    peak_moment_kNm: float
    peak_state: str
    peak_at_x_m: float
    moment_limit_kNm: float
    reference_peak_moment_kNm: float
    limit_binds: bool


@dataclass(frozen=True)
class GoverningPoint:
    """A state and station where the optimum is attained; ``multiplier`` is the certificate's weight on
    it (1 for the per-station method, whose optimum needs none; 0 where another row carries it)."""

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


@dataclass(frozen=True, eq=False)
class ShapeResult:
    """The found axis and the evidence that it is best.

    Attributes:
        axis: the found axis (ordinates at the case's stations, tangents from a cubic spline).
        objective: what was minimised; ``value`` its optimum in ``unit``.
        checked_value: the objective re-evaluated by the exact engine on the found axis.
        dual_bound: the program's dual bound in ``unit``: for the exact path a lower bound over every
            admissible axis; for the fixed point the bound for the loads the found axis carries; for
            the sequential path the bound of the program linearised at the found axis (a first-order
            certificate). Equal to ``value`` for the exact per-station method.
        gap: (value - dual_bound) / value (the value floored at 1e-9 of the moment scale, so a
            funicular's vanishing optimum gives a vanishing gap).
        stationarity: residual of the dual certificate (relative); small means the bound is sound.
        governing: where the optimum is attained.
        active: constraint blocks that bind, with their cost.
        method: how it was found (`ShapeMethod`).
        solver, status, solve_time_s: of the certifying solve (time summed over every solve).
        iterations: the loop's history.
        section: the rib used (its depth is the optimum for ``min_depth``).
        states: names of the governing load states.
        thrust_kN: the largest thrust H (kN) of the governing states on the found axis.
        optimum: the objective of the certified optimum, in ``unit``; ``value`` (the returned axis's)
            may exceed it by the fairness tolerance (``fairness_cost`` says by how much, as a fraction).
        symmetric: whether the axis was kept symmetric (asked for, or found automatically).
        fairness: kinks, flat runs and reversals of the returned axis (`formfind.design.fairness`).
        simple_curves: the parabola, circle and catenary through the same springings and rise, each with
            its largest deviation from the axis.
        warnings: the fairness findings in words, for the designer to read.
        nearest: for the nearest objective, the deviation from the reference and the bending it costs.
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
    method: ShapeMethod
    solver: str
    status: str
    solve_time_s: float
    iterations: tuple[Iteration, ...]
    section: Section
    states: tuple[str, ...]
    thrust_kN: float = float("nan")
    optimum: float = float("nan")
    symmetric: bool = False
    fairness: FairnessReport | None = None
    simple_curves: tuple[CurveDeviation, ...] = ()
    warnings: tuple[str, ...] = ()
    nearest: NearestReport | None = None

    @property
    def fairness_cost(self) -> float:
        """(value - optimum) / optimum: what fairness cost (0 where it cost nothing)."""
        if not (np.isfinite(self.optimum) and self.optimum > 0):
            return 0.0
        return max(self.value - self.optimum, 0.0) / self.optimum
