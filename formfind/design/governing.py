"""The governing load states of form finding: which they are, their response on an axis, and the
objective's exact value there.

Form finding minimises a measure of the bending of the governing states (`[find] governing`, else
every combination, else every load case). Their loads are rebuilt on every axis tried, so loads that
follow the shape (self-weight per arc length, fill, normal pressure, loads per vertical projection)
are always those of that axis; `density_rates` gives how they move with the ordinates.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from formfind.analysis.engine import frame_model, respond
from formfind.analysis.frame import FrameModel
from formfind.analysis.response import Response
from formfind.analysis.sensitivity import MomentModel, statics_model
from formfind.enums import LimitState, Objective, SupportKind
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis
from formfind.model.loads import (
    PointLoad,
    StationLoads,
    build_load_set,
    combine_density_rates,
    density_derivative,
    moves_with_shape,
)
from formfind.model.section import Section


def governing_groups(case: Case) -> tuple[str, ...]:
    """Names of the combinations or cases that govern form finding: as the case names them, else every
    ultimate and accidental combination (the serviceability ones check deflection, they do not shape),
    else every load case."""
    if case.find.governing:
        return case.find.governing
    strength = tuple(c.name for c in case.combinations if c.limit_state is not LimitState.SERVICEABILITY)
    if strength:
        return strength
    if case.combinations:
        return tuple(c.name for c in case.combinations)
    return tuple(c.name for c in case.cases)


def governing_loads(case: Case, axis: Axis, section: Section) -> StationLoads:
    """Station loads of the governing states on ``axis`` (only the cases they hold are built)."""
    wanted = set(governing_groups(case))
    used = _used_cases(case)
    load_set = build_load_set(tuple(c for c in case.cases if c.name in used),
                              tuple(c for c in case.combinations if c.name in wanted), axis, section.at(axis))
    parts = []
    for loads in (load_set.combinations, load_set.cases):
        idx = [i for i, g in enumerate(loads.groups) if g in wanted]
        if idx:
            parts.append(loads.select(idx))
    return StationLoads.concatenate(parts, axis.count - 1)


def _used_cases(case: Case) -> set[str]:
    wanted = set(governing_groups(case))
    used = set()
    for combo in case.combinations:
        if combo.name in wanted:
            used.update(name for name, _ in combo.factors)
    used.update(c.name for c in case.cases if c.name in wanted)
    return used


def loads_move(case: Case) -> bool:
    """True if a governing load's densities change with the shape (`moves_with_shape`), or a load is spread
    through the fill (its width follows the depth of fill over the extrados; the sequential method's
    linear model holds it as it is, and every exact analysis builds it afresh)."""
    used = _used_cases(case)
    return any(moves_with_shape(ld) or getattr(ld, "spread", None) is not None
               for lc in case.cases if lc.name in used for ld in lc.loads)


def kink_stations(case: Case, x: np.ndarray) -> tuple[int, ...]:
    """Interior stations where a fixed point load of a governing case acts: a found axis may kink there
    (the funicular polygon turns at a point load), so its tangents are fitted on either side."""
    used = _used_cases(case)
    span = float(x[-1] - x[0])
    points = [ld.x_m for lc in case.cases if lc.name in used for ld in lc.loads
              if isinstance(ld, PointLoad) and ld.spread is None]  # a spread load reaches the ring without a kink
    out = set()
    for px in points:
        i = int(np.argmin(np.abs(x - px)))
        if 0 < i < x.size - 1 and abs(x[i] - px) <= 1e-9 * span:
            out.add(i)
    return tuple(sorted(out))


def mirror_symmetric(case: Case, axis: Axis, loads: StationLoads) -> bool:
    """True if the problem is its own mirror image about midspan: level springings, stations placed
    symmetrically, a crown hinge (if any) at midspan, no imposed support movement, and for every
    governing state another (or itself) whose loads are its mirror image. Form finding then keeps the
    axis symmetric unless the case says otherwise (``[find] symmetric``)."""
    x, span = axis.x, axis.span_m
    tol = 1e-9 * span
    if abs(axis.y[0] - axis.y[-1]) > tol or not np.allclose(x + x[::-1], x[0] + x[-1], atol=tol):
        return False
    hinge = case.supports.hinge_at(span)
    if hinge is not None and abs(hinge - 0.5 * span) > tol:
        return False
    if np.any(loads.support_movement):
        return False
    scale = max(float(np.abs(loads.dist).max(initial=0.0)), float(np.abs(loads.point_force).max(initial=0.0)), 1e-300)
    close = 1e-9 * scale

    def points(k: int, mirrored: bool) -> np.ndarray:
        """The state's point loads as rows (x / span, Fx, Fy), sorted; mirrored about midspan."""
        chosen = loads.point_state == k
        px, pf = loads.point_x[chosen], loads.point_force[chosen]
        if mirrored:
            px, pf = (x[0] + x[-1]) - px, pf * np.array([-1.0, 1.0])
        rows = np.column_stack([np.round(px / tol) * tol / span, pf])
        return rows[np.lexsort(rows.T[::-1])] if rows.size else rows.reshape(0, 3)

    # mirrored distributed loads: the elements reversed, their ends swapped, x components turned round
    mirrored = loads.dist[:, ::-1, ::-1, :] * np.array([-1.0, 1.0])
    temperatures = np.column_stack([loads.temperature_uniform_C, loads.temperature_difference_C])
    for k in range(loads.count):
        twins = np.flatnonzero(
            (np.abs(loads.dist - mirrored[k]).reshape(loads.count, -1).max(axis=1, initial=0.0) <= close)
            & (np.abs(temperatures - temperatures[k]).max(axis=1) <= 1e-9)
        )
        mine = points(k, True)
        if not any(points(j, False).shape == mine.shape and np.allclose(points(j, False), mine, rtol=0.0,
                                                                         atol=max(close, 1e-12)) for j in twins):
            return False
    return True


