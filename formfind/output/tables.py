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
from pathlib import Path
from typing import Any

import numpy as np

from formfind import __version__
from formfind.analysis.deflection import Deflections
from formfind.analysis.dynamics import Modes
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import EFFECTS, Response, envelopes, summarise
from formfind.design.check import CheckResult
from formfind.design.shape import ShapeResult
from formfind.model.arcs import Arc
from formfind.model.geometry import Axis
from formfind.model.section import SectionAlong
from formfind.output import numbers

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
        if obj.dtype.kind in "fiub":
            if obj.dtype.kind == "f" and not np.all(np.isfinite(obj)):
                raise ValueError("a non-finite number cannot be written to JSON")
            return obj.tolist()
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


def dumps(data: Any, indent: int | None = None) -> str:
    """Deterministic JSON text with a trailing newline (compact unless ``indent`` is given)."""
    return json.dumps(to_jsonable(data), indent=indent, allow_nan=False) + "\n"


def _response_json(r: Response) -> dict[str, Any]:
    """Per group: the envelope of N, V, M along the axis; per state: thrust and reactions."""
    groups = []
    for env in envelopes(r):
        entry: dict[str, Any] = {"name": env.group, "states": list(env.states)}
        for e, effect in enumerate(EFFECTS):
            unit = "kNm" if effect == "M" else "kN"
            entry[f"{effect}_max_{unit}"] = env.maximum[e]
            entry[f"{effect}_min_{unit}"] = env.minimum[e]
            if len(env.states) > 1:
                entry[f"{effect}_max_state"] = env.max_state[e]
                entry[f"{effect}_min_state"] = env.min_state[e]
        groups.append(entry)
    return {
        "engine": r.engine,
        "groups": groups,
        "states": list(r.names),
        "state_groups": list(r.groups),
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
            "source": Path(analysis.case.source).name if analysis.case.source else "",
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
            "natural_modes": None if analysis.modes is None else [
                {"mode": j + 1, "frequency_hz": float(f), "period_s": float(1 / f) if f > 0 else None,
                 "symmetry": s, "direction": d, "modal_mass_t": float(m), "shape_ux_uy_rotation": shape}
                for j, (f, s, d, m, shape) in enumerate(zip(analysis.modes.frequency_hz, analysis.modes.symmetry,
                                                            analysis.modes.direction, analysis.modes.modal_mass_t,
                                                            analysis.modes.shapes, strict=True))
            ],
            "buckling": [
                {
                    "group": b.group,
                    "state": b.state,
                    "factors": [float(f) for f in b.factors],
                    "symmetry": list(b.symmetry),
                    "loads_follow_axis": b.follow_axis,
                }
                for b in analysis.buckling
            ],
        }
    )


def _csv(header: list[str], rows: list[list[Any]]) -> str:
    """CSV of mixed rows: floats to six significant figures (`numbers.significant`), text as is."""
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow([_fmt(v) for v in row])
    return buf.getvalue()


def _fmt(v: Any) -> Any:
    if isinstance(v, bool | np.bool_):
        return str(bool(v)).lower()
    if isinstance(v, float | np.floating):
        return numbers.significant(float(v))
    return v


def _rows_csv(header: list[str], text_cols: list[list[Any]], values: np.ndarray, kinds: list[str]) -> str:
    """CSV from leading text/integer columns and a float block (rows, columns), each float column
    formatted by its kind (`numbers.column`: "length", "angle" or "significant")."""
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow(header)
    formatted = [numbers.column(values[:, j], kinds[j]) for j in range(values.shape[1])]
    texts = [list(map(str, col)) for col in text_cols]
    if texts or formatted:
        buf.write("\n".join(map(",".join, zip(*texts, *formatted, strict=True))))
        buf.write("\n")
    return buf.getvalue()


FORCE_KINDS = ["length", "length"] + ["significant"] * 6


