"""The imperfect arch: an initial imperfection shaped like the lowest buckling mode, then second order.

Sources:
- Timoshenko & Gere, *Theory of Elastic Stability*, ch. 1 (from memory): an initial deflection affine to
  the buckling mode is amplified by 1 / (1 - P/P_cr), so the second-order moment of the imperfect
  member is its first-order imperfection moment times 1 / (1 - 1/alpha). A two-hinged parabolic arch
  under a load uniform on plan carries it without bending (the funicular), so the moments of the
  imperfect arch are the imperfection's own; its lowest mode is antisymmetric.
- Design practice in general words (the steel and timber codes, from memory): the imperfection's sign
  is the adverse one, and an arch with a vanishing imperfection gives the perfect arch's results.
"""

from __future__ import annotations

import tomllib
from dataclasses import replace

import numpy as np
import pytest

from formfind.analysis.engine import analyse, respond
from formfind.analysis.stability import design_moments, imperfect_axis
from formfind.design.check import check
from formfind.model.case import load_case, parse_case
from tests.conftest import ROOT

SLENDER = """
[case]
name = "slender"
[geometry]
span_m = 30.0
rise_m = 6.0
shape = "parabola"
[supports]
kind = "two_hinged"
[section]
area_m2 = 0.01
second_moment_m4 = 5e-5
depth_m = 0.3
elastic_modulus_MPa = 210000
unit_weight_kN_m3 = 0
[stations]
count = 121
[analysis]
buckling = true
[check]
second_order_below = 1000
[[cases]]
name = "w"
  [[cases.loads]]
  type = "line"
  start_kN_m = 1.0
[[combinations]]
name = "U"
factors = { w = 1.0 }
"""


def _case(load_kN_m: float, imperfection: float, second_order_below: float = 1000.0):
    data = tomllib.loads(SLENDER)
    data["cases"][0]["loads"][0]["start_kN_m"] = load_kN_m
    data["check"].update(imperfection_over_span=imperfection, second_order_below=second_order_below)
    return parse_case(data)


@pytest.mark.parametrize("load", [2.0, 5.0, 10.0])
def test_second_order_moment_is_the_imperfection_moment_amplified(load):
    """Peak second-order |M| / peak first-order |M| of the imperfect arch = 1 / (1 - 1/alpha), within 2 %
    (the perfect arch's own moments from axial shortening, 2 % of the imperfection's here, do not follow
    the mode; measured within 1 % for alpha from 9 down to 1.8)."""
    case = _case(load, 0.002)
    analysis = analyse(case)
    design = design_moments(case, analysis, analysis.combinations)
    alpha = design.alpha["U"]
    assert design.imperfections["U"].symmetry == "antisymmetric"
    assert design.method == ("p-delta",)
    first = design_moments(replace(case, check=replace(case.check, second_order_below=1.0)), analysis,
                           analysis.combinations)
    assert first.method == ("imperfect first-order",)
    ratio = np.abs(design.M).max() / np.abs(first.M).max()
    assert ratio == pytest.approx(1.0 / (1.0 - 1.0 / alpha), rel=0.02)
    assert np.abs(first.M).max() > 10 * np.abs(analysis.combinations.M).max()  # the imperfection governs


def test_a_vanishing_imperfection_gives_the_perfect_arch():
    """The design moments depend linearly on a small amplitude and tend to the perfect arch's."""
    perfect = _case(5.0, 0.0)
    analysis = analyse(perfect)
    base = design_moments(perfect, analysis, analysis.combinations).M
    changes = []
    for e in (1e-5, 1e-6):
        case = _case(5.0, e)
        changes.append(np.abs(design_moments(case, analyse(case), analysis.combinations).M - base).max())
    assert changes[1] == pytest.approx(changes[0] / 10, rel=0.05)  # linear in the amplitude: tends to zero


def test_the_sign_kept_is_the_adverse_one():
    case = _case(5.0, 0.002, second_order_below=1.0)  # first order on the imperfect arch only
    analysis = analyse(case)
    design = design_moments(case, analysis, analysis.combinations)
    imperfection = design.imperfections["U"]
    other = imperfect_axis(analysis.axis, -imperfection.displacement)
    from formfind.analysis.engine import frame_model

    opposite = respond(case, other, analysis.loads.combinations, frame_model(case, other, case.section.at(other)))
    assert np.abs(design.M).max() >= np.abs(opposite.M).max() * (1 - 1e-12)
    assert np.abs(imperfection.displacement[:, :2]).max() == pytest.approx(0.002 * 30.0, rel=1e-12)


def test_the_default_case_states_its_imperfection():
    case = load_case(ROOT / "cases" / "footbridge.toml")
    result = check(case, analyse(case))
    assert result.imperfections
    buckling_rows = [r for r in result.rows if r.name == "in-plane buckling factor"]
    assert buckling_rows and all("initial imperfection" in r.note and "span/500" in r.note for r in buckling_rows)
    stress = next(r for r in result.rows if r.name == "compressive stress")
    assert "initial imperfection" in stress.note
