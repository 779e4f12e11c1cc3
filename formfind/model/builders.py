"""Build a case in code, with the case file's own keys and units (`formfind.build` for short).

Each builder takes the keys of one table of the case file as keyword arguments, units in their names
(``span_m``, ``elastic_modulus_MPa``, ``down_kN``), and checks them at once by the same rules and with
the same one-line messages as a case file; `case` puts the tables together and validates the whole
through `formfind.model.case.parse_case`. The builders are made from the case-file schema, so each
key, its unit and its default are stated once (``help(formfind.build.section)`` lists them)::

    from formfind import build
    case = build.case(
        "footbridge",
        geometry=build.geometry(span_m=36.0, rise_m=7.2),
        supports=build.supports(kind="two_hinged"),
        section=build.section(depth_m=0.61, area_m2=0.0459, second_moment_m4=1.97e-3,
                              elastic_modulus_MPa=210000, unit_weight_kN_m3=78.5),
        cases=[build.load_case("dead", [build.self_weight(), build.line(start_kN_m=20.0)],
                               action="permanent")],
        combinations=[build.combination("ULS", {"dead": 1.35})],
    )
    text = case.to_toml()          # the case file of it

Errors name the source ``<python>``, the key path and what was expected, as for a file.
"""

from __future__ import annotations

import inspect
from collections.abc import Iterable, Mapping
from enum import Enum
from typing import Any

from formfind.errors import CaseError
from formfind.model import schema

SOURCE = "<python>"  # the "file" named in the messages of a case built in code
_ANNOTATIONS = {"number": float, "integer": int, "string": str, "name": str, "date": str, "boolean": bool,
                "numbers": "list[float]", "names": "list[str]", "factors": "dict[str, float]"}


def _plain(value: Any) -> Any:
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, tuple | list) or (hasattr(value, "tolist") and not isinstance(value, str | bytes)):
        items = value.tolist() if hasattr(value, "tolist") else value
        return [_plain(v) for v in items] if isinstance(items, list) else items
    if hasattr(value, "item") and not isinstance(value, str | bytes | bool | int | float):
        return value.item()
    return value


def _table(spec: schema.Table, path: str | None, values: dict[str, Any]) -> dict[str, Any]:
    """The given keys (None: not given) as a case-file table. A top-level table (``path`` its header)
    is checked against ``spec`` at once, with the messages a case file gets; a table whose place in
    the case is not known yet (a load, a load case, a combination: ``path`` None) is checked by `case`,
    which names its place (``cases[1].loads[0].x_m``)."""
    out = {name: _plain(value) for name, value in values.items() if value is not None}
    if path is not None:
        allowed = [k.name for k in spec.keys]
        for name in out:
            if name not in allowed:
                raise CaseError(SOURCE, f"{path}.{name}", f"unknown key{schema.suggest(name, allowed)}")
        if all(k.name in out for k in spec.keys if k.required):  # a missing key is reported by `case`
            schema.read_table(out, spec, SOURCE, path)
    return out


def _builder(spec: schema.Table, path: str | None, name: str, load_type: str | None = None):
    def build(**values: Any) -> dict[str, Any]:
        out = _table(spec, path, values)
        return {"type": load_type, **out} if load_type else out

    params = []
    lines = []
    for key in spec.keys:
        kind = key.kind
        annotation = (_ANNOTATIONS.get(kind, Any) if isinstance(kind, str)
                      else f"Literal[{', '.join(repr(m.value) for m in kind)}]")
        params.append(inspect.Parameter(key.name, inspect.Parameter.KEYWORD_ONLY, default=None,
                                        annotation=annotation))
        unit = f" ({key.unit})" if key.unit else ""
        default = "required" if key.required else f"default {key.default!r}"
        lines.append(f"    {key.name}{unit}: {key.doc} [{default}]")
    build.__signature__ = inspect.Signature(params, return_annotation=dict)
    build.__name__ = build.__qualname__ = name
    what = f'a [[cases.loads]] table of type "{load_type}"' if load_type else f"the [{spec.header}] table"
    build.__doc__ = f"{spec.doc}\n\nReturns {what} for `case`. Keys:\n" + "\n".join(lines)
    return build


