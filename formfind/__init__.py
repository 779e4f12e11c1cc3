"""formfind: find and check arch axes.

A few calls do the whole job from a script or notebook::

    import formfind
    case = formfind.load_case("cases/footbridge.toml")
    result = formfind.analyse(case)          # the given axis under every case and combination
    result.combinations.M                    # bending moments (states, stations), kNm
    shape = formfind.find_shape(case)        # the axis of least bending, with its certificate
    verdicts = formfind.check(case, formfind.analyse(case, axis=shape.axis))
    rows = list(formfind.run_study(case, formfind.grid((30.0, 36.0), (0.15, 0.2, 0.25))))

Results are an aid to a qualified engineer; local codes and licensed practice govern.
"""

from __future__ import annotations

__version__ = "0.1.0"

from formfind.analysis.engine import CaseAnalysis, analyse
from formfind.analysis.response import Response, summarise
from formfind.design.check import CheckResult, check
from formfind.design.shape import ShapeResult, find_shape
from formfind.design.study import StudyRow, grid, run_study
from formfind.errors import AnalysisError, CaseError, FormfindError, OutputError
from formfind.model.case import Case, load_case, parse_case
from formfind.model.geometry import Axis

__all__ = [
    "AnalysisError",
    "Axis",
    "Case",
    "CaseAnalysis",
    "CaseError",
    "CheckResult",
    "FormfindError",
    "OutputError",
    "Response",
    "ShapeResult",
    "StudyRow",
    "__version__",
    "analyse",
    "check",
    "find_shape",
    "grid",
    "load_case",
    "parse_case",
    "run_study",
    "summarise",
]
