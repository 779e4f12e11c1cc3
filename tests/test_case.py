"""Case-file reading and validation: valid files parse; every bad input names file, key and need."""

from __future__ import annotations

import numpy as np
import pytest

from formfind.enums import ShapeKind, SupportKind
from formfind.errors import CaseError
from formfind.model.case import load_case
from formfind.model.schema import reference_markdown
from tests.conftest import BASE_CASE, ROOT


def test_base_case_parses_with_units_converted(write_case):
    case = load_case(write_case(BASE_CASE))
    assert case.name == "small"
    assert case.supports.kind is SupportKind.THREE_HINGED
    assert case.geometry.shape is ShapeKind.PARABOLA
    # rectangle 0.4 x 0.8: A = b h, I = b h^3 / 12; E given in MPa is held in kN/m2
    assert case.section.area_m2 == pytest.approx(0.32)
    assert case.section.second_moment_m4 == pytest.approx(0.4 * 0.8**3 / 12)
    assert case.section.elastic_modulus_kN_m2 == pytest.approx(3.0e7)
    assert [c.name for c in case.cases] == ["dead", "live"]
    assert case.combinations[0].factors == (("dead", 1.35), ("live", 1.5))
    axis = case.axis()
    assert 10.0 in axis.x  # the hinge and the load end are stations
    assert axis.count == 41


@pytest.mark.parametrize("path", sorted((ROOT / "cases").glob("*.toml")), ids=lambda p: p.name)
def test_shipped_cases_are_valid(path):
    case = load_case(path)
    assert case.cases


def test_reference_doc_is_current():
    """docs/case-file.md is generated from the schema; regenerate with `formfind keys`."""
    assert (ROOT / "docs" / "case-file.md").read_text(encoding="utf-8") == reference_markdown()


def _replace(old: str, new: str) -> str:
    assert old in BASE_CASE
    return BASE_CASE.replace(old, new, 1)


BAD = [
    ("syntax", _replace('span_m = 20.0', 'span_m = = 20.0'), "", "not valid TOML"),
    ("syntax line", _replace('rise_m = 4.0', 'rise_m 4.0'), "", "line 6"),
    ("missing table", _replace('[geometry]\nspan_m = 20.0\nrise_m = 4.0\n', ''), "geometry", "missing table"),
    ("missing key", _replace('span_m = 20.0\n', ''), "geometry.span_m", "missing"),
    ("unknown key", _replace('span_m = 20.0', 'span_m = 20.0\nspam_m = 3'), "geometry.spam_m", 'did you mean "span_m"'),
    ("unknown table", BASE_CASE + "\n[geometri]\nx = 1\n", "geometri", 'did you mean "geometry"'),
    ("wrong type", _replace('span_m = 20.0', 'span_m = "twenty"'), "geometry.span_m", "expected a number in m"),
    ("bool as number", _replace('span_m = 20.0', 'span_m = true'), "geometry.span_m", "expected a number"),
    ("negative span", _replace('span_m = 20.0', 'span_m = -20.0'), "geometry.span_m", "positive"),
    ("zero rise", _replace('rise_m = 4.0', 'rise_m = 0.0'), "geometry.rise_m", "positive"),
    ("rise far outside practice", _replace('rise_m = 4.0', 'rise_m = 40.0'), "geometry.rise_m", "outside practice"),
    ("nan", _replace('rise_m = 4.0', 'rise_m = nan'), "geometry.rise_m", "finite"),
    ("inf", _replace('span_m = 20.0', 'span_m = inf'), "geometry.span_m", "finite"),
    ("load outside span", _replace('to_x_m = 10.0', 'to_x_m = 25.0'), "cases[1].loads[0].to_x_m", "within the span"),
    ("hinge outside span", _replace('hinge_x_m = 10.0', 'hinge_x_m = 20.0'), "supports.hinge_x_m", "strictly inside"),
    ("duplicate case", _replace('name = "live"', 'name = "dead"'), "cases[1].name", "duplicate"),
    ("unknown case in combination", _replace('live = 1.5', 'life = 1.5'), "combinations[0].factors.life", 'did you mean "live"'),
    ("unknown load type", _replace('type = "self_weight"', 'type = "selfweight"'), "cases[0].loads[0].type", 'did you mean "self_weight"'),
    ("bad choice", _replace('kind = "three_hinged"', 'kind = "three-hinged"'), "supports.kind", 'did you mean "three_hinged"'),
    ("empty loads", _replace('  [[cases.loads]]\n  type = "self_weight"\n', '  loads = []\n'), "cases[0].loads", "at least one"),
    ("no cases", BASE_CASE[: BASE_CASE.index("[[cases]]")], "cases", "at least one"),
    ("stations too many", _replace('count = 41', 'count = 10000000'), "stations.count", "at most"),
    ("stations float", _replace('count = 41', 'count = 41.5'), "stations.count", "whole number"),
    ("key not applicable", _replace('rise_m = 4.0', 'rise_m = 4.0\nm = 2.0'), "geometry.m", "only when shape"),
    ("bad name", _replace('name = "small"', 'name = "../evil"'), "case.name", "letters, digits"),
    ("from after to", _replace('from_x_m = 0.0', 'from_x_m = 12.0'), "cases[1].loads[0].to_x_m", "greater than"),
    ("circle too high", _replace('rise_m = 4.0', 'rise_m = 11.0\nshape = "circle"'), "geometry.rise_m", "half its span"),
]


@pytest.mark.parametrize(("label", "text", "key", "needle"), BAD, ids=[b[0] for b in BAD])
def test_bad_input_names_file_key_and_expectation(write_case, label, text, key, needle):
    path = write_case(text)
    with pytest.raises(CaseError) as info:
        load_case(path)
    message = str(info.value)
    assert message.startswith(str(path)), message
    assert info.value.key == key, message
    assert needle in message, message
    assert "\n" not in message


def test_missing_file_and_non_utf8(write_case, tmp_path):
    with pytest.raises(CaseError, match="file not found"):
        load_case(tmp_path / "nope.toml")
    with pytest.raises(CaseError, match="not UTF-8"):
        load_case(write_case(b"[case]\nname = \"\xff\xfe\"\n"))
    with pytest.raises(CaseError, match="directory"):
        load_case(tmp_path)


def test_points_shape_and_unequal_springings(write_case):
    text = _replace("rise_m = 4.0", 'shape = "points"\npoints_x_m = [0, 5, 10, 15, 20]\npoints_y_m = [0, 3, 4, 3.5, 1]')
    case = load_case(write_case(text))
    axis = case.axis()
    assert axis.y[0] == 0.0 and axis.y[-1] == pytest.approx(1.0)
    assert np.interp(10.0, axis.x, axis.y) == pytest.approx(4.0)
