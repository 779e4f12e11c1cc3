"""The page's answer to a set of settings: find the axis, analyse and check it, and say it as JSON.

`Explorer` holds one case file (its table and validated `Case`) and answers the page: `answer` for the
drawing and the numbers, `toml` for the case file of the current settings, `dxf` for its drawing.
The last few answers are kept (dragging back over a value answers at once), and each answer's linear
programs start from the simplex bases the previous one left (`remembered_bases`). Nothing here computes
mechanics: it calls `find_shape`, `analyse` and `check`, exactly as `formfind run` does.

Units in the JSON: m, kN, kNm; keys carry them. Non-finite numbers are null.
"""

from __future__ import annotations

import math
import threading
import time
from collections import OrderedDict
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from formfind.errors import CaseError
from formfind.explore.settings import TRIAL_COMBINATION, PageSettings, apply, initial_settings
from formfind.model.case import Case, parse_case, read_case_table

KEPT_ANSWERS = 32
MAX_THRUST_LINES = 4
DIGITS = 6  # significant digits of the numbers sent to the page (drawing and display, not calculation)
CAUTION = ("An aid to a qualified engineer: local codes and licensed practice govern; the factors in the "
           "example cases are examples, not code values.")


@dataclass(frozen=True, eq=False)
class Solved:
    """One set of settings found, analysed and checked."""

    table: dict[str, Any]
    case: Case
    shape: Any
    analysis: Any
    checks: Any
    seconds: float


def _num(value: float) -> float | None:
    value = float(value)
    return float(f"{value:.{DIGITS}g}") if math.isfinite(value) else None


def _list(values) -> list[float | None]:
    return [_num(v) for v in np.asarray(values, dtype=float).ravel()]


def _points(points: np.ndarray) -> list[list[float | None] | None]:
    out = []
    for x, y in np.asarray(points, dtype=float):
        out.append([_num(x), _num(y)] if math.isfinite(x) and math.isfinite(y) else None)
    return out


class Explorer:
    """Answers the page for one case file (thread-safe: one computation at a time)."""

    def __init__(self, path: str | Path) -> None:
        from formfind.design.governing import governing_groups

        self.file = str(path)
        self.table = read_case_table(path)
        self.case = parse_case(self.table, self.file)
        self.governing = list(governing_groups(self.case))
        self.start = initial_settings(self.table, self.case)
        self._kept: OrderedDict[PageSettings, Solved] = OrderedDict()
        self._bases: dict = {}  # optimal simplex bases of the last answer's programs, by shape
        self.busy = threading.RLock()  # one computation at a time; callers may hold it across calls

    # ------------------------------------------------------------------------------ computing
    def table_for(self, settings: PageSettings) -> dict[str, Any]:
        """The case file's table with ``settings`` applied (not yet validated)."""
        return apply(self.table, settings, self.case, self.governing, self.file)

    def solve(self, settings: PageSettings) -> Solved:
        """Find, analyse and check the case under ``settings`` (kept for the next request).

        Raises:
            CaseError: if the settings make a case no case file could hold.
            FormfindError: if form finding or the analysis fails (the message says why).
        """
        with self.busy:
            if settings in self._kept:
                self._kept.move_to_end(settings)
                return self._kept[settings]
            from formfind.analysis.engine import analyse
            from formfind.design.check import check
            from formfind.design.convex import remembered_bases
            from formfind.design.shape import find_shape

            t0 = time.perf_counter()
            table = self.table_for(settings)
            case = parse_case(table, self.file)
            with remembered_bases(self._bases):  # the last answer's programs warm-start this one's
                shape = find_shape(case)
            if shape.section != case.section:
                case = replace(case, section=shape.section)
            analysis = analyse(case, axis=shape.axis)
            checks = check(case, analysis)
            solved = Solved(table, case, shape, analysis, checks, time.perf_counter() - t0)
            self._kept[settings] = solved
            while len(self._kept) > KEPT_ANSWERS:
                self._kept.popitem(last=False)
            return solved

    def answer(self, settings: PageSettings) -> dict[str, Any]:
        """The page's JSON for ``settings`` (see `describe`)."""
        return describe(self.solve(settings), settings)

    def toml(self, settings: PageSettings) -> str:
        """The case file of ``settings``, validated first (a case `formfind run` takes as it is)."""
        import tomli_w

        table = self.table_for(settings)
        parse_case(table, self.file)
        header = (f"# Saved by formfind explore from {Path(self.file).name}: rise {settings.rise_m:g} m, span "
                  f"{settings.span_m:g} m, depth {settings.depth_m:g} m, {settings.supports.replace('_', '-')}"
                  f"{'' if settings.trial == 'none' else ', with the trial load'}.\n# {CAUTION}\n\n")
        return header + tomli_w.dumps(table)

    def dxf(self, settings: PageSettings) -> bytes:
        """The DXF drawing of the axis found for ``settings``."""
        from formfind.output.package import drawing_bytes

        solved = self.solve(settings)
        return drawing_bytes(solved.case, solved.analysis)


