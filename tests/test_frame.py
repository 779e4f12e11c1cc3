"""Frame engine: agreement with exact statics, influence lines, imposed deformations, failures."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formfind.analysis.frame import build_frame, influence_lines, solve
from formfind.analysis.statics import three_hinged
from formfind.enums import SupportKind
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, StationLoads, Temperature, case_station_loads
from formfind.model.section import Section
from tests.conftest import examples
from tests.test_statics import arches, load_sets

AGREE_RTOL = 1e-6  # the requirement for frame vs exact statics on three-hinged arches


def _stiff_section(axis):
    # axial deformation negligible for a three-hinged arch (it is statically determinate anyway)
    return Section(area_m2=50.0, second_moment_m4=0.05, depth_m=0.8, elastic_modulus_kN_m2=3e7,
                   unit_weight_kN_m3=25.0).at(axis)


@settings(max_examples=examples(40), deadline=None)
@given(data=st.data())
def test_three_hinged_frame_equals_exact_statics(data):
    axis, hinge = data.draw(arches())
    loads = data.draw(load_sets(axis.span_m))
    section = _stiff_section(axis)
    c = int(np.argmin(np.abs(axis.x - hinge)))
    st_loads = case_station_loads(LoadCase("a", loads), axis, section)
    exact = three_hinged(axis, st_loads, c)
    frame = solve(build_frame(axis, section, SupportKind.THREE_HINGED, hinge_station=c), st_loads)
    scale = max(np.abs(exact.reactions).max(), 1e-3)
    np.testing.assert_allclose(frame.reactions, exact.reactions, atol=AGREE_RTOL * scale)
    for name in ("N", "V", "N_left", "V_left"):
        np.testing.assert_allclose(getattr(frame, name), getattr(exact, name), atol=AGREE_RTOL * scale)
    np.testing.assert_allclose(frame.M, exact.M, atol=AGREE_RTOL * scale * axis.span_m)


@pytest.mark.parametrize("kind", [SupportKind.TWO_HINGED, SupportKind.FIXED, SupportKind.TIED])
def test_influence_lines_equal_direct_solves(kind):
    curve = Parabola(Chord(30.0), 7.0)
    axis = Axis.from_curve(curve, place_stations(curve, 31))
    section = Section(0.6, 0.05, 0.8, 3e7).at(axis)
    model = build_frame(axis, section, kind, tie_EA_kN=2e6)
    lines = influence_lines(model)
    for j in (0, 7, 15, 22):
        direct = solve(model, case_station_loads(LoadCase("p", (PointLoad(float(axis.x[j]), 1.0),)), axis, section))
        np.testing.assert_allclose(lines.M[j], direct.M[0], atol=1e-9)
        np.testing.assert_allclose(lines.thrust[j], direct.thrust[0], atol=1e-9)
        np.testing.assert_allclose(lines.reactions[j], direct.reactions[0], atol=1e-9)


def test_superposition_in_one_multi_rhs_solve():
    curve = Parabola(Chord(24.0), 6.0)
    axis = Axis.from_curve(curve, place_stations(curve, 49))
    section = Section(0.4, 0.02, 0.6, 3e7).at(axis)
    model = build_frame(axis, section, SupportKind.FIXED)
    a = case_station_loads(LoadCase("a", (LineLoad(0, 12, 5, 9),)), axis, section)
    b = case_station_loads(LoadCase("b", (PointLoad(17.0, 40.0, 3.0), Temperature(20.0, 5.0))), axis, section)
    both = StationLoads.concatenate([a, b], axis.count - 1)
    ab = both.combine("ab", [(0, 1.5), (1, -0.5)])
    r = solve(model, StationLoads.concatenate([both, ab], axis.count - 1))
    np.testing.assert_allclose(r.M[2], 1.5 * r.M[0] - 0.5 * r.M[1], atol=1e-8 * np.abs(r.M).max())
    assert r.displacements is not None and r.displacements.shape == (3, axis.count, 3)


def test_hinge_on_the_springing_line_is_reported_as_a_mechanism():
    x = np.linspace(0.0, 10.0, 11)
    y = np.where(np.abs(x - 5.0) < 1e-9, 0.0, np.sin(np.pi * x / 10.0))
    axis = Axis(x, y, np.zeros_like(x))
    section = Section(0.4, 0.02, 0.6, 3e7).at(axis)
    with pytest.raises(AnalysisError, match="mechanism"):
        build_frame(axis, section, SupportKind.THREE_HINGED, hinge_station=5)


def test_tied_arch_needs_a_tie():
    curve = Parabola(Chord(10.0), 2.0)
    axis = Axis.from_curve(curve, place_stations(curve, 11))
    with pytest.raises(AnalysisError, match="tie"):
        build_frame(axis, Section(0.4, 0.02, 0.6, 3e7).at(axis), SupportKind.TIED)


def test_shear_deformation_softens_a_deep_fixed_arch():
    """With shear deformation the deep rib is more flexible: the crown deflects more under a crown load
    (common practice, no source)."""
    curve = Parabola(Chord(12.0), 3.0)
    axis = Axis.from_curve(curve, place_stations(curve, 61))
    section = Section.rectangle(1.0, 1.5, elastic_modulus_kN_m2=3e7).at(axis)
    loads = case_station_loads(LoadCase("p", (PointLoad(6.0, 100.0),)), axis, section)
    plain = solve(build_frame(axis, section, SupportKind.FIXED), loads)
    shear = solve(build_frame(axis, section, SupportKind.FIXED, shear_deformation=True), loads)
    assert abs(shear.displacements[0, 30, 1]) > 1.01 * abs(plain.displacements[0, 30, 1])


def test_buckling_of_a_fine_model_on_a_subset_of_stations_matches_the_full_model():
    """Above BUCKLING_STATIONS the eigenproblem runs on a subset of the stations; the factor converges
    with the square of the element length, so 240 elements agree with 600 to about 1e-5 (measured
    3e-6 on the check benchmark's 800-station rib); common practice, no source."""
    import tomllib

    from formfind.analysis import engine
    from formfind.analysis.buckling import buckle
    from formfind.model.case import parse_case
    from tests.conftest import BASE_CASE

    data = tomllib.loads(BASE_CASE)
    data["stations"] = {"count": 601}
    data["supports"] = {"kind": "two_hinged"}
    case = parse_case(data, "t.toml")
    result = engine.analyse(case)
    full = buckle(result.frame, result.loads.combinations, 0)
    sub = result.buckling[0]
    assert sub.critical_factor == pytest.approx(full.critical_factor, rel=1e-5)
    assert sub.modes.shape[1] == result.axis.count  # modes interpolated back to every station
    np.testing.assert_allclose(sub.modes[0][:, 1], full.modes[0][:, 1], atol=1e-3)


def test_regression_a_load_a_subnormal_distance_from_a_springing_solves():
    """Found by the property test above: a horizontal point load at x = 4e-323 m left only subnormal
    numbers on the free degrees of freedom, and the displacement solve's backward error read 1.0."""
    curve = Parabola(Chord(8.0), 2.0)
    axis = Axis.from_curve(curve, place_stations(curve, 9))
    section = _stiff_section(axis)
    loads = case_station_loads(LoadCase("a", (PointLoad(4e-323, 0.0, 1.0),)), axis, section)
    exact = three_hinged(axis, loads, 4)
    frame = solve(build_frame(axis, section, SupportKind.THREE_HINGED, hinge_station=4), loads)
    np.testing.assert_allclose(frame.reactions, exact.reactions, atol=AGREE_RTOL)


def test_a_settlement_of_a_tied_arch_s_roller_moves_it_without_forces():
    """A pin and a roller with a tie between them hold the arch statically determinately from outside:
    settling the roller turns the whole arch and tie as one body, so no force arises (statics; common
    practice, no source). It used to fail the equilibrium check by rounding alone."""
    from formfind.model.loads import SupportMovement

    curve = Parabola(Chord(20.0), 4.0)
    axis = Axis.from_curve(curve, place_stations(curve, 41))
    section = Section(0.32, 0.017, 0.8, 3e7).at(axis)
    model = build_frame(axis, section, SupportKind.TIED, tie_EA_kN=2e6)
    loads = case_station_loads(LoadCase("s", (SupportMovement(settlement_right_m=0.02),)), axis, section)
    response = solve(model, loads)
    assert np.abs(response.M).max() < 1e-6 and np.abs(response.tie_force).max() < 1e-6
    assert np.abs(response.reactions).max() < 1e-6
