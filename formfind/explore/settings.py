"""The page's settings and how they change a case file's table.

The page holds the rise (m), the span (m), the rib's crown depth (m), the support kind and a trial load
(none, a line load over a stretch of the span, or a point load at an abscissa). `apply` writes them
into a copy of the case file's TOML table; `formfind.model.case.parse_case` then validates the result
by the same rules as any case file, so the page can say nothing a case file could not, and the case
saved from the page is exactly the one shown.

What changes (documented on the page too):
- the rise is held at the page's value (a rise range in [find] is dropped);
- a new span scales every abscissa of the case (loads, the hinge, clearance and site lines, a drawn
  axis, the reference curve), as a trade study does; heights and axle spacings stay;
- a new depth changes the depth of a rectangle, a box or an I-section (its other dimensions kept); a tube
  or a solid circle is scaled similar (diameter over wall thickness kept); a section given by A and I is
  scaled geometrically similar, A x (d/d0)^2 and I x (d/d0)^4 (a tapered rib's springing depth by d/d0);
- the trial load is a variable load case `trial_load` (kN/m per horizontal metre, or kN, downwards)
  and a combination `trial` = every permanent case x 1.0 + the trial load x its factor, judged like the
  case's own ultimate combinations; the axis is found for the case's governing set unless the page asks
  to shape for the trial too.
"""

from __future__ import annotations

import copy
import math
from dataclasses import asdict, dataclass, fields
from pathlib import Path
from typing import Any

from formfind.errors import CaseError

SUPPORT_KINDS = ("three_hinged", "two_hinged", "fixed", "tied")
TRIAL_KINDS = ("none", "line", "point")
TRIAL_CASE = "trial_load"
TRIAL_COMBINATION = "trial"
PAGE = "page"  # the "file" named in errors about the page's own values


@dataclass(frozen=True)
class PageSettings:
    """What the page controls. Lengths in m, line load in kN/m (per horizontal metre, downwards),
    point load in kN (downwards), factor dimensionless."""

    rise_m: float
    span_m: float
    depth_m: float
    supports: str
    trial: str = "none"
    trial_kN_m: float = 10.0
    trial_from_m: float = 0.0
    trial_to_m: float = 0.0
    trial_kN: float = 50.0
    trial_x_m: float = 0.0
    trial_factor: float = 1.0
    shape_for_trial: bool = False

    def as_dict(self) -> dict[str, Any]:
        """The settings as JSON-ready values."""
        return asdict(self)


def initial_settings(table: dict[str, Any], case) -> PageSettings:
    """The page's starting point: the case's own rise, span, crown depth and supports, a trial line
    load over the left half (off until the page switches it on), a point load at the quarter span."""
    span = case.geometry.span_m
    return PageSettings(rise_m=case.geometry.rise_m, span_m=span, depth_m=float(case.section.depth_m),
                        supports=case.supports.kind.value, trial_from_m=0.0, trial_to_m=0.5 * span,
                        trial_x_m=0.25 * span)


def parse_settings(data: Any, start: PageSettings) -> PageSettings:
    """Validate the page's JSON (a partial set of keys is completed from ``start``).

    Raises:
        CaseError: naming the page and the key, for an unknown key, a wrong type or a value no case
            could take.
    """
    if not isinstance(data, dict):
        raise CaseError(PAGE, "", f"expected a JSON object of settings, got {type(data).__name__}")
    known = {f.name: f for f in fields(PageSettings)}
    values = start.as_dict()
    for key, value in data.items():
        if key not in known:
            raise CaseError(PAGE, str(key)[:40], "unknown setting; expected one of " + ", ".join(known))
        kind = known[key].type
        if kind == "float":
            if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
                raise CaseError(PAGE, key, f"expected a finite number, got {str(value)[:40]!r}")
            values[key] = float(value)
        elif kind == "bool":
            if not isinstance(value, bool):
                raise CaseError(PAGE, key, f"expected true or false, got {str(value)[:40]!r}")
            values[key] = value
        else:
            choices = SUPPORT_KINDS if key == "supports" else TRIAL_KINDS
            if value not in choices:
                raise CaseError(PAGE, key, "expected one of " + ", ".join(choices) + f", got {str(value)[:40]!r}")
            values[key] = value
    for key in ("rise_m", "span_m", "depth_m"):
        if values[key] <= 0:
            raise CaseError(PAGE, key, f"expected a positive length, got {values[key]:g}")
    return PageSettings(**values)


def _scale_x(table: dict[str, Any], key: str, k: float) -> None:
    if key in table and isinstance(table[key], int | float) and not isinstance(table[key], bool):
        table[key] = table[key] * k
    elif key in table and isinstance(table[key], list):
        table[key] = [v * k if isinstance(v, int | float) and not isinstance(v, bool) else v for v in table[key]]


def _number(table: dict[str, Any], key: str) -> float | None:
    value = table.get(key)
    return float(value) if isinstance(value, int | float) and not isinstance(value, bool) else None


