"""Analyse a case's axis under all its load cases and combinations with the right engine.

The three-hinged arch goes to the exact statics engine; two-hinged, fixed and tied arches to the
frame engine. Both return `Response` objects with the same signs and shapes. The frame model (with
the crown hinge as a release for three-hinged arches) also gives the buckling factor of every
combination.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace

import numpy as np

from formfind.analysis import statics
from formfind.analysis.accuracy import Accuracy, accuracy_of
from formfind.analysis.buckling import BucklingResult, buckle
from formfind.analysis.dynamics import Modes, natural_modes, permanent_mass
from formfind.analysis.frame import FrameModel, build_frame, solve
from formfind.analysis.response import Response
from formfind.enums import ActionKind, SupportKind
from formfind.errors import AnalysisError
from formfind.model.case import Case
from formfind.model.geometry import Axis
from formfind.model.loads import LoadSet, SelfWeight, StationLoads, build_load_set
from formfind.model.section import SectionAlong

log = logging.getLogger(__name__)


@dataclass(frozen=True, eq=False)
class CaseAnalysis:
    """The analysed case: its axis, section, station loads, responses and buckling results.

    ``cases`` holds one state per load case (one per position for a moving train); ``combinations``
    one per combination (likewise expanded). ``buckling`` has one entry per combination (per load
    case where the case has no combination), for its state of largest thrust (the most compressed
    position of a moving train), or is empty when buckling is switched off. ``accuracy`` is the
    estimated relative error of the forces (`formfind.analysis.accuracy`).
    """

    case: Case
    axis: Axis
    section: SectionAlong
    loads: LoadSet
    cases: Response
    combinations: Response
    buckling: tuple[BucklingResult, ...]
    frame: FrameModel | None
    modes: Modes | None = None
    accuracy: Accuracy | None = None

    def state(self, name: str) -> Response:
        """The response of one load state by name (a state, or a case or combination of one state)."""
        from formfind.analysis.query import find_state

        response, _, k = find_state(self, name)
        return response.select([k])

    def group(self, name: str) -> Response:
        """Every state of a case or combination by name (several for a moving train)."""
        from formfind.analysis.query import group_response

        return group_response(self, name)

    def at(self, name: str, x_m: float):
        """`SectionForces` of state ``name`` at abscissa ``x_m`` (m), between stations too
        (`formfind.analysis.query`)."""
        from formfind.analysis.query import forces_at

        return forces_at(self, name, x_m)

    def reactions_of(self, name: str):
        """The springings' `Reactions` of state ``name``, in words: thrust (inwards), up, moment."""
        from formfind.analysis.query import reactions_of

        return reactions_of(self, name)

    def envelope_of(self, name: str):
        """The `Envelope` of a case or combination over its states: ``M_max_kNm``, ``N_min_kN``, ..."""
        from formfind.analysis.query import group_envelope

        return group_envelope(self, name)


def frame_model(case: Case, axis: Axis, section: SectionAlong, estimate_condition: bool = True) -> FrameModel:
    """The frame model of ``axis`` with the case's supports (and crown hinge, if three-hinged);
    ``estimate_condition`` as in `build_frame`."""
    kind = case.supports.kind
    hinge = case.hinge_station(axis) if kind is SupportKind.THREE_HINGED else None
    if kind is SupportKind.TIED and case.tie_EA_kN is None:
        raise AnalysisError("a tied arch needs [supports] tie_area_m2 and tie_modulus_MPa")
    return build_frame(axis, section, kind, hinge, case.tie_EA_kN, case.analysis.shear_deformation,
                       estimate_condition, case.analysis.axially_rigid)


def respond(
    case: Case, axis: Axis, loads: StationLoads, model: FrameModel | None, displacements: bool = False
) -> Response:
    """The response of ``axis`` to ``loads``: exact statics if three-hinged, else the frame model.

    ``displacements`` asks the frame model for nodal displacements (a full solve); the exact
    statics engine never gives them.
    """
    if case.supports.kind is SupportKind.THREE_HINGED:
        return statics.three_hinged(axis, loads, case.hinge_station(axis))
    if model is None:
        raise AnalysisError(f"support kind {case.supports.kind.value!r} needs a frame model")
    return solve(model, loads, displacements=displacements)


def combination_buckling(case: Case, model: FrameModel, loads: StationLoads, response: Response) -> tuple[BucklingResult, ...]:
    """Buckling of each group of ``loads`` (the combinations, or the load cases of a case without
    combinations), for its state of largest thrust."""
    out = []
    for group in dict.fromkeys(loads.groups):
        states = [i for i, g in enumerate(loads.groups) if g == group]
        state = states[int(np.argmax(response.thrust[states]))]
        out.append(
            buckle(model, loads, state, modes=case.analysis.buckling_modes,
                   follow_axis=case.analysis.pressure_follows_axis)
        )
    return tuple(out)


BUCKLING_STATIONS = 241  # buckling of finer models runs on a subset of this many stations (see below)


