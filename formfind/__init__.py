"""formfind: find and check arch axes.

A few calls do the whole job from a script or notebook::

    import formfind
    case = formfind.load_case("cases/footbridge.toml")
    result = formfind.analyse(case)          # the given axis under every case and combination
    result.combinations.M                    # bending moments (states, stations), kNm

Results are an aid to a qualified engineer; local codes and licensed practice govern.
"""

from __future__ import annotations

__version__ = "0.1.0"

from formfind.analysis.engine import CaseAnalysis, analyse
from formfind.analysis.response import Response, summarise
from formfind.errors import AnalysisError, CaseError, FormfindError, OutputError
from formfind.model.case import Case, load_case, parse_case
from formfind.model.geometry import Axis

__all__ = [
    "AnalysisError",
    "Axis",
    "Case",
    "CaseAnalysis",
    "CaseError",
    "FormfindError",
    "OutputError",
    "Response",
    "__version__",
    "analyse",
    "load_case",
    "parse_case",
    "summarise",
]