def apply(table: dict[str, Any], settings: PageSettings, case, governing: list[str], file: str) -> dict[str, Any]:
    """A copy of the case file's ``table`` with the page's ``settings`` written in (module docstring).

    ``case`` is the case file's own validated `Case` (the reference for scaling) and ``governing`` its
    governing combinations, written out so that the trial combination joins them only when asked.
    ``file`` is the case file's path: a relative reference file is made absolute, so that a saved copy
    elsewhere still finds it.
    """
    out = copy.deepcopy(table)
    geometry = out.setdefault("geometry", {})
    k = settings.span_m / case.geometry.span_m
    ky = settings.rise_m / case.geometry.rise_m
    geometry["span_m"] = settings.span_m
    geometry["rise_m"] = settings.rise_m
    if isinstance(geometry.get("points_x_m"), list):
        _scale_x(geometry, "points_x_m", k)
        _scale_x(geometry, "points_y_m", ky)
    supports = out.setdefault("supports", {})
    if settings.supports != case.supports.kind.value or k != 1.0:
        if settings.supports == "three_hinged":
            hinge = _number(supports, "hinge_x_m")
            supports["hinge_x_m"] = (hinge if hinge is not None else 0.5 * case.geometry.span_m) * k
        else:
            supports.pop("hinge_x_m", None)
    supports["kind"] = settings.supports
    section = out.setdefault("section", {})
    d0 = float(case.section.depth_m)
    if settings.depth_m != d0:
        ratio = settings.depth_m / d0
        section["depth_m"] = settings.depth_m
        profile = section.get("profile")
        if profile in ("tube", "solid_circle"):
            _scale_x(section, "wall_thickness_m", ratio)  # a similar tube: D / t kept
        elif profile is None and _number(section, "width_m") is None:
            for key, power in (("area_m2", 2), ("second_moment_m4", 4)):
                value = _number(section, key)
                if value is not None:
                    section[key] = value * ratio**power
            for key, power in (("lateral_second_moment_m4", 4), ("torsion_constant_m4", 4),
                               ("warping_constant_m6", 6)):
                if _number(section, key) is not None:
                    section[key] = section[key] * ratio**power
        _scale_x(section, "springing_depth_m", ratio)
    find = out.setdefault("find", {})
    find.pop("rise_min_m", None)
    find.pop("rise_max_m", None)
    for key in ("clearance_x_m", "envelope_x_m"):
        _scale_x(find, key, k)
    if isinstance(find.get("reference_x_m"), list) and isinstance(find.get("reference_y_m"), list):
        left = float(case.geometry.springing_left_m)
        right = float(case.geometry.springing_right_m)
        xs = [float(v) for v in find["reference_x_m"] if isinstance(v, int | float)]
        ys = [float(v) for v in find["reference_y_m"] if isinstance(v, int | float)]
        if len(xs) == len(ys) == len(find["reference_x_m"]):
            chords = [left + (right - left) * x / case.geometry.span_m for x in xs]
            find["reference_x_m"] = [x * k for x in xs]
            find["reference_y_m"] = [c + ky * (y - c) for c, y in zip(chords, ys, strict=True)]
    if isinstance(find.get("reference_file"), str):
        path = Path(find["reference_file"])
        if not path.is_absolute():
            find["reference_file"] = str((Path(file).parent / path).resolve())
    cases = out.setdefault("cases", [])
    for c in cases:
        for load in c.get("loads", []) if isinstance(c, dict) else []:
            if isinstance(load, dict) and load.get("type") in ("point", "line", "pressure"):
                for key in ("x_m", "from_x_m", "to_x_m"):
                    _scale_x(load, key, k)
    names = [str(c.get("name")) for c in cases if isinstance(c, dict)]
    names += [str(c.get("name")) for c in out.get("combinations", []) if isinstance(c, dict)]
    if settings.trial != "none":
        for name in (TRIAL_CASE, TRIAL_COMBINATION):
            if name in names:
                raise CaseError(file, "cases", f"the page's trial load needs the names {TRIAL_CASE} and "
                                f"{TRIAL_COMBINATION}, and the case uses {name}; rename it to use a trial load")
        if settings.trial == "line":
            load = {"type": "line", "from_x_m": settings.trial_from_m, "to_x_m": settings.trial_to_m,
                    "start_kN_m": settings.trial_kN_m}
        else:
            load = {"type": "point", "x_m": settings.trial_x_m, "down_kN": settings.trial_kN}
        cases.append({"name": TRIAL_CASE, "action": "variable",
                      "description": "Trial load placed on the exploration page.", "loads": [load]})
        factors = {c.name: 1.0 for c in case.cases if c.action.value == "permanent"}
        factors[TRIAL_CASE] = settings.trial_factor
        out.setdefault("combinations", []).append(
            {"name": TRIAL_COMBINATION, "factors": factors, "limit_state": "ultimate",
             "description": "Permanent cases x 1.0 and the page's trial load x its factor."})
        find["governing"] = list(governing) + ([TRIAL_COMBINATION] if settings.shape_for_trial else [])
    return out