def _buckling_model(case: Case, axis: Axis, section: SectionAlong, model: FrameModel, loads: LoadSet):
    """The frame model and combination loads the buckling analysis runs on.

    A linear buckling factor converges with the square of the element length, and 240 elements
    put it within about 1e-5 of the limit for the arches formfind meets; finer models (and the
    eigen-solver's cost with them) buy nothing. So above ``BUCKLING_STATIONS`` stations the buckling
    model keeps an evenly spread subset of the stations, every required one (hinge, ends of loads)
    among them, with the same load states; mode shapes are interpolated back to every station.
    """
    if axis.count <= BUCKLING_STATIONS:
        return model, loads.combinations if case.combinations else loads.cases, None
    keep = set(np.round(np.linspace(0, axis.count - 1, BUCKLING_STATIONS)).astype(int).tolist())
    for xr in case.required_stations():
        keep.add(int(np.argmin(np.abs(axis.x - xr))))
    if case.supports.kind is SupportKind.THREE_HINGED:
        keep.add(case.hinge_station(axis))
    idx = np.array(sorted(keep))
    coarse = Axis(axis.x[idx], axis.y[idx], axis.theta[idx])
    coarse_section = case.section.at(coarse)
    coarse_set = build_load_set(case.cases, case.combinations, coarse, coarse_section)
    coarse_loads = coarse_set.combinations if case.combinations else coarse_set.cases
    return frame_model(case, coarse, coarse_section), coarse_loads, coarse


def _to_stations(result: BucklingResult, coarse: Axis | None, axis: Axis) -> BucklingResult:
    """Mode shapes of a coarse buckling model interpolated to every station of ``axis``."""
    if coarse is None or not result.modes.size:
        return result
    modes = np.stack([np.stack([np.interp(axis.x, coarse.x, m[:, c]) for c in range(3)], axis=-1)
                      for m in result.modes])
    return replace(result, modes=modes)


def analyse(
    case: Case, axis: Axis | None = None, buckling: bool | None = None, displacements: bool = False
) -> CaseAnalysis:
    """Analyse ``axis`` (default: the case's given axis) under every case and combination.

    ``buckling`` overrides the case's ``[analysis] buckling`` setting; ``displacements`` asks the frame
    model for nodal displacements (two-hinged, fixed and tied arches).

    Raises:
        AnalysisError: if the structure is a mechanism or a verification fails.
        ArgumentError: if an argument is not of the kind stated.
    """
    from formfind import arguments

    arguments.case(case, "analyse")
    arguments.axis(axis, "analyse")
    arguments.flag(buckling, "analyse", "buckling", optional=True)
    arguments.flag(displacements, "analyse", "displacements")
    axis = axis if axis is not None else case.axis()
    section = case.section.at(axis)
    loads = build_load_set(case.cases, case.combinations, axis, section)
    want_buckling = case.analysis.buckling if buckling is None else buckling
    statically_indeterminate = case.supports.kind is not SupportKind.THREE_HINGED
    needs_frame = statically_indeterminate or want_buckling
    # a three-hinged arch's frame serves only the eigen-analyses (its forces come from exact statics):
    # no condition estimate is reported for it, so none is made
    model = frame_model(case, axis, section, estimate_condition=statically_indeterminate) if needs_frame else None
    combos = respond(case, axis, loads.combinations, model, displacements)
    by_case = respond(case, axis, loads.cases, model, displacements)
    buckling: tuple[BucklingResult, ...] = ()
    if want_buckling and model:
        # each combination; a case without combinations: each load case
        b_model, b_loads, coarse = _buckling_model(case, axis, section, model, loads)
        reference = combos if case.combinations else by_case
        buckling = tuple(_to_stations(b, coarse, axis) for b in combination_buckling(case, b_model, b_loads, reference))
        for b in buckling:
            if b.critical_factor < 1.0:
                log.warning("%s buckles at %.3g times its loads: the arch cannot carry this combination (its "
                            "results do not hold)", b.group, b.critical_factor)
    analysis = CaseAnalysis(
        case=case,
        axis=axis,
        section=section,
        loads=loads,
        cases=by_case,
        combinations=combos,
        buckling=buckling,
        frame=model,
        accuracy=accuracy_of(model if case.supports.kind is not SupportKind.THREE_HINGED else None),
    )
    if case.analysis.natural_modes > 0 and want_buckling:
        try:
            analysis = replace(analysis, modes=case_modes(case, analysis, case.analysis.natural_modes))
        except AnalysisError as exc:  # no mass: say so, keep the analysis
            log.warning("%s", exc)
    return analysis


def case_modes(case: Case, analysis: CaseAnalysis, count: int) -> Modes:
    """Natural modes of an analysed case: mass from its permanent cases (and the rib where no permanent
    case holds its weight), on the analysis's frame model (built if the engine was statics)."""
    model = analysis.frame if analysis.frame is not None else frame_model(case, analysis.axis, analysis.section)
    permanent = [c.name for c in case.cases if c.action is ActionKind.PERMANENT]
    loads = analysis.loads.cases
    states = [k for k, g in enumerate(loads.groups) if g in permanent]
    own_weight = any(isinstance(ld, SelfWeight) for c in case.cases if c.name in permanent for ld in c.loads)
    rib = None
    if not own_weight:
        area = 0.5 * (analysis.section.area_m2[:-1] + analysis.section.area_m2[1:])
        rib = case.section.unit_weight_kN_m3 * area
    mass, lumped = permanent_mass(model, loads.select(states), rib)
    return natural_modes(model, mass, lumped, count)
