"""A `Case` written back as its case file: the table `parse_case` reads, and its TOML text.

The inverse of `formfind.model.case.parse_case`: every value the Case holds goes back under its
case-file key in the case file's units (MPa where the file says MPa), and a key whose value equals
its documented default is left out, so the file says what was chosen. A round trip file -> Case ->
file -> Case gives the same Case (its ``source`` and ``defaults_used`` aside), which the tests check.

A reference curve read from a file is written as that file's absolute path (with its layer and unit),
so the written case reads the same curve wherever it is saved.
"""

from __future__ import annotations

import math
from enum import Enum
from typing import Any

from formfind.enums import LimitState, ShapeKind
from formfind.model import schema
from formfind.model.loads import (
    AxleTrain,
    FillLoad,
    LineLoad,
    Load,
    NormalPressure,
    PointLoad,
    SelfWeight,
    SupportMovement,
    Temperature,
)

KN_M2_PER_MPA = 1000.0


def _plain(value: Any) -> Any:
    """A value as TOML holds it: enums by their value, tuples as lists, numpy scalars as floats."""
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, tuple | list):
        return [_plain(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, str):  # numpy scalar
        return value.item()
    return value


def _put(out: dict[str, Any], spec: schema.Table, name: str, value: Any) -> None:
    """Set ``out[name]`` unless the value is None or the key's default."""
    if value is None:
        return
    value = _plain(value)
    key = spec.key(name)
    if not key.required:
        default = _plain(key.default)
        if isinstance(value, float) and isinstance(default, int | float) and not isinstance(default, bool):
            if math.isclose(value, default, rel_tol=0.0, abs_tol=0.0):
                return
        elif value == default or (value == [] and default is None):
            return
    out[name] = value


def _mpa(value_kN_m2: float | None) -> float | None:
    return None if value_kN_m2 is None else value_kN_m2 / KN_M2_PER_MPA


def _load(load: Load) -> dict[str, Any]:
    kind = {PointLoad: "point", LineLoad: "line", SelfWeight: "self_weight", NormalPressure: "pressure",
            FillLoad: "fill", Temperature: "temperature", SupportMovement: "support_movement",
            AxleTrain: "axle_train"}[type(load)]
    spec = schema.LOAD_TYPES[kind]
    out: dict[str, Any] = {"type": kind}
    if isinstance(load, PointLoad):
        values = {"x_m": load.x_m, "down_kN": load.down_kN, "right_kN": load.right_kN,
                  "spread_slope": None if load.spread is None else load.spread.slope}
    elif isinstance(load, LineLoad):
        values = {"from_x_m": load.from_x_m, "to_x_m": load.to_x_m, "start_kN_m": load.start_kN_m,
                  "end_kN_m": None if load.end_kN_m == load.start_kN_m else load.end_kN_m,
                  "direction": load.direction, "per": load.projection}
    elif isinstance(load, SelfWeight):
        values = {"factor": load.factor}
    elif isinstance(load, NormalPressure):
        values = {"inward_kN_m": load.inward_kN_m, "from_x_m": load.from_x_m, "to_x_m": load.to_x_m}
    elif isinstance(load, FillLoad):
        values = {"unit_weight_kN_m3": load.unit_weight_kN_m3, "width_m": load.width_m,
                  "surface_y_m": load.surface_y_m, "cover_m": load.cover_m, "measured_to": load.reference,
                  "surcharge_kPa": load.surcharge_kPa}
    elif isinstance(load, Temperature):
        values = {"uniform_C": load.uniform_C, "difference_C": load.difference_C}
    elif isinstance(load, SupportMovement):
        values = {"spread_m": load.spread_m, "settlement_left_m": load.settlement_left_m,
                  "settlement_right_m": load.settlement_right_m, "rotation_left_rad": load.rotation_left_rad,
                  "rotation_right_rad": load.rotation_right_rad}
    else:
        values = {"offsets_m": load.offsets_m, "loads_kN": load.loads_kN, "step_m": load.step_m,
                  "direction": load.direction, "spread_slope": None if load.spread is None else load.spread.slope}
    for name, value in values.items():
        _put(out, spec, name, value)
    return out


def case_table(case) -> dict[str, Any]:
    """The case file's table of ``case`` (see the module docstring)."""
    table: dict[str, Any] = {}
    meta: dict[str, Any] = {}
    d = case.document
    for name, value in (("name", case.name), ("title", case.title), ("description", case.description),
                        ("project", d.project), ("job_number", d.job_number), ("revision", d.revision),
                        ("drawn_by", d.drawn_by), ("checked_by", d.checked_by),
                        ("issue_date", d.issue_date or None)):
        _put(meta, schema.CASE, name, value)
    if "issue_date" in meta:
        import datetime

        meta["issue_date"] = datetime.date.fromisoformat(meta["issue_date"])
    table["case"] = meta

    g = case.geometry
    geometry: dict[str, Any] = {"span_m": g.span_m}
    if g.shape is ShapeKind.POINTS:
        _put(geometry, schema.GEOMETRY, "shape", g.shape)
        geometry["points_x_m"] = list(g.points_x_m)
        geometry["points_y_m"] = list(g.points_y_m)
    else:
        geometry["rise_m"] = g.rise_m
        for name in ("shape", "springing_left_m", "springing_right_m", "m"):
            _put(geometry, schema.GEOMETRY, name, getattr(g, name))
    table["geometry"] = geometry

    s = case.supports
    supports: dict[str, Any] = {}
    _put(supports, schema.SUPPORTS, "kind", s.kind)
    for name, value in (("hinge_x_m", s.hinge_x_m), ("tie_area_m2", s.tie_area_m2),
                        ("tie_modulus_MPa", _mpa(s.tie_modulus_kN_m2))):
        _put(supports, schema.SUPPORTS, name, value)
    if supports:
        table["supports"] = supports

    table["section"] = _section(case.section)

    stations: dict[str, Any] = {}
    _put(stations, schema.STATIONS, "count", case.stations.count)
    _put(stations, schema.STATIONS, "spacing", case.stations.spacing)
    if stations:
        table["stations"] = stations

    _settings(table, schema.ANALYSIS, case.analysis)

    table_find = _find(case)
    if table_find:
        table["find"] = table_find

    c = case.check
    _settings(table, schema.CHECK, c, {"compression_limit_MPa": _mpa(c.compression_limit_kN_m2),
                                       "tension_limit_MPa": _mpa(c.tension_limit_kN_m2),
                                       "crushing_strength_MPa": _mpa(c.crushing_strength_kN_m2),
                                       "patterned_factors": dict(c.patterned_factors) or None})
    _settings(table, schema.LATERAL, case.lateral, {"brace_x_m": list(case.lateral.brace_x_m) or None})
    _settings(table, schema.LONG_TERM, case.long_term)

    study = {name: list(getattr(case.study, name)) for name in ("rise_over_span", "span_m", "depth_m")
             if getattr(case.study, name)}
    if study:
        table["study"] = study

    _settings(table, schema.OUTPUTS, case.outputs)

    cases = []
    for lc in case.cases:
        entry: dict[str, Any] = {"name": lc.name}
        _put(entry, schema.CASES, "action", lc.action)
        _put(entry, schema.CASES, "description", lc.description)
        entry["loads"] = [_load(ld) for ld in lc.loads]
        cases.append(entry)
    table["cases"] = cases
    combinations = []
    accidental = {lc.name for lc in case.cases if lc.action.value == "accidental"}
    for combo in case.combinations:
        entry = {"name": combo.name, "factors": dict(combo.factors)}
        implied = (LimitState.ACCIDENTAL if any(n in accidental and f != 0 for n, f in combo.factors)
                   else LimitState.ULTIMATE)
        if combo.limit_state is not implied:
            entry["limit_state"] = combo.limit_state.value
        _put(entry, schema.COMBINATIONS, "description", combo.description)
        combinations.append(entry)
    if combinations:
        table["combinations"] = combinations
    return table


def _settings(table: dict[str, Any], spec: schema.Table, settings, converted: dict[str, Any] | None = None) -> None:
    """A settings table (keys as the dataclass's fields, ``converted`` where the case file's unit or form
    differs), defaults left out; nothing written if every value is its default."""
    out: dict[str, Any] = {}
    converted = converted or {}
    for key in spec.keys:
        value = converted[key.name] if key.name in converted else getattr(settings, key.name)
        if key.kind in ("factors", "numbers") and key.name in converted:
            if value:
                out[key.name] = value
            continue
        _put(out, spec, key.name, value)
    if out:
        table[spec.header] = out


def _differs(value: float | None, expected: float | None) -> bool:
    if value is None or expected is None:
        return value is not expected
    return not math.isclose(value, expected, rel_tol=1e-15, abs_tol=0.0)


def _section(r) -> dict[str, Any]:
    """The [section] table: a profile by its dimensions (computed properties left out unless overridden),
    or A and I as typed; material values only where they differ from the preset's."""
    from formfind.model.profiles import MATERIALS, properties
    from formfind.model.section import DEFAULT_EXPANSION_PER_C, DEFAULT_POISSON_RATIO, DEFAULT_SHEAR_AREA_FACTOR

    out: dict[str, Any] = {}
    _put(out, schema.SECTION, "variation", r.variation)
    if r.profile is not None:
        out["profile"] = r.profile.value
    out["depth_m"] = r.depth_m
    for name in ("width_m", "wall_thickness_m", "web_thickness_m", "flange_thickness_m", "springing_depth_m"):
        if getattr(r, name) is not None:
            out[name] = getattr(r, name)
    computed = None
    if r.profile is not None:
        computed = properties(r.profile, r.depth_m, r.width_m, r.wall_thickness_m, r.web_thickness_m,
                              r.flange_thickness_m, r.poisson_ratio)
        factor = computed.shear_area_factor
    else:
        rectangle = r.width_m is not None and math.isclose(r.area_m2, r.width_m * r.depth_m, rel_tol=1e-15) and \
            math.isclose(r.second_moment_m4, r.width_m * r.depth_m**3 / 12.0, rel_tol=1e-15)
        if rectangle:
            from formfind.enums import SectionProfile

            computed = properties(SectionProfile.RECTANGLE, r.depth_m, r.width_m)
            computed = type(computed)(computed.area_m2, computed.second_moment_m4, computed.lateral_second_moment_m4,
                                      computed.torsion_constant_m4, 0.0, computed.shear_area_factor)
        else:
            out["area_m2"] = r.area_m2
            out["second_moment_m4"] = r.second_moment_m4
        factor = DEFAULT_SHEAR_AREA_FACTOR
    for name in ("lateral_second_moment_m4", "torsion_constant_m4", "warping_constant_m6"):
        expected = None if computed is None else getattr(computed, name)
        if _differs(getattr(r, name), expected):
            out[name] = getattr(r, name)
    if _differs(r.shear_area_factor, factor):
        out["shear_area_factor"] = r.shear_area_factor
    preset = MATERIALS.get(r.material) if r.material is not None else None
    if r.material is not None:
        out["material"] = r.material.value
    shear = None if r.shear_modulus_given_kN_m2 is None else _mpa(r.shear_modulus_given_kN_m2)
    for name, value, expected in (
            ("elastic_modulus_MPa", _mpa(r.elastic_modulus_kN_m2), preset.elastic_modulus_MPa if preset else None),
            ("shear_modulus_MPa", shear, preset.shear_modulus_MPa if preset else None),
            ("poisson_ratio", r.poisson_ratio, preset.poisson_ratio if preset else DEFAULT_POISSON_RATIO),
            ("unit_weight_kN_m3", r.unit_weight_kN_m3, preset.unit_weight_kN_m3 if preset else 0.0),
            ("thermal_expansion_per_C", r.thermal_expansion_per_C,
             preset.thermal_expansion_per_C if preset else DEFAULT_EXPANSION_PER_C)):
        if value is not None and _differs(value, expected):
            out[name] = value
    return out


def _find(case) -> dict[str, Any]:
    f = case.find
    out: dict[str, Any] = {}
    spec = schema.FIND
    rise = case.geometry.rise_m
    reference = f.reference
    for key in spec.keys:
        name = key.name
        if name in ("rise_min_m", "rise_max_m"):
            value = getattr(f, name)
            if reference is None and value is not None and math.isclose(value, rise, rel_tol=1e-15, abs_tol=0.0):
                continue  # the geometry's rise: the default
            if reference is not None:
                out[name] = value  # the reference's own rise is the default; stating it is exact
                continue
            _put(out, spec, name, value)
        elif name == "governing":
            if f.governing:
                out[name] = list(f.governing)
        elif name in ("clearance_x_m", "clearance_y_m", "envelope_x_m", "envelope_y_m"):
            line = f.clearance if name.startswith("clearance") else f.envelope
            if line:
                out[name] = [p[0] if name.endswith("x_m") else p[1] for p in line]
        elif name.startswith("reference_"):
            continue
        else:
            _put(out, spec, name, getattr(f, name))
    if reference is not None:
        if reference.path:  # read from a file: name the file, so the same curve is read again
            out["reference_file"] = reference.path
            if reference.layer is not None:
                out["reference_layer"] = reference.layer
            if reference.unit is not None:
                out["reference_unit"] = reference.unit
        else:
            out["reference_x_m"] = [float(v) for v in reference.x_m]
            out["reference_y_m"] = [float(v) for v in reference.y_m]
    return out


def case_toml(case, header: str = "") -> str:
    """``case`` as the text of a case file (TOML), ``header`` (comment lines) first."""
    import tomli_w

    text = tomli_w.dumps(case_table(case))
    lines = "".join(f"# {line}\n" if line else "#\n" for line in header.splitlines())
    return lines + ("\n" if lines else "") + text
