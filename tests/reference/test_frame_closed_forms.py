"""The frame engine against published results for two-hinged, fixed and tied parabolic arches.

Sources:
- Timoshenko & Young, *Theory of Structures*, two-hinged arches (from memory): for a parabolic arch
  with I = I_c sec(theta), axial shortening neglected, a point load P at a = k L gives
  H = (5 P L / (8 f)) k (1 - 2 k^2 + k^3); a uniform temperature change dT gives
  H = 15 E I_c alpha dT / (8 f^2); a spread d of the springings gives H = -15 E I_c d / (8 f^2 L);
  a tie of stiffness E_t A_t gives H = H0 / (1 + 15 E I_c / (8 f^2 E_t A_t)).
- Karnovsky & Lebed, *Advanced Methods of Structural Analysis*, Appendix, Table A.19 (hingeless
  parabolic arches; point-load formulas from memory, consistent with the table's crown-load row
  H = 15 P l / (64 f), M_A = M_B = P l / 32, M_C = 3 P l / 64 and half-span row R_A = 13 q l / 32,
  H = q l^2 / (16 f), M_A = -q l^2 / 64, M_B = q l^2 / 64, M_C = 0):
  R_A = P (1 - u)^2 (1 + 2 u), H = 15 P l u^2 (1 - u)^2 / (4 f), M_A = P l u (1 - u)^2 (5 u - 2) / 2,
  with M positive for tension on the intrados.
- The flexibility (unit-load) method of any advanced text for the rib-shortening correction:
  H = (int M0 y dx / I_c - int V0 sin cos dx / A_c) / (int y^2 dx / I_c + int cos^2 dx / A_c)
  for I = I_c sec(theta), A = A_c sec(theta), evaluated here by adaptive quadrature.

Model assumptions matched to the sources: I = I_c sec(theta), A = A_c sec(theta) (section
variation "secant"), A_c / I_c = 1e4 1/m2 so that axial shortening is negligible (its effect on H is
below 2e-5 here) without the round-off a still stiffer rib would bring, shear deformation off.
Tolerance 1e-3: the chord polygon of 200 elements approximates the integrals to O(h^2) (measured
2e-5 for two-hinged, 2e-4 for fixed-arch springing moments).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from formfind.analysis.frame import build_frame, solve
from formfind.enums import SectionVariation, SupportKind
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, SupportMovement, Temperature, case_station_loads
from formfind.model.section import Section

SPAN, RISE = 40.0, 8.0
E, IC, AC = 2.0e8, 0.02, 200.0
ALPHA = 1.2e-5
RTOL = 1e-3  # O(h^2) chord discretisation at 200 elements; see the module docstring


def _model(kind: SupportKind, stations: int = 201, area: float = AC, tie_EA=None, required=()):
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, stations, required_x=tuple(required)))
    section = Section(area, IC, 0.8, E, thermal_expansion_per_C=ALPHA, variation=SectionVariation.SECANT).at(axis)
    return build_frame(axis, section, kind, tie_EA_kN=tie_EA), section


def _run(model, section, *loads):
    return solve(model, case_station_loads(LoadCase("c", tuple(loads)), model.axis, section))


@pytest.mark.parametrize("k", [0.1, 0.25, 0.5, 0.8])
def test_two_hinged_point_load_thrust(k):
    model, section = _model(SupportKind.TWO_HINGED)
    p = 100.0
    r = _run(model, section, PointLoad(k * SPAN, p))
    expected = 5 * p * SPAN / (8 * RISE) * k * (1 - 2 * k**2 + k**3)
    assert r.thrust[0] == pytest.approx(expected, rel=RTOL)


@pytest.mark.parametrize("c_frac", [0.5, 0.3, 1.0])
def test_two_hinged_partial_uniform_load_thrust(c_frac):
    """Uniform w over [0, c]: integrating the point-load formula gives
    H = (5 w L^2 / (8 f)) (k^2/2 - k^4/2 + k^5/5), k = c / L; its limits are w L^2 / (16 f) at
    half span and w L^2 / (8 f) at full span (the pitfall check: misprinted versions fail these)."""
    kk = c_frac
    factor = kk**2 / 2 - kk**4 / 2 + kk**5 / 5
    assert 5 / 8 * (0.5**2 / 2 - 0.5**4 / 2 + 0.5**5 / 5) == pytest.approx(1 / 16)
    assert 5 / 8 * (1 / 2 - 1 / 2 + 1 / 5) == pytest.approx(1 / 8)
    model, section = _model(SupportKind.TWO_HINGED, required=(c_frac * SPAN,))
    w = 12.0
    r = _run(model, section, LineLoad(0.0, c_frac * SPAN, w, w))
    assert r.thrust[0] == pytest.approx(5 * w * SPAN**2 / (8 * RISE) * factor, rel=RTOL)
    if c_frac == 1.0:  # the parabola is funicular: no bending
        assert np.max(np.abs(r.M)) < 1e-3 * w * SPAN**2 / 8


def test_two_hinged_rib_shortening_reduces_the_thrust():
    """Flexibility method with axial terms (module docstring), for a slender-ish rib A_c / I_c = 25."""
    area = 0.5
    model, section = _model(SupportKind.TWO_HINGED, area=area)
    w = 10.0
    r = _run(model, section, LineLoad(0.0, SPAN, w, w))

    def y(x):
        return 4 * RISE * x * (SPAN - x) / SPAN**2

    def theta(x):
        return np.arctan(4 * RISE * (SPAN - 2 * x) / SPAN**2)

    m0y = quad(lambda x: w * x * (SPAN - x) / 2 * y(x), 0, SPAN)[0] / IC
    vsc = quad(lambda x: w * (SPAN / 2 - x) * np.sin(theta(x)) * np.cos(theta(x)), 0, SPAN)[0] / area
    yy = quad(lambda x: y(x) ** 2, 0, SPAN)[0] / IC
    cc = quad(lambda x: np.cos(theta(x)) ** 2, 0, SPAN)[0] / area
    expected = (m0y - vsc) / (yy + cc)
    h0 = w * SPAN**2 / (8 * RISE)
    assert expected < h0  # shortening relieves the thrust
    assert r.thrust[0] == pytest.approx(expected, rel=RTOL)
    # the textbook approximation H0 / (1 + 15 I_c / (8 A_c f^2)) is close to the full expression
    assert expected == pytest.approx(h0 / (1 + 15 * IC / (8 * area * RISE**2)), rel=5e-3)


def test_two_hinged_temperature_and_support_spread():
    model, section = _model(SupportKind.TWO_HINGED)
    d_t, spread = 30.0, 0.01
    r = _run(model, section, Temperature(uniform_C=d_t))
    assert r.thrust[0] == pytest.approx(15 * E * IC * ALPHA * d_t / (8 * RISE**2), rel=RTOL)
    r = _run(model, section, SupportMovement(spread_m=spread))
    assert r.thrust[0] == pytest.approx(-15 * E * IC * spread / (8 * RISE**2 * SPAN), rel=RTOL)


def test_tied_arch_thrust_with_an_elastic_tie():
    model_rigid, section = _model(SupportKind.TIED, tie_EA=1e12)
    et_at = 2.1e8 * 0.004
    model, _ = _model(SupportKind.TIED, tie_EA=et_at)
    w = 15.0
    h0 = _run(model_rigid, section, LineLoad(0.0, SPAN, w, w)).thrust[0]
    r = _run(model, section, LineLoad(0.0, SPAN, w, w))
    assert h0 == pytest.approx(w * SPAN**2 / (8 * RISE), rel=RTOL)
    expected = w * SPAN**2 / (8 * RISE) / (1 + 15 * E * IC / (8 * RISE**2 * et_at))
    assert r.thrust[0] == pytest.approx(expected, rel=RTOL)
    assert r.tie_force[0] == pytest.approx(expected, rel=RTOL)
    assert abs(r.reactions[0, 0, 0]) < 1e-6 * expected  # vertical loads: no horizontal reaction


@pytest.mark.parametrize("u", [0.2, 0.5, 0.7])
def test_fixed_arch_point_load(u):
    model, section = _model(SupportKind.FIXED, required=(u * SPAN,))
    p = 100.0
    r = _run(model, section, PointLoad(u * SPAN, p))
    assert r.reactions[0, 0, 1] == pytest.approx(p * (1 - u) ** 2 * (1 + 2 * u), rel=RTOL)
    assert r.thrust[0] == pytest.approx(15 * p * SPAN * u**2 * (1 - u) ** 2 / (4 * RISE), rel=RTOL)
    m_a = p * SPAN * u * (1 - u) ** 2 * (5 * u - 2) / 2
    m_b = p * SPAN * u**2 * (1 - u) * (3 - 5 * u) / 2
    scale = p * SPAN / 32
    assert r.M[0, 0] == pytest.approx(m_a, abs=RTOL * scale)
    assert r.M[0, -1] == pytest.approx(m_b, abs=RTOL * scale)


def test_fixed_arch_crown_and_half_span_rows_of_the_table():
    model, section = _model(SupportKind.FIXED)
    crown = int(np.argmin(np.abs(model.axis.x - SPAN / 2)))
    p, q = 100.0, 10.0
    r = _run(model, section, PointLoad(SPAN / 2, p))
    assert r.thrust[0] == pytest.approx(15 * p * SPAN / (64 * RISE), rel=RTOL)
    assert r.M[0, 0] == pytest.approx(p * SPAN / 32, rel=RTOL)
    assert r.M[0, crown] == pytest.approx(3 * p * SPAN / 64, rel=RTOL)
    r = _run(model, section, LineLoad(0.0, SPAN / 2, q, q))
    assert r.reactions[0, 0, 1] == pytest.approx(13 * q * SPAN / 32, rel=RTOL)
    assert r.thrust[0] == pytest.approx(q * SPAN**2 / (16 * RISE), rel=RTOL)
    assert r.M[0, 0] == pytest.approx(-q * SPAN**2 / 64, rel=RTOL)
    assert r.M[0, -1] == pytest.approx(q * SPAN**2 / 64, rel=RTOL)
    assert abs(r.M[0, crown]) < RTOL * q * SPAN**2 / 64


def test_fixed_arch_temperature_difference_gives_a_uniform_moment():
    """Common practice, no source: a fixed arch of constant EI fully restrains a uniform thermal
    curvature alpha dT / d with a constant moment M = E I alpha dT / d and no force reactions. A
    hotter extrados wants to hog, so the restraint puts the intrados in tension (M > 0)."""
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, 101))
    depth = 0.8
    section = Section(0.5, IC, depth, E, thermal_expansion_per_C=ALPHA).at(axis)
    model = build_frame(axis, section, SupportKind.FIXED)
    d_t = 15.0
    r = _run(model, section, Temperature(difference_C=d_t))
    expected = E * IC * ALPHA * d_t / depth
    np.testing.assert_allclose(r.M[0], expected, rtol=1e-9)
    assert np.max(np.abs(r.reactions[0, :, :2])) < 1e-9 * expected


@pytest.mark.parametrize("shear", [False, True])
def test_shear_flexible_elements_give_the_exact_fixed_end_forces_of_the_timoshenko_beam(shear):
    """A straight fixed-fixed member of two elements with a point load and a linearly varying load
    off the nodes, shear deformation on and off, against the flexibility method written out here
    independently of the frame (any advanced structural analysis text; from memory): release the
    right end, take the cantilever's tip deflection int M (L - x) / EI dx + int V / G As dx and tip
    rotation int M / EI dx under the loads, and restore compatibility with the tip's flexibility
    [[L^3/3EI + L/GAs, L^2/2EI], [L^2/2EI, L/EI]]. The element shapes solve the shear-flexible beam
    exactly, so the nodal solution is exact: 1e-9 relative (the quadrature here is to 1e-12)."""
    from scipy.integrate import quad as integrate

    length = 6.0
    x = np.array([0.0, 2.5, length])
    axis = Axis(x, np.zeros(3), np.zeros(3))
    modulus, area, inertia, nu, factor = 2.1e8, 0.02, 4e-4, 0.3, 0.5
    section = Section(area, inertia, 0.5, modulus, poisson_ratio=nu, shear_area_factor=factor).at(axis)
    ei = modulus * inertia
    gas = modulus / (2 * (1 + nu)) * factor * area
    s = 1.0 / gas if shear else 0.0
    point_at, point, w0, w1 = 1.3, 10.0, 4.0, 9.0
    loads = case_station_loads(LoadCase("p", (PointLoad(point_at, point), LineLoad(0.0, length, w0, w1))), axis,
                               section)
    frame = solve(build_frame(axis, section, SupportKind.FIXED, shear_deformation=shear), loads)

    def w(t):  # downward intensity, kN/m
        return w0 + (w1 - w0) * t / length

    def shear_force(xx):  # y-up force of everything right of xx on the cantilever's part right of xx
        return -(point if xx < point_at else 0.0) - integrate(w, xx, length, epsabs=1e-13)[0]

    def moment(xx):  # anticlockwise moment about xx of the loads right of it
        m = -(point * (point_at - xx) if xx < point_at else 0.0)
        return m - integrate(lambda t: w(t) * (t - xx), xx, length, epsabs=1e-13)[0]

    opts = {"epsabs": 1e-13, "epsrel": 1e-13, "limit": 200, "points": [point_at]}
    deflection = (integrate(lambda t: moment(t) * (length - t) / ei, 0.0, length, **opts)[0]
                  + integrate(lambda t: shear_force(t) * s, 0.0, length, **opts)[0])
    rotation = integrate(lambda t: moment(t) / ei, 0.0, length, **opts)[0]
    flexibility = np.array([[length**3 / (3 * ei) + length * s, length**2 / (2 * ei)],
                            [length**2 / (2 * ei), length / ei]])
    expected = np.linalg.solve(flexibility, -np.array([deflection, rotation]))
    np.testing.assert_allclose(frame.reactions[0, 1, 1:], expected, rtol=1e-9)