def forces_csv(analysis: CaseAnalysis) -> str:
    """Per case and combination, at every station: max and min of N, V, M and the governing state.

    A group with one state has max = min = its value (N and V: the larger and smaller of the two
    sides of the station). A moving train's group envelopes all its positions.
    """
    axis = analysis.axis
    n = axis.count
    text_cols: list[list[Any]] = [[], [], [], [], []]
    blocks = []
    for label, r in (("case", analysis.cases), ("combination", analysis.combinations)):
        for env in envelopes(r):
            m_max = [env.states[k] for k in env.max_state[2]]
            m_min = [env.states[k] for k in env.min_state[2]]
            for col, values in zip(text_cols, ([label] * n, [env.group] * n, list(range(n)), m_max, m_min), strict=True):
                col.extend(values)
            blocks.append(np.column_stack([axis.x, axis.y, env.maximum[0], env.minimum[0], env.maximum[1],
                                           env.minimum[1], env.maximum[2], env.minimum[2]]))
    values = np.vstack(blocks) if blocks else np.zeros((0, 8))
    header = ["set", "group", "station", "M_max_state", "M_min_state", "x_m", "y_m", "N_max_kN", "N_min_kN",
              "V_max_kN", "V_min_kN", "M_max_kNm", "M_min_kNm"]
    return _rows_csv(header, text_cols, values, FORCE_KINDS)


def states_csv(analysis: CaseAnalysis) -> str:
    """Long table of every state (each train position): N, V, M on both sides at every station."""
    axis = analysis.axis
    n = axis.count
    text_cols: list[list[Any]] = [[], [], [], []]
    blocks = []
    for label, r in (("case", analysis.cases), ("combination", analysis.combinations)):
        for k in range(r.count):
            for col, values in zip(text_cols, ([label] * n, [r.groups[k]] * n, [r.names[k]] * n, list(range(n))), strict=True):
                col.extend(values)
            blocks.append(np.column_stack([axis.x, axis.y, r.N[k], r.V[k], r.M[k], r.N_left[k], r.V_left[k]]))
    values = np.vstack(blocks) if blocks else np.zeros((0, 7))
    header = ["set", "group", "state", "station", "x_m", "y_m", "N_kN", "V_kN", "M_kNm", "N_left_kN", "V_left_kN"]
    return _rows_csv(header, text_cols, values, FORCE_KINDS[:7])


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


def buckling_csv(analysis: CaseAnalysis) -> str:
    """One row per combination: the state buckled and its first load factors with mode symmetry."""
    modes = max((b.factors.size for b in analysis.buckling), default=0)
    header = ["combination", "state", "loads_follow_axis"]
    for m in range(modes):
        header += [f"factor_{m + 1}", f"mode_{m + 1}"]
    rows: list[list[Any]] = []
    for b in analysis.buckling:
        row: list[Any] = [b.group, b.state, b.follow_axis]
        for m in range(modes):
            row += [float(b.factors[m]), b.symmetry[m]] if m < b.factors.size else ["", ""]
        rows.append(row)
    return _csv(header, rows)


SETTING_OUT_KINDS = ["length", "length", "angle", "length", "length", "length", "length", "length", "length"]


def axis_csv(axis: Axis, section: SectionAlong) -> str:
    """The axis at its stations: x, y, tangent angle, arc length, and intrados and extrados points."""
    intra = axis.intrados(section.depth_m)
    extra = axis.extrados(section.depth_m)
    values = np.column_stack([axis.x, axis.y, np.degrees(axis.theta), axis.arc_length, section.depth_m,
                              intra[:, 0], intra[:, 1], extra[:, 0], extra[:, 1]])
    header = ["station", "x_m", "y_m", "theta_deg", "arc_length_m", "depth_m", "intrados_x_m", "intrados_y_m",
              "extrados_x_m", "extrados_y_m"]
    return _rows_csv(header, [list(range(axis.count))], values, SETTING_OUT_KINDS)


