"""An unreinforced ring is judged by its own rules: lines of thrust and the collapse mechanism (Heyman,
*The Masonry Arch*: masonry has no tensile strength, so the elastic tension and kern rows describe a
ring that cracks; they stay as information). No utilisation is ever infinite."""

from __future__ import annotations

import math
from dataclasses import replace

from formfind.analysis.engine import analyse
from formfind.design.check import FAIL, INFO, check
from formfind.model.case import load_case
from tests.conftest import ROOT


def test_the_shipped_ring_is_judged_by_its_thrust_lines_and_says_so():
    case = load_case(ROOT / "cases" / "masonry-culvert.toml")
    analysis = analyse(case)
    result = check(case, analysis)
    elastic = [r for r in result.rows if r.name in ("tensile stress", "compressive stress")
               or r.name.startswith("eccentricity")]
    assert elastic and all(r.verdict == INFO and "information only" in r.note for r in elastic)
    judged = [r for r in result.rows if r.name.startswith("thrust line:")]
    assert {r.name for r in judged} == {"thrust line: geometric factor", "thrust line: sliding",
                                        "thrust line: collapse factor"}
    assert result.passed == all(r.verdict != FAIL for r in judged + [r for r in result.rows if "buckling" in r.name])
    assert all(r.utilisation is None or math.isfinite(r.utilisation) for r in result.rows)
    # the same ring judged as if it could take tension: the elastic rows fail under the abutment spread
    elastic_case = replace(case, check=replace(case.check, unreinforced=False))
    elastic_result = check(elastic_case, analysis)
    assert not elastic_result.passed
    assert any(r.name == "tensile stress" and r.verdict == FAIL for r in elastic_result.rows)


def test_crushing_strength_lowers_the_collapse_factor_and_is_stated():
    """The shipped ring with its 5 MPa masonry collapses sooner than the rigid-block ring (the stress
    block moves each hinge inwards), and the row says so with the crushed depths."""
    case = load_case(ROOT / "cases" / "masonry-culvert.toml")
    assert case.check.crushing_strength_kN_m2 == 5000.0
    analysis = analyse(case)
    row = next(r for r in check(case, analysis).rows if r.name == "thrust line: collapse factor")
    rigid_case = replace(case, check=replace(case.check, crushing_strength_kN_m2=None))
    rigid = next(r for r in check(rigid_case, analysis).rows if r.name == "thrust line: collapse factor")
    assert 0 < row.value < rigid.value
    assert "crushing at 5 MPa" in row.note and "crushed" in row.note and "crushed" not in rigid.note


def test_crushing_strength_needs_an_unreinforced_collapse_and_a_width(tmp_path):
    import tomllib

    import pytest

    from formfind.errors import CaseError
    from formfind.model.case import parse_case

    data = tomllib.loads((ROOT / "cases" / "masonry-culvert.toml").read_text())
    del data["check"]["collapse_case"]
    with pytest.raises(CaseError, match=r"check\.crushing_strength_MPa: applies to the collapse"):
        parse_case(data, "ring.toml")
    data = tomllib.loads((ROOT / "cases" / "masonry-culvert.toml").read_text())
    data["section"] = {"area_m2": 0.55, "second_moment_m4": 0.0139, "depth_m": 0.55, "elastic_modulus_MPa": 4000}
    with pytest.raises(CaseError, match=r"check\.crushing_strength_MPa: needs section\.width_m"):
        parse_case(data, "ring.toml")