geometry = _builder(schema.GEOMETRY, "geometry", "geometry")
supports = _builder(schema.SUPPORTS, "supports", "supports")
section = _builder(schema.SECTION, "section", "section")
stations = _builder(schema.STATIONS, "stations", "stations")
analysis = _builder(schema.ANALYSIS, "analysis", "analysis")
find = _builder(schema.FIND, "find", "find")
check = _builder(schema.CHECK, "check", "check")
long_term = _builder(schema.LONG_TERM, "long_term", "long_term")
lateral = _builder(schema.LATERAL, "lateral", "lateral")
study = _builder(schema.STUDY, "study", "study")
outputs = _builder(schema.OUTPUTS, "outputs", "outputs")
point = _builder(schema.LOAD_TYPES["point"], None, "point", "point")
line = _builder(schema.LOAD_TYPES["line"], None, "line", "line")
self_weight = _builder(schema.LOAD_TYPES["self_weight"], None, "self_weight", "self_weight")
pressure = _builder(schema.LOAD_TYPES["pressure"], None, "pressure", "pressure")
fill = _builder(schema.LOAD_TYPES["fill"], None, "fill", "fill")
temperature = _builder(schema.LOAD_TYPES["temperature"], None, "temperature", "temperature")
support_movement = _builder(schema.LOAD_TYPES["support_movement"], None, "support_movement", "support_movement")
axle_train = _builder(schema.LOAD_TYPES["axle_train"], None, "axle_train", "axle_train")


def load_case(name: str, loads: Iterable[dict[str, Any]], action: str = "variable", description: str = "") -> dict:
    """A [[cases]] table: a named load case holding ``loads`` (from `point`, `line`, `self_weight`, ...);
    ``action`` "permanent", "variable" or "accidental"."""
    out = _table(schema.CASES, None, {"name": name, "action": action, "description": description or None})
    out["loads"] = [dict(ld) for ld in loads]
    return out


def combination(name: str, factors: Mapping[str, float], limit_state: str | None = None,
                description: str = "") -> dict:
    """A [[combinations]] table: ``factors`` maps case names to factors (examples only: the governing
    code gives the real ones); ``limit_state`` "ultimate", "serviceability" or "accidental" (None: as
    the case file's default)."""
    return _table(schema.COMBINATIONS, None, {"name": name, "factors": dict(factors),
                                                        "limit_state": limit_state,
                                                        "description": description or None})


def case(name: str, *, geometry: dict, section: dict, cases: Iterable[dict], supports: dict | None = None,
         combinations: Iterable[dict] = (), stations: dict | None = None, analysis: dict | None = None,
         find: dict | None = None, check: dict | None = None, lateral: dict | None = None,
         long_term: dict | None = None,
         study: dict | None = None, outputs: dict | None = None, **about: Any):
    """The validated `Case` of these tables (``about``: the [case] table's other keys, such as
    ``title``, ``project``, ``issue_date``).

    Raises:
        CaseError: naming ``<python>``, the key path and what was expected, exactly as for a case file.
    """
    from formfind.model.case import parse_case

    table: dict[str, Any] = {"case": _table(schema.CASE, "case", {"name": name, **about})}
    for header, part in (("geometry", geometry), ("supports", supports), ("section", section),
                         ("stations", stations), ("analysis", analysis), ("find", find), ("check", check),
                         ("lateral", lateral), ("long_term", long_term), ("study", study), ("outputs", outputs)):
        if part is not None:
            table[header] = dict(part)
    table["cases"] = [dict(c) for c in cases]
    combos = [dict(c) for c in combinations]
    if combos:
        table["combinations"] = combos
    return parse_case(table, SOURCE)