def shape_json(result: ShapeResult, case_name: str) -> str:
    """The form-finding result: objective, certificate, governing points, active constraints, history.

    The solve time is left out (it is in `ShapeResult` and the printed summary) so that the same case
    always gives the same bytes."""
    return dumps(
        {
            "formfind_version": __version__,
            "case": case_name,
            "caution": CAUTION,
            "objective": result.objective.value,
            "unit": result.unit,
            "value": result.value,
            "optimum": result.optimum,
            "fairness_cost": result.fairness_cost,
            "checked_value": result.checked_value,
            "dual_bound": result.dual_bound,
            "relative_gap": result.gap,
            "dual_stationarity_residual": result.stationarity,
            "method": result.method,
            "solver": result.solver,
            "status": result.status,
            "rib_depth_m": result.section.depth_m,
            "governing_states": list(result.states),
            "governing_points": [
                {"state": g.state, "station": g.station, "x_m": g.x_m, "multiplier": g.multiplier}
                for g in result.governing
            ],
            "active_constraints": [
                {"name": a.name, "stations": list(a.stations), "cost": None if not np.isfinite(a.cost) else a.cost,
                 "cost_unit": a.unit}
                for a in result.active
            ],
            "symmetric": result.symmetric,
            "fairness": None if result.fairness is None else {
                "mean_turn_deg": result.fairness.mean_turn_deg,
                "largest_turn_deg": result.fairness.largest_turn_deg,
                "largest_turn_at_x_m": result.fairness.largest_at_x_m,
                "largest_over_mean": result.fairness.ratio,
                "kinks": [{"station": k.station, "x_m": k.x_m, "turn_deg": k.turn_deg, "over_mean": k.ratio}
                          for k in result.fairness.kinks],
                "flat_runs_x_m": [list(r) for r in result.fairness.flat_runs],
                "reversals_x_m": list(result.fairness.reversals),
            },
            "simple_curves": [{"curve": c.name, "largest_deviation_mm": 1000.0 * c.deviation_m, "at_x_m": c.at_x_m}
                              for c in result.simple_curves],
            "warnings": list(result.warnings),
            "nearest": None if result.nearest is None else {
                "deviation_measure": result.nearest.deviation.value,
                "largest_deviation_m": result.nearest.largest_deviation_m,
                "largest_deviation_signed_m": result.nearest.signed_largest_m,
                "largest_deviation_at_x_m": result.nearest.largest_at_x_m,
                "rms_deviation_m": result.nearest.rms_deviation_m,
                "peak_moment_kNm": result.nearest.peak_moment_kNm,
                "peak_moment_state": result.nearest.peak_state,
                "peak_moment_at_x_m": result.nearest.peak_at_x_m,
                "moment_limit_kNm": result.nearest.moment_limit_kNm,
                "reference_peak_moment_kNm": result.nearest.reference_peak_moment_kNm,
                "limit_binds": result.nearest.limit_binds,
                "reference_y_m": result.nearest.reference_y_m,
            },
            "iterations": [
                {"number": it.number, "objective": it.objective, "max_change_m": it.max_change_m,
                 "model_residual_kNm": it.residual_kNm}
                for it in result.iterations
            ],
            "axis": {"x_m": result.axis.x, "y_m": result.axis.y, "theta_rad": result.axis.theta},
        },
        indent=None,
    )


def setting_out_csv(axis: Axis, section: SectionAlong, interval_m: float) -> str:
    """Setting-out points every ``interval_m`` of x (and at both springings), on the smooth axis.

    Columns: point, x, y, tangent angle (deg), arc length from the left springing, rib depth, and the
    intrados and extrados points normal to the axis; lengths to the millimetre, angles to 0.001
    degree. Between stations the axis is the cubic Hermite curve through the stations' ordinates and
    tangents. The abscissae are whole multiples of the interval (computed as k x interval, so no
    sum of steps drifts).
    """
    rows = setting_out_rows(axis, section, interval_m)
    header = ["point", "x_m", "y_m", "theta_deg", "arc_length_m", "depth_m", "intrados_x_m", "intrados_y_m",
              "extrados_x_m", "extrados_y_m"]
    return _rows_csv(header, [list(range(rows.shape[0]))], rows[:, 1:], SETTING_OUT_KINDS)


ARC_KINDS = ["length"] * 8 + ["angle", "significant"]