def _thrust_lines(solved: Solved) -> list[dict[str, Any]]:
    from formfind.analysis.response import thrust_line
    from formfind.design.governing import governing_groups

    analysis = solved.analysis
    axis = analysis.axis
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    wanted = list(governing_groups(solved.case))
    if TRIAL_COMBINATION in response.groups and TRIAL_COMBINATION not in wanted:
        wanted = [TRIAL_COMBINATION] + wanted
    limit = max(3.0 * float(analysis.section.depth_m.max()), 0.1 * axis.span_m)
    lines = []
    for group in wanted[:MAX_THRUST_LINES]:
        if group not in response.groups:
            continue
        k = response.groups.index(group)
        line = thrust_line(axis.x, axis.y, axis.theta, response.M[k], response.N[k])
        # far outside the rib the offset only says "no compression here": leave a gap
        offset = np.hypot(*(line - np.stack([axis.x, axis.y], axis=-1)).T)
        line[~(offset <= limit)] = np.nan
        lines.append({"name": group, "state": response.names[k], "points": _points(line)})
    return lines


def describe(solved: Solved, settings: PageSettings) -> dict[str, Any]:
    """The JSON the page draws: axis, rib, thrust lines, moments, the summary numbers and verdict rows."""
    from formfind.enums import SupportKind, Verdict

    analysis, shape, checks, case = solved.analysis, solved.shape, solved.checks, solved.case
    axis = analysis.axis
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    depth = analysis.section.depth_m
    M_all = response.M if response.count else np.zeros((1, axis.count))
    trial = None
    if TRIAL_COMBINATION in response.groups:
        k = response.groups.index(TRIAL_COMBINATION)
        trial = _list(response.M[k])
    thrust = np.abs(response.thrust) if response.count else np.zeros(1)
    peak = np.abs(M_all).max(axis=1)
    k_peak = int(np.argmax(peak)) % max(response.count, 1)
    buckling = min((b.critical_factor for b in analysis.buckling), default=math.inf)
    worst = checks.worst
    hinge = (case.hinge_station(axis) if case.supports.kind is SupportKind.THREE_HINGED else None)
    verdict_rows = [r for r in checks.rows if r.verdict is not Verdict.INFO]
    return {
        "ok": True,
        "settings": settings.as_dict(),
        "case": case.name,
        "axis": {"x_m": _list(axis.x), "y_m": _list(axis.y)},
        "intrados_m": _points(axis.intrados(depth)),
        "extrados_m": _points(axis.extrados(depth)),
        "hinge_m": None if hinge is None else [_num(axis.x[hinge]), _num(axis.y[hinge])],
        "thrust_lines": _thrust_lines(solved),
        "moment_kNm": {"max": _list(M_all.max(axis=0)), "min": _list(M_all.min(axis=0)), "trial": trial},
        "summary": {
            "thrust_kN": _num(thrust.max()),
            "peak_moment_kNm": _num(peak.max()),
            "peak_moment_state": response.names[k_peak] if response.count else "",
            "buckling_factor": _num(buckling),
            "worst_utilisation": None if worst is None else _num(worst.utilisation),
            "worst_check": "" if worst is None else worst.name,
            "verdict": "pass" if checks.passed else "fail",
            "objective": _num(shape.value),
            "objective_unit": shape.unit,
            "objective_name": shape.objective.value,
            "gap": None if shape.gap is None else _num(shape.gap),
            "method": shape.method.value,
            "length_m": _num(axis.length_m),
            "seconds": _num(solved.seconds),
        },
        "checks": [{"name": r.name, "value": _num(r.value), "limit": None if r.limit is None else _num(r.limit),
                    "unit": r.unit, "utilisation": None if r.utilisation is None else _num(r.utilisation),
                    "governing": r.combination, "verdict": r.verdict.value} for r in verdict_rows],
        "notes": list(shape.warnings),
        "caution": CAUTION,
    }


def error_answer(exc: Exception, settings: dict[str, Any] | None = None) -> dict[str, Any]:
    """The page's JSON for a request that could not be answered: the one-line message."""
    kind = "case" if isinstance(exc, CaseError) else "analysis"
    return {"ok": False, "kind": kind, "error": str(exc), "settings": settings}
