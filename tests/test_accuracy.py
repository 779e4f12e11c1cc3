"""The forward-error estimate carried on an analysis (`formfind.analysis.accuracy`) and its check row."""

from __future__ import annotations

import numpy as np
import pytest

import formfind
from formfind import build


def _rib(area_m2: float, stations: int = 801):
    return build.case(
        "rigid", geometry=build.geometry(span_m=30.0, rise_m=6.0), supports=build.supports(kind="two_hinged"),
        section=build.section(variation="secant", depth_m=0.5, area_m2=area_m2, second_moment_m4=4e-3,
                              elastic_modulus_MPa=30000),
        stations=build.stations(count=stations), analysis=build.analysis(buckling=False, natural_modes=0),
        check=build.check(compression_limit_MPa=30.0),
        cases=[build.load_case("deck", [build.line(start_kN_m=20.0)], action="permanent")])


def test_a_rib_made_rigid_by_a_huge_area_is_flagged_and_a_real_one_is_not():
    """The classical two-hinged parabola (I = Ic sec theta, uniform load) has H = q L^2 / (8 f) without rib
    shortening (e.g. Timoshenko & Young, Theory of Structures; from memory): a huge area approaches it, at
    the price of the stiffness's condition. The estimate grows with the area, stays within the default
    tolerance (1e-6) for a real concrete rib, and the check fails for the huge one."""
    estimates, thrusts = [], []
    for area in (0.2, 2e3, 2e7):
        case = _rib(area)
        result = formfind.analyse(case)
        estimates.append(result.accuracy.forward_error)
        thrusts.append(float(result.cases.thrust[0]))
        row = next(r for r in formfind.check(case, result).rows if r.name == "numerical accuracy")
        assert row.value == result.accuracy.forward_error and row.limit == 1e-6
        assert (row.verdict.value == "pass") == (row.value <= 1e-6)
    assert estimates[0] < 1e-6 < estimates[2]
    assert estimates[0] < estimates[1] < estimates[2]
    assert thrusts[2] == pytest.approx(20.0 * 30.0**2 / (8 * 6.0), rel=1e-5)  # the classical value, nearly
    assert result.accuracy.condition > 1e12 and result.accuracy.digits < 6


def test_exact_statics_is_good_to_round_off():
    case = build.case("three", geometry=build.geometry(span_m=30.0, rise_m=6.0),
                      supports=build.supports(kind="three_hinged"),
                      section=build.section(depth_m=0.5, width_m=0.4, elastic_modulus_MPa=30000),
                      analysis=build.analysis(buckling=False, natural_modes=0),
                      cases=[build.load_case("deck", [build.line(start_kN_m=20.0)])])
    accuracy = formfind.analyse(case).accuracy
    assert accuracy.condition is None and accuracy.forward_error == pytest.approx(np.finfo(float).eps / 2)
