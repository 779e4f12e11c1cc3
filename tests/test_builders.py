"""Cases built in code (`formfind.build`): the same Case as the case file, the same refusals with the
same messages, and a round trip through the written case file."""

from __future__ import annotations

import inspect

import pytest

import formfind
from formfind import build
from formfind.errors import CaseError
from formfind.model.case import parse_case
from tests.test_writer import same

TEXT = """
[case]
name = "built"
title = "Built in code"
[geometry]
span_m = 30.0
rise_m = 6.0
[supports]
kind = "two_hinged"
[section]
depth_m = 0.5
width_m = 0.4
elastic_modulus_MPa = 30000.0
unit_weight_kN_m3 = 25.0
[check]
compression_limit_MPa = 20.0
[[cases]]
name = "dead"
action = "permanent"
  [[cases.loads]]
  type = "self_weight"
  [[cases.loads]]
  type = "line"
  start_kN_m = 20.0
[[cases]]
name = "live"
  [[cases.loads]]
  type = "point"
  x_m = 7.5
  down_kN = 40.0
[[combinations]]
name = "ULS"
factors = { dead = 1.35, live = 1.5 }
"""


def built(**changes):
    parts = dict(
        geometry=build.geometry(span_m=30.0, rise_m=6.0),
        supports=build.supports(kind="two_hinged"),
        section=build.section(depth_m=0.5, width_m=0.4, elastic_modulus_MPa=30000.0, unit_weight_kN_m3=25.0),
        check=build.check(compression_limit_MPa=20.0),
        cases=[build.load_case("dead", [build.self_weight(), build.line(start_kN_m=20.0)], action="permanent"),
               build.load_case("live", [build.point(x_m=7.5, down_kN=40.0)])],
        combinations=[build.combination("ULS", {"dead": 1.35, "live": 1.5})],
    )
    parts.update(changes)
    return build.case("built", title="Built in code", **parts)


def test_built_case_is_the_case_file():
    import tomllib

    same(built(), parse_case(tomllib.loads(TEXT), "<python>"))
    assert formfind.build is build


def test_built_case_round_trips_through_its_case_file(tmp_path):
    case = built()
    path = tmp_path / "built.toml"
    path.write_text(case.to_toml())
    same(case, formfind.load_case(path))


def _file_message(text: str, tmp_path) -> str:
    path = tmp_path / "bad.toml"
    path.write_text(text)
    with pytest.raises(CaseError) as caught:
        formfind.load_case(path)
    return str(caught.value).removeprefix(f"{path}: ")


@pytest.mark.parametrize("change, file_change", [
    (lambda: {"geometry": build.geometry(span_m=-30.0, rise_m=6.0)}, ("span_m = 30.0", "span_m = -30.0")),
    (lambda: {"geometry": build.geometry(span_m=30.0, rise_m=45.0)}, ("rise_m = 6.0", "rise_m = 45.0")),
    (lambda: {"supports": build.supports(kind="two-hinged")}, ('kind = "two_hinged"', 'kind = "two-hinged"')),
    (lambda: {"cases": [build.load_case("dead", [build.self_weight(), build.line(start_kN_m=20.0)],
                                        action="permanent"),
                        build.load_case("live", [build.point(x_m=37.5, down_kN=40.0)])]},
     ("x_m = 7.5", "x_m = 37.5")),
    (lambda: {"cases": [build.load_case("dead", [build.self_weight(), build.line(start_kN_m=20.0)],
                                        action="permanent"),
                        build.load_case("live", [build.point(x_m=7.5, dwn_kN=40.0)])]},
     ("down_kN = 40.0", "dwn_kN = 40.0")),
    (lambda: {"combinations": [build.combination("ULS", {"dead": 1.35, "lve": 1.5})]},
     ("live = 1.5 }", "lve = 1.5 }")),
])
def test_builders_refuse_what_the_case_file_refuses_in_the_same_words(tmp_path, change, file_change):
    old, new = file_change
    expected = _file_message(TEXT.replace(old, new), tmp_path)
    with pytest.raises(CaseError) as caught:
        built(**change())
    assert str(caught.value) == f"<python>: {expected}"


def test_a_misspelt_key_is_refused_at_once_with_a_suggestion():
    with pytest.raises(CaseError, match=r"<python>: section.elastic_modulus: unknown key.*elastic_modulus_MPa"):
        build.section(depth_m=0.5, elastic_modulus=3e4)


def test_builders_document_every_key_with_its_unit():
    params = inspect.signature(build.section).parameters
    assert "elastic_modulus_MPa" in params and "depth_m" in params
    assert "elastic_modulus_MPa (MPa)" in build.section.__doc__
    assert "x_m (m): Abscissa of the load" in build.point.__doc__
