"""Result tables as CSV and JSON. Units are in every column name and JSON key; JSON has no NaN.

`to_jsonable` is the one helper that turns result dataclasses, numpy arrays and enums into JSON
data.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import math
from enum import Enum
from typing import Any

import numpy as np

from formfind import __version__
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import Response, summarise

SIGN_CONVENTION = (
    "x right from the left springing, y up (m). N tension positive (arch compression is negative). "
    "V = resultant of the forces left of the cut on the station normal (-sin t, cos t). "
    "M positive when the intrados is in tension. Reactions: forces of the supports on the arch, "
    "x right, y up, moment anticlockwise. Thrust H = horizontal reaction at the left springing "
    "(or the tie force)."
)
CAUTION = (
    "Results are an aid to a qualified engineer, not a substitute for one. Local codes and licensed "
    "practice govern; load factors in example cases are examples, not code values."
)


def to_jsonable(obj: Any) -> Any:
    """Plain JSON data from dataclasses, numpy arrays and scalars, enums, tuples and dicts.

    Raises:
        ValueError: on a non-finite float (JSON output never holds NaN or infinity).
    """
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, Enum):
        return obj.value
    if isinstance(obj, np.ndarray):
        return to_jsonable(obj.tolist())
    if isinstance(obj, np.generic):
        return to_jsonable(obj.item())
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, float):
        if not math.isfinite(obj):
            raise ValueError("a non-finite number cannot be written to JSON")
        return obj
    return obj


def dumps(data: Any) -> str:
    """Deterministic JSON text (two-space indent, trailing newline)."""
    return json.dumps(to_jsonable(data), indent=2, allow_nan=False) + "\n"


def _response_json(r: Response) -> dict[str, Any]:
    return {
        "engine": r.engine,
        "states": list(r.names),
        "groups": list(r.groups),
        "N_kN": r.N,
        "V_kN": r.V,
        "M_kNm": r.M,
        "N_left_kN": r.N_left,
        "V_left_kN": r.V_left,
        "thrust_kN": r.thrust,
        "reactions_left_kN_kN_kNm": r.reactions[:, 0, :],
        "reactions_right_kN_kN_kNm": r.reactions[:, 1, :],
        "tie_force_kN": r.tie_force,
    }


def analysis_json(analysis: CaseAnalysis) -> str:
    """The whole analysis as JSON text: axis, section, both responses, units, signs, caution."""
    axis = analysis.axis
    sec = analysis.section
    return dumps(
        {
            "formfind_version": __version__,
            "case": analysis.case.name,
            "source": analysis.case.source,
            "caution": CAUTION,
            "sign_convention": SIGN_CONVENTION,
            "axis": {
                "x_m": axis.x,
                "y_m": axis.y,
                "theta_rad": axis.theta,
                "arc_length_m": axis.arc_length,
            },
            "section": {
                "area_m2": sec.area_m2,
                "second_moment_m4": sec.second_moment_m4,
                "depth_m": sec.depth_m,
            },
            "cases": _response_json(analysis.cases),
            "combinations": _response_json(analysis.combinations),
        }
    )


def _csv(header: list[str], rows: list[list[Any]]) -> str:
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow([_fmt(v) for v in row])
    return buf.getvalue()


def _fmt(v: Any) -> Any:
    if isinstance(v, float | np.floating):
        return repr(float(v))
    return v


def forces_csv(analysis: CaseAnalysis) -> str:
    """Long table: one row per set, state and station, with N, V, M on both sides."""
    axis = analysis.axis
    rows: list[list[Any]] = []
    for label, r in (("case", analysis.cases), ("combination", analysis.combinations)):
        for k in range(r.count):
            for i in range(axis.count):
                rows.append([label, r.groups[k], r.names[k], i, axis.x[i], axis.y[i],
                             r.N[k, i], r.V[k, i], r.M[k, i], r.N_left[k, i], r.V_left[k, i]])
    return _csv(["set", "group", "state", "station", "x_m", "y_m", "N_kN", "V_kN", "M_kNm",
                 "N_left_kN", "V_left_kN"], rows)


def reactions_csv(analysis: CaseAnalysis) -> str:
    """One row per state: thrust and the reactions at both springings."""
    rows: list[list[Any]] = []
    for label, r in (("case", analysis.cases), ("combination", analysis.combinations)):
        for k in range(r.count):
            left, right = r.reactions[k]
            rows.append([label, r.groups[k], r.names[k], r.thrust[k], *left, *right, r.tie_force[k]])
    return _csv(["set", "group", "state", "thrust_kN", "left_Rx_kN", "left_Ry_kN", "left_M_kNm",
                 "right_Rx_kN", "right_Ry_kN", "right_M_kNm", "tie_force_kN"], rows)


def summary_csv(analysis: CaseAnalysis) -> str:
    """One row per load case and combination: thrust and the extremes of M, N, V with where."""
    rows: list[list[Any]] = []
    for label, r in (("case", analysis.cases), ("combination", analysis.combinations)):
        for s in summarise(r):
            rows.append([label, s.group, s.states, s.thrust_kN,
                         s.M.value, s.M.x_m, s.M.state, s.N.value, s.N.x_m, s.N.state,
                         s.V.value, s.V.x_m, s.V.state])
    return _csv(["set", "group", "states", "thrust_kN", "peak_M_kNm", "peak_M_x_m", "peak_M_state",
                 "peak_N_kN", "peak_N_x_m", "peak_N_state", "peak_V_kN", "peak_V_x_m", "peak_V_state"], rows)