def arcs_csv(arcs: tuple[Arc, ...]) -> str:
    """The axis as circular arcs for fabrication (`formfind.model.arcs`): per arc its stations, end
    points, radius and centre (empty for a straight piece), length, turn and largest deviation from the
    axis; m, degrees (negative: turning clockwise, as an arch does from left to right) and mm."""
    header = ["arc", "start_station", "end_station", "start_x_m", "start_y_m", "end_x_m", "end_y_m", "radius_m",
              "centre_x_m", "centre_y_m", "length_m", "turn_deg", "max_deviation_mm"]
    nan = float("nan")
    values = np.array([[a.start[0], a.start[1], a.end[0], a.end[1], a.radius_m if a.centre else nan,
                        a.centre[0] if a.centre else nan, a.centre[1] if a.centre else nan, a.length_m, a.turn_deg,
                        1000.0 * a.max_deviation_m] for a in arcs]).reshape(len(arcs), 10)
    return _rows_csv(header, [list(range(1, len(arcs) + 1)), [a.start_station for a in arcs],
                              [a.end_station for a in arcs]], values, ARC_KINDS)


DEFLECTION_KINDS = ["length", "significant", "significant", "significant", "significant"]


def deflections_csv(moved: Deflections) -> str:
    """Envelopes of the station displacements per combination (or case): vertical (up positive) and
    horizontal (right positive), largest and least over its states, mm."""
    n = moved.x.size
    text_cols: list[list[Any]] = [[], []]
    blocks = []
    for group in dict.fromkeys(moved.groups):
        uy_max, uy_min, ux_max, ux_min = moved.envelope(group)
        text_cols[0] += [group] * n
        text_cols[1] += list(range(n))
        blocks.append(np.column_stack([moved.x, 1000 * uy_max, 1000 * uy_min, 1000 * ux_max, 1000 * ux_min]))
    header = ["group", "station", "x_m", "uy_max_mm", "uy_min_mm", "ux_max_mm", "ux_min_mm"]
    values = np.vstack(blocks) if blocks else np.zeros((0, 5))
    return _rows_csv(header, text_cols, values, DEFLECTION_KINDS)


def modes_csv(modes: Modes) -> str:
    """The natural modes in the plane: frequency (Hz), period (s), symmetry, dominant direction and
    modal mass (t, for the shape scaled to a largest translation of 1)."""
    rows = [[j + 1, float(f), float(1 / f) if f > 0 else float("nan"), s, d, float(m)]
            for j, (f, s, d, m) in enumerate(zip(modes.frequency_hz, modes.symmetry, modes.direction,
                                                 modes.modal_mass_t, strict=True))]
    return _csv(["mode", "frequency_Hz", "period_s", "symmetry", "direction", "modal_mass_t"], rows)


def setting_out_rows(axis: Axis, section: SectionAlong, interval_m: float) -> np.ndarray:
    """The setting-out points (points, 10): index, x, y, theta (deg), arc length, depth, intrados x, y,
    extrados x, y; m and degrees (see `setting_out_csv`)."""
    count = int(np.floor((axis.x[-1] - axis.x[0]) / interval_m * (1 + 1e-12)))
    x = axis.x[0] + interval_m * np.arange(count + 1)
    x = np.unique(np.concatenate([x[x < axis.x[-1] - 1e-9 * axis.span_m], [axis.x[-1]]]))
    fine = axis.resample(x)
    depth = np.interp(x, axis.x, section.depth_m)
    intra, extra = fine.intrados(depth), fine.extrados(depth)
    return np.column_stack([np.arange(fine.count), fine.x, fine.y, np.degrees(fine.theta), fine.arc_length, depth,
                            intra[:, 0], intra[:, 1], extra[:, 0], extra[:, 1]])


CHECK_HEADER = ["check", "value", "limit", "unit", "utilisation", "combination", "state", "station", "x_m", "verdict",
                "note"]


def _check_cells(row) -> list[Any]:
    return [row.name, row.value, row.limit, row.unit, row.utilisation, row.combination, row.state, row.station,
            row.x_m, row.verdict, row.note]


def checks_csv(result: CheckResult) -> str:
    """The verdict table as CSV: one row per check."""
    return _csv(CHECK_HEADER, [["" if v is None else v for v in _check_cells(r)] for r in result.rows])


def checks_json(result: CheckResult, case_name: str) -> str:
    """The verdict table as JSON (infinite values written as null)."""
    def clean(v):
        return None if isinstance(v, float) and not math.isfinite(v) else v

    return dumps({
        "formfind_version": __version__, "case": case_name, "caution": CAUTION, "passed": result.passed,
        "rows": [dict(zip(CHECK_HEADER, [clean(v) for v in _check_cells(r)], strict=True)) for r in result.rows],
    }, indent=2)


