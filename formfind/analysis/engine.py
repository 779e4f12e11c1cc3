"""Analyse a case's axis under all its load cases and combinations with the right engine.

The three-hinged arch goes to the exact statics engine; two-hinged, fixed and tied arches to the
frame engine. Both return `Response` objects with the same signs and shapes.
"""

from __future__ import annotations

from dataclasses import dataclass

from formfind.analysis import statics
from formfind.analysis.response import Response
from formfind.enums import SupportKind
from formfind.errors import AnalysisError
from formfind.model.case import Case
from formfind.model.geometry import Axis
from formfind.model.loads import LoadSet, StationLoads, build_load_set
from formfind.model.section import SectionAlong


@dataclass(frozen=True, eq=False)
class CaseAnalysis:
    """The analysed case: its axis, section, station loads and responses.

    ``cases`` holds one state per load case (one per position for a moving train); ``combinations``
    one per combination (likewise expanded).
    """

    case: Case
    axis: Axis
    section: SectionAlong
    loads: LoadSet
    cases: Response
    combinations: Response


def respond(case: Case, axis: Axis, section: SectionAlong, loads: StationLoads) -> Response:
    """The response of ``axis`` to ``loads`` under the case's supports."""
    kind = case.supports.kind
    if kind is SupportKind.THREE_HINGED:
        return statics.three_hinged(axis, loads, case.hinge_station(axis))
    raise AnalysisError(
        f"support kind {kind.value!r} needs the frame engine, which this version does not include yet"
    )


def analyse(case: Case, axis: Axis | None = None) -> CaseAnalysis:
    """Analyse ``axis`` (default: the case's given axis) under every case and combination.

    Raises:
        AnalysisError: if the structure is a mechanism or a verification fails.
    """
    axis = axis if axis is not None else case.axis()
    section = case.section.at(axis)
    loads = build_load_set(case.cases, case.combinations, axis, section)
    return CaseAnalysis(
        case=case,
        axis=axis,
        section=section,
        loads=loads,
        cases=respond(case, axis, section, loads.cases),
        combinations=respond(case, axis, section, loads.combinations),
    )