def has_horizontal(loads: StationLoads) -> bool:
    """True if a state has a horizontal load component (its moments then depend on load heights)."""
    return bool(np.any(loads.dist[:, :, :, 0]) or np.any(loads.point_force[:, 0]))


def state_case_factors(case: Case, loads: StationLoads) -> np.ndarray:
    """(states, cases): the factor of each load case in each governing state."""
    names = [c.name for c in case.cases]
    combos = {c.name: dict(c.factors) for c in case.combinations}
    factors = np.zeros((loads.count, len(names)))
    for k, group in enumerate(loads.groups):
        for c, name in enumerate(names):
            factors[k, c] = combos[group].get(name, 0.0) if group in combos else float(group == name)
    return factors


def density_rates(case: Case, axis: Axis, section: Section, loads: StationLoads):
    """How the governing states' element densities move with the ordinates: sparse
    (K x elements x 4, stations), or None if no governing load moves with the shape."""
    if not loads_move(case):
        return None
    along = section.at(axis)
    used = _used_cases(case)
    per_case = [density_derivative(lc, axis, along) if lc.name in used else None for lc in case.cases]
    return combine_density_rates(per_case, state_case_factors(case, loads))


def analyse_governing(case: Case, axis: Axis, section: Section) -> tuple[Response, StationLoads, FrameModel | None]:
    """The governing states' loads on ``axis`` and their response (exact statics for a three-hinged
    arch, else the frame model, which is returned too)."""
    loads = governing_loads(case, axis, section)
    model = None if case.supports.kind is SupportKind.THREE_HINGED else frame_model(
        replace(case, section=section), axis, section.at(axis), estimate_condition=False)
    return respond(case, axis, loads, model), loads, model


def horizontal_resultant(response: Response, axis: Axis) -> np.ndarray:
    """Horizontal component (kN) of the resultant left of each station (just right of it)."""
    cos, sin = np.cos(axis.theta), np.sin(axis.theta)
    return -response.N * cos - response.V * sin


def tributary(axis: Axis) -> np.ndarray:
    """Length of axis (m) each station stands for: half of each chord it touches."""
    lengths = axis.chord_lengths
    w = np.zeros(axis.count)
    w[:-1] += 0.5 * lengths
    w[1:] += 0.5 * lengths
    return w


def objective_weights(objective: Objective, h: np.ndarray, response: Response, kern_fraction: float) -> np.ndarray:
    """The epigraph weights c (K, n) of `formfind.design.program`: 1, H, or half the kern times |N|."""
    if objective is Objective.OFFSET:
        if np.any(h <= 0):
            raise FormFindingError("the offset objective needs every governing state in compression (H > 0)")
        return h
    if objective is Objective.MIN_DEPTH:
        return 0.5 * kern_fraction * np.abs(response.N)
    return np.ones_like(h)


def exact_value(objective: Objective, response: Response, axis: Axis, kern_fraction: float) -> float:
    """The objective of ``response`` on ``axis`` in its reported unit (kNm or m)."""
    M = response.M
    if objective is Objective.MINIMAX:
        return float(np.abs(M).max())
    if objective is Objective.RMS:
        w = tributary(axis)
        return float(np.sqrt(np.sum(w * M**2) / (np.sum(w) * M.shape[0])))
    if objective is Objective.OFFSET:
        return float(np.max(np.abs(M) / horizontal_resultant(response, axis)))
    return float(np.max(np.abs(M) / (0.5 * kern_fraction * np.abs(response.N))))


def reported(objective: Objective, value: float, states: int, axis: Axis) -> float:
    """A program's objective in its reported unit (rms: the root mean square moment, kNm)."""
    if objective is Objective.RMS:
        total = float(np.sum(tributary(axis))) * states
        return float(np.sqrt(max(value, 0.0) / total))
    return value


def frozen_model(axis: Axis, loads: StationLoads, response: Response, hinge: int) -> MomentModel:
    """The moments of a three-hinged arch with its hinge held and its loads frozen on ``axis``: exactly
    affine in y (diagonal under vertical loads)."""
    if has_horizontal(loads):
        return statics_model(axis, loads, response, hinge)
    return MomentModel.diagonal(axis.x, axis.y, response.M, horizontal_resultant(response, axis))
