"""The axially rigid rib (lengths held by constraints) against the unit-load method and the classical
closed forms that neglect rib shortening.

Sources:
- Unit-load (virtual work) method for arches, axial and shear work neglected (Timoshenko & Young,
  *Theory of Structures*, two-hinged arches; from memory): H = int M0 y ds/EI / int y^2 ds/EI for a
  load, H = alpha dT L / int y^2 ds/EI for a uniform temperature change, H = -d / int y^2 ds/EI for a
  spread d of the springings; a three-hinged arch's deflection is int M m ds/EI. Evaluated here on the
  model's own chord polygon (straight elements, y and the moments linear on each, EI the mean of the
  station values), where Simpson's rule is exact: the frame must agree to rounding.
- The same source's closed forms for a parabola with I = I_c sec(theta): H = (5 P L / (8 f)) k (1 - 2 k^2
  + k^3) for a point load at k L, H = 15 E I_c alpha dT / (8 f^2); they differ from the polygon by
  O(h^2), so there the test asserts the error and its h^2 decay.
- Karnovsky & Lebed, *Advanced Methods of Structural Analysis*, Table A.19 (hingeless parabolic arch,
  crown load: H = 15 P l / (64 f), M_A = P l / 32, from memory).
The eigen-solutions (buckling, natural modes) are checked against a dense solution of the same
matrices on the null space of the constraints, built here with scipy.linalg, and against the limit of
an elastic rib whose area grows (their gap shrinks as 1 / A).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from formfind.analysis.buckling import buckle, geometric_stiffness
from formfind.analysis.dynamics import mass_matrix, natural_modes
from formfind.analysis.frame import build_frame, solve
from formfind.analysis.second_order import second_order
from formfind.enums import SectionVariation, SupportKind
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, SupportMovement, Temperature, case_station_loads
from formfind.model.section import Section

SPAN, RISE = 40.0, 8.0
E, IC, AC = 2.0e8, 0.02, 2.0
ALPHA = 1.2e-5
P, K_LOAD = 100.0, 0.2


def _arch(stations: int, kind=SupportKind.TWO_HINGED, area=AC, rigid=True, required=(K_LOAD * SPAN,)):
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, stations, required_x=tuple(required)))
    section = Section(area, IC, 0.8, E, thermal_expansion_per_C=ALPHA, variation=SectionVariation.SECANT).at(axis)
    hinge = int(np.argmin(np.abs(axis.x - SPAN / 2))) if kind is SupportKind.THREE_HINGED else None
    return build_frame(axis, section, kind, hinge, axially_rigid=rigid), section


def _run(model, section, *loads):
    return solve(model, case_station_loads(LoadCase("c", tuple(loads)), model.axis, section))


def _integral(f: np.ndarray, g: np.ndarray, length: np.ndarray, EI: np.ndarray) -> float:
    """Sum over the elements of int f g ds / EI, f and g linear on each (Simpson: exact)."""
    return float(np.sum(length / 6 * (2 * f[:-1] * g[:-1] + f[:-1] * g[1:] + f[1:] * g[:-1] + 2 * f[1:] * g[1:]) / EI))


def _polygon(model, section):
    x, y = model.axis.x, model.axis.y
    length = np.hypot(np.diff(x), np.diff(y))
    EI = E * 0.5 * (section.second_moment_m4[:-1] + section.second_moment_m4[1:])
    return x, y, length, EI


def _unit_load_thrusts(model, section):
    """H of the point load, the temperature rise and the spread, by the unit-load method on the polygon."""
    x, y, length, EI = _polygon(model, section)
    a = K_LOAD * SPAN
    m0 = np.where(x <= a, P * (SPAN - a) * x / SPAN, P * a * (SPAN - x) / SPAN)
    flexibility = _integral(y, y, length, EI)
    return _integral(m0, y, length, EI) / flexibility, ALPHA * 30.0 * SPAN / flexibility, -0.01 / flexibility


def test_two_hinged_rigid_rib_equals_the_unit_load_method_on_its_polygon():
    """201 stations: agreement to rounding (measured 5e-11 for the load, 2e-9 for imposed deformations)."""
    model, section = _arch(201)
    load, heat, spread = _unit_load_thrusts(model, section)
    assert _run(model, section, PointLoad(K_LOAD * SPAN, P)).thrust[0] == pytest.approx(load, rel=1e-9)
    assert _run(model, section, Temperature(uniform_C=30.0)).thrust[0] == pytest.approx(heat, rel=1e-8)
    assert _run(model, section, SupportMovement(spread_m=0.01)).thrust[0] == pytest.approx(spread, rel=1e-8)


def test_at_1601_stations_the_rigid_rib_keeps_its_digits_where_a_huge_area_loses_them():
    """The workaround the option replaces (the area times 1e8) is off by 5 % at 1601 stations
    and its accuracy estimate says so; the constraint keeps 8 digits for a load. Imposed deformations
    (temperature, spread) keep 5: their forces come from K u, whose condition grows as the fourth power
    of the station count in a displacement method (measured 8e-6; the elastic rib shows the same)."""
    model, section = _arch(1601)
    load, heat, _ = _unit_load_thrusts(model, section)
    assert _run(model, section, PointLoad(K_LOAD * SPAN, P)).thrust[0] == pytest.approx(load, rel=1e-7)
    assert _run(model, section, Temperature(uniform_C=30.0)).thrust[0] == pytest.approx(heat, rel=3e-5)
    assert model.maps.forward_error < 1e-6
    huge, huge_section = _arch(1601, area=AC * 1e8, rigid=False)
    result = _run(huge, huge_section, PointLoad(K_LOAD * SPAN, P)).thrust[0]
    assert abs(result / load - 1) > 1e-2
    assert huge.maps.forward_error > 1e-6


def test_two_hinged_rigid_rib_converges_to_the_closed_forms_as_h_squared():
    """No rib shortening is left: the only gap to the closed forms is the chord polygon's, O(h^2)."""
    exact_load = 5 * P * SPAN / (8 * RISE) * K_LOAD * (1 - 2 * K_LOAD**2 + K_LOAD**3)
    exact_heat = 15 * E * IC * ALPHA * 30.0 / (8 * RISE**2)
    errors = []
    for stations in (101, 201, 401):
        model, section = _arch(stations)
        load = _run(model, section, PointLoad(K_LOAD * SPAN, P)).thrust[0] / exact_load - 1
        heat = _run(model, section, Temperature(uniform_C=30.0)).thrust[0] / exact_heat - 1
        errors.append((abs(load), abs(heat)))
    errors = np.array(errors)
    assert errors[1].max() < 1e-4
    ratio = errors[:-1] / errors[1:]
    assert np.all((ratio > 3.5) & (ratio < 4.5))  # halving h quarters the error


