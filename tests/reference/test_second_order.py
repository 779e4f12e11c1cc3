"""Second-order (P-Delta) moments of a slender arch against the buckling-factor amplification.

Source: Timoshenko & Gere, *Theory of Elastic Stability*, ch. 1 (beam-columns) and the amplification
1 / (1 - 1/alpha_cr) of EN 1993-1-1 clause 5.2.2 (from memory): where the first buckling mode
dominates the deflected shape, second-order moments are the first-order ones times 1 / (1 - P/P_cr).
A two-hinged parabolic arch under a full-span load plus a half-span load bends antisymmetrically,
like its first (antisymmetric) buckling mode, so the amplification should hold closely; and as the
load tends to zero the second-order moments tend to the first-order ones.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from formfind.analysis.buckling import buckle
from formfind.analysis.frame import build_frame, solve
from formfind.analysis.second_order import second_order
from formfind.enums import SupportKind
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, case_station_loads
from formfind.model.section import Section

SPAN, RISE = 40.0, 8.0
AMPLIFICATION_RTOL = 0.03  # "a few per cent where the first mode dominates"; measured 0.3 %


def _slender():
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, 201, required_x=(20.0,)))
    section = Section(0.02, 2e-4, 0.15, 2.1e8).at(axis)  # a steel tube-like rib, slender in its plane
    return axis, section, build_frame(axis, section, SupportKind.TWO_HINGED)


def _loads(axis, section, scale):
    case = LoadCase("c", (LineLoad(0.0, SPAN, 10.0 * scale, 10.0 * scale), LineLoad(0.0, 20.0, 2.0 * scale, 2.0 * scale)))
    return case_station_loads(case, axis, section)


@pytest.mark.parametrize("fraction", [0.2, 0.4, 0.6])
def test_second_order_moments_follow_the_buckling_amplification(fraction):
    axis, section, model = _slender()
    alpha = buckle(model, _loads(axis, section, 1.0)).critical_factor
    loads = _loads(axis, section, fraction * alpha)  # the load at alpha / 5, 2.5 and 1.67 of buckling
    first = solve(model, loads).M[0]
    second = second_order(model, loads).response.M[0]
    quarter = int(np.argmin(np.abs(axis.x - 10.0)))
    expected = first[quarter] / (1.0 - fraction)
    assert second[quarter] == pytest.approx(expected, rel=AMPLIFICATION_RTOL)


def test_second_order_equals_first_order_as_the_load_vanishes():
    axis, section, model = _slender()
    loads = _loads(axis, section, 1e-6)
    first = solve(model, loads)
    second = second_order(model, loads).response
    # relative difference of order the load itself over the buckling load (~3e-7 here)
    np.testing.assert_allclose(second.M[0], first.M[0], rtol=1e-5, atol=1e-12 * np.abs(first.M).max())
    np.testing.assert_allclose(second.N[0], first.N[0], rtol=1e-5)


def test_second_order_fails_clearly_beyond_the_buckling_load():
    from formfind.errors import AnalysisError

    axis, section, model = _slender()
    alpha = buckle(model, _loads(axis, section, 1.0)).critical_factor
    with pytest.raises(AnalysisError, match="second-order"):
        second_order(model, _loads(axis, section, 1.2 * alpha))


def test_check_uses_p_delta_below_the_threshold_and_says_so():
    from formfind.analysis.engine import analyse
    from formfind.design.check import check
    from formfind.model.case import parse_case
    from tests.conftest import BASE_CASE

    data = tomllib.loads(BASE_CASE)
    data["supports"] = {"kind": "two_hinged"}
    data["section"] = {"area_m2": 0.01, "second_moment_m4": 2e-5, "depth_m": 0.1, "elastic_modulus_MPa": 210000,
                       "unit_weight_kN_m3": 78.5}
    data["check"] = {"compression_limit_MPa": 355.0, "imperfection_over_span": 0.0}  # the perfect arch here
    case = parse_case(data, "t.toml")
    result = analyse(case)
    alpha = result.buckling[0].critical_factor
    assert 1.0 < alpha < 10.0
    checked = check(case, result)
    assert set(checked.second_order) == {"p-delta"}
    assert checked.amplification[0] == pytest.approx(1.0 / (1.0 - 1.0 / alpha), rel=0.1)
    stress = next(r for r in checked.rows if r.name == "compressive stress")
    assert "p-delta" in stress.note
    data["check"]["second_order"] = "amplification"
    amplified = check(parse_case(data, "t.toml"), result)
    assert set(amplified.second_order) == {"amplification"}
    assert amplified.amplification[0] == pytest.approx(1.0 / (1.0 - 1.0 / alpha))


@pytest.mark.parametrize("kind", [SupportKind.FIXED, SupportKind.THREE_HINGED, SupportKind.TIED])
def test_every_support_system_tends_to_first_order_under_a_vanishing_load(kind):
    """The same limit for fixed, three-hinged (hinge release) and tied (tie outside the element
    pattern) ribs: the tangent stiffness is assembled into each block's pattern correctly."""
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, 81, required_x=(20.0,)))
    section = Section(0.02, 2e-4, 0.15, 2.1e8).at(axis)
    hinge = int(np.argmin(np.abs(axis.x - 20.0))) if kind is SupportKind.THREE_HINGED else None
    model = build_frame(axis, section, kind, hinge, tie_EA_kN=4e6 if kind is SupportKind.TIED else None)
    loads = _loads(axis, section, 1e-6)
    first = solve(model, loads)
    second = second_order(model, loads).response
    np.testing.assert_allclose(second.M[0], first.M[0], rtol=1e-4, atol=1e-6 * np.abs(first.M).max())
    np.testing.assert_allclose(second.thrust, first.thrust, rtol=1e-5)
