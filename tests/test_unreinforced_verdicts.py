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