def test_fixed_rigid_rib_crown_load_against_the_table():
    """Karnovsky & Lebed Table A.19 (module docstring); the polygon's O(h^2) error at 401 stations is
    below 1e-4, so 1e-3 is ample."""
    model, section = _arch(401, SupportKind.FIXED, required=(SPAN / 2,))
    r = _run(model, section, PointLoad(SPAN / 2, P))
    assert r.thrust[0] == pytest.approx(15 * P * SPAN / (64 * RISE), rel=1e-3)
    assert r.M[0, 0] == pytest.approx(P * SPAN / 32, rel=1e-3)  # M positive for tension on the intrados
    assert r.M[0, model.axis.count // 2] == pytest.approx(3 * P * SPAN / 64, rel=1e-3)


def test_three_hinged_crown_deflection_by_the_unit_load_method():
    """A three-hinged arch is determinate: the forces do not change, and the crown deflection under a
    crown load is int M^2 / (P EI) ds exactly (no axial term), on the polygon."""
    model, section = _arch(201, SupportKind.THREE_HINGED, required=(SPAN / 2,))
    elastic, _ = _arch(201, SupportKind.THREE_HINGED, rigid=False, required=(SPAN / 2,))
    r = _run(model, section, PointLoad(SPAN / 2, P))
    r_elastic = _run(elastic, section, PointLoad(SPAN / 2, P))
    np.testing.assert_allclose(r.M, r_elastic.M, atol=1e-9 * np.abs(r.M).max())
    x, _, length, EI = _polygon(model, section)
    crown = int(np.argmin(np.abs(x - SPAN / 2)))
    expected = _integral(r.M[0], r.M[0] / P, length, EI)
    assert -r.displacements[0, crown, 1] == pytest.approx(expected, rel=1e-9)
    assert -r_elastic.displacements[0, crown, 1] > expected  # shortening adds to the sag


def _null_space_problem(model, section, matrix):
    """Dense K and a second matrix on the null space of the constraints, built from the model's parts."""
    nodal = model.free[model.free < model.first_multiplier]
    multipliers = np.arange(model.first_multiplier, model.dof_count)
    dense = model.stiffness.toarray()
    C = dense[np.ix_(multipliers, nodal)]
    Z = scipy.linalg.null_space(C)
    K = dense[np.ix_(nodal, nodal)]
    B = matrix.toarray()[np.ix_(nodal, nodal)]
    return Z.T @ K @ Z, Z.T @ B @ Z


@pytest.mark.parametrize("kind", [SupportKind.TWO_HINGED, SupportKind.FIXED, SupportKind.THREE_HINGED])
def test_rigid_buckling_equals_a_dense_null_space_solution_and_the_stiff_limit(kind):
    model, section = _arch(61, kind, required=())
    loads = case_station_loads(LoadCase("w", (LineLoad(0.0, SPAN, 10.0, 10.0),)), model.axis, section)
    result = buckle(model, loads, modes=3)
    axial = solve(model, loads, displacements=False)
    from formfind.analysis.buckling import element_axial_forces

    kg = geometric_stiffness(model, element_axial_forces(model, loads)[0])
    K, G = _null_space_problem(model, section, kg)
    mu = scipy.linalg.eigh(-G, K, eigvals_only=True)[::-1]
    np.testing.assert_allclose(result.factors, 1.0 / mu[:3], rtol=1e-8)
    assert axial.N.max() < 0  # the reference state is in compression
    gaps = []
    for area in (AC * 100, AC * 1000):
        stiff, stiff_section = _arch(61, kind, area=area, rigid=False, required=())
        gaps.append(buckle(stiff, loads, modes=1).factors[0] - result.factors[0])
    assert gaps[0] / gaps[1] == pytest.approx(10.0, rel=0.05)  # the gap shrinks as 1 / A


@pytest.mark.parametrize("kind", [SupportKind.TWO_HINGED, SupportKind.FIXED])
def test_rigid_natural_modes_equal_a_dense_null_space_solution(kind):
    model, section = _arch(61, kind, required=())
    mass = np.full(60, 2.0)
    modes = natural_modes(model, mass, np.zeros(61), 4)
    K, M = _null_space_problem(model, section, mass_matrix(model, mass, np.zeros(61)))
    omega2 = scipy.linalg.eigh(K, M, eigvals_only=True)[:4]
    np.testing.assert_allclose(modes.frequency_hz, np.sqrt(omega2) / (2 * np.pi), rtol=1e-8)


def test_second_order_analysis_refuses_a_rigid_rib_with_a_clear_message():
    model, section = _arch(41, required=())
    loads = case_station_loads(LoadCase("w", (LineLoad(0.0, SPAN, 10.0, 10.0),)), model.axis, section)
    with pytest.raises(AnalysisError, match="axially_rigid"):
        second_order(model, loads)


def test_a_straight_rigid_rib_between_held_ends_is_reported():
    """A straight bar between two pins cannot take its length changes: the constraints are dependent
    (common practice, no source)."""
    x = np.linspace(0.0, 10.0, 11)
    axis = Axis(x, np.zeros_like(x), np.zeros_like(x))
    with pytest.raises(AnalysisError, match="mechanism|singular"):
        build_frame(axis, Section(0.1, 0.01, 0.3, 2e8).at(axis), SupportKind.TWO_HINGED, axially_rigid=True)


def test_a_case_with_a_rigid_rib_is_analysed_rigid_and_amplified_instead_of_p_delta():
    """The case key reaches the model; where P-Delta would run, the rigid rib's second-order moments
    are the imperfect first-order ones times 1 / (1 - 1/alpha) (the amplification's definition)."""
    import tomllib
    from dataclasses import replace

    from formfind.analysis.engine import analyse
    from formfind.analysis.stability import design_moments
    from formfind.model.case import parse_case
    from tests.reference.test_imperfection import SLENDER

    data = tomllib.loads(SLENDER)
    data["analysis"]["axially_rigid"] = True
    data["cases"][0]["loads"][0]["start_kN_m"] = 5.0
    case = parse_case(data)
    analysis = analyse(case)
    assert analysis.frame.axially_rigid
    design = design_moments(case, analysis, analysis.combinations)
    assert design.method == ("amplification",)
    first = design_moments(replace(case, check=replace(case.check, second_order_below=1.0)), analysis,
                           analysis.combinations)
    alpha = design.alpha["U"]
    np.testing.assert_allclose(design.M, first.M / (1 - 1 / alpha), rtol=1e-12)