def patterned_csv(result: CheckResult) -> str:
    """The patterned live load's envelopes at every station (alone, factor 1) with the loaded lengths
    of the pattern that gives the largest and least M there."""
    p = result.pattern
    header = ["station", "x_m", "N_max_kN", "N_min_kN", "V_max_kN", "V_min_kN", "M_max_kNm", "M_min_kNm",
              "M_max_loaded_m", "M_min_loaded_m"]
    rows = []
    for i, x in enumerate(p.x):
        spans = [" ".join(f"{a:.3f}-{b:.3f}" for a, b in p.loaded_lengths("M", i, largest)) for largest in (True, False)]
        rows.append([i, float(x), *(float(p.maximum[e, i]) if k == 0 else float(p.minimum[e, i])
                                    for e in range(3) for k in range(2)), *spans])
    return _csv(header, rows)


def thrust_lines_csv(result: CheckResult) -> str:
    """Unreinforced ribs: admissibility per state and the collapse factor per position of the live load."""
    rows = [["admissibility", t.group, t.state, int(t.admissible), t.geometric_factor, ""] for t in result.thrust_lines]
    rows += [["collapse", "", c.state, "", c.factor, " ".join(f"{h.x_m:.3f}:{h.face}" for h in c.hinges)]
             for c in result.collapse]
    return _csv(["kind", "combination", "state", "admissible", "factor", "hinges_x_m_face"],
                [["" if isinstance(v, float) and math.isnan(v) else v for v in r] for r in rows])


STUDY_COLUMNS = ["point", "span_m", "rise_m", "rise_over_span", "depth_m", "status", "objective", "objective_unit",
                 "peak_M_governing_kNm", "peak_M_all_kNm", "peak_M_state", "max_thrust_kN", "peak_N_kN",
                 "buckling_factor", "length_m", "volume_m3", "weight_kN", "worst_utilisation", "worst_check",
                 "verdict", "reason"]


def study_header(groups: list[str]) -> str:
    """The study table's header line: fixed columns, then the thrust of each combination (kN)."""
    return _csv(STUDY_COLUMNS + [f"thrust_{g}_kN" for g in groups], [])


def study_line(row, groups: list[str]) -> str:
    """One study row as a CSV line (no wall times: tables are identical whichever executor ran them);
    span, rise and depth to the millimetre, other numbers to six significant figures."""
    thrust = dict(row.thrust_kN)
    cells = [row.index, numbers.length(row.span_m), numbers.length(row.rise_m), row.rise_over_span,
             numbers.length(row.depth_m), row.status, row.objective,
             row.objective_unit, row.peak_M_governing_kNm, row.peak_M_all_kNm, row.peak_M_state, row.max_thrust_kN,
             row.peak_N_kN, row.buckling_factor, row.length_m, row.volume_m3, row.weight_kN, row.worst_utilisation,
             row.worst_check, row.verdict, row.reason] + [thrust.get(g, math.nan) for g in groups]
    text = _csv(["x"], [["" if isinstance(v, float) and math.isnan(v) else v for v in cells]])
    return text.split("\n", 1)[1]


def study_json(rows: list, groups: list[str], case_name: str) -> str:
    """The study as JSON: units in the keys, failed values as null."""
    def clean(v):
        return None if isinstance(v, float) and not math.isfinite(v) else v

    out = []
    for r in rows:
        item = dict(zip(STUDY_COLUMNS, [r.index, r.span_m, r.rise_m, r.rise_over_span, r.depth_m, r.status,
                                        r.objective, r.objective_unit, r.peak_M_governing_kNm, r.peak_M_all_kNm,
                                        r.peak_M_state, r.max_thrust_kN, r.peak_N_kN, r.buckling_factor, r.length_m,
                                        r.volume_m3, r.weight_kN, r.worst_utilisation, r.worst_check, r.verdict,
                                        r.reason], strict=True))
        item = {k: clean(v) for k, v in item.items()}
        item["thrust_kN"] = {g: clean(v) for g, v in r.thrust_kN}
        out.append(item)
    return dumps({"formfind_version": __version__, "case": case_name, "caution": CAUTION, "points": out}, indent=1)
