"""The exact statics engine against the textbook closed forms of the three-hinged arch.

Sources (from memory; the formulas are in every structural-analysis text):
- Karnovsky & Lebed, *Advanced Methods of Structural Analysis*, ch. 4 (three-hinged arches):
  beam analogy M = M0 - H y, H = M0(C) / f, N and Q from the tangent angle,
  N = -(Q0 sin(phi) + H cos(phi)), Q = Q0 cos(phi) - H sin(phi) (compression negative here).
- Hibbeler, *Structural Analysis*, three-hinged arch section: the parabola is the funicular of a
  load uniform on plan, H = w L^2 / (8 f); half-span load gives M_max = w L^2 / 64 at the quarter
  points.
- Megson, *Structural and Stress Analysis*, arches: supports at different levels.

Tolerance: the engine is exact for the chord polygon through the stations, and vertical loads do
not depend on the polygon's ordinates between stations, so vertical-load results must match to
round-off: relative 1e-10 of the problem's force or moment scale.
"""

from __future__ import annotations

import numpy as np
import pytest

from formfind.analysis.statics import three_hinged
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, case_station_loads
from formfind.model.section import Section

RTOL = 1e-10  # round-off only: see the module docstring


def _section(axis: Axis):
    return Section(area_m2=0.1, second_moment_m4=0.01, depth_m=0.5, elastic_modulus_kN_m2=2e8).at(axis)


def _parabola_axis(span: float, rise: float, count: int, required=()) -> Axis:
    curve = Parabola(Chord(span), rise)
    return Axis.from_curve(curve, place_stations(curve, count, required_x=tuple(required)))


def _solve(axis: Axis, loads: tuple, hinge_x: float):
    section = _section(axis)
    st = case_station_loads(LoadCase("c", loads), axis, section)
    return three_hinged(axis, st, int(np.argmin(np.abs(axis.x - hinge_x))))


def test_parabola_under_uniform_load_has_no_bending_and_textbook_thrust():
    """Hibbeler: parabola is funicular for w on plan; H = w L^2 / (8 f), N = -H / cos(theta)."""
    span, rise, w = 42.0, 9.5, 17.0
    axis = _parabola_axis(span, rise, 85)
    r = _solve(axis, (LineLoad(0.0, span, w, w),), span / 2)
    thrust = w * span**2 / (8 * rise)
    assert r.thrust[0] == pytest.approx(thrust, rel=RTOL)
    assert np.max(np.abs(r.M)) <= RTOL * thrust * rise
    # pure compression along the axis: N = -H / cos(theta), V = 0
    np.testing.assert_allclose(r.N[0], -thrust / np.cos(axis.theta), rtol=1e-9)
    assert np.max(np.abs(r.V)) <= 1e-9 * thrust


@pytest.mark.parametrize("a_frac", [0.1, 0.3, 0.5, 0.77])
def test_point_load_anywhere_matches_beam_analogy(a_frac):
    """Karnovsky & Lebed ch. 4: R_A = P (L - a) / L, H = M0(C) / f, M = M0 - H y, N and Q from phi."""
    span, rise, p = 30.0, 6.0, 100.0
    a = a_frac * span
    axis = _parabola_axis(span, rise, 61)
    r = _solve(axis, (PointLoad(a, down_kN=p),), span / 2)

    ra = p * (span - a) / span
    m0 = np.where(axis.x <= a, ra * axis.x, ra * axis.x - p * (axis.x - a))
    m0_crown = ra * span / 2 - (p * (span / 2 - a) if a < span / 2 else 0.0)
    thrust = m0_crown / rise
    q0 = np.where(axis.x < a, ra, ra - p)  # beam shear just right of each station
    q0[axis.x == a] = ra - p
    phi = axis.theta

    assert r.reactions[0, 0, 1] == pytest.approx(ra, rel=RTOL)
    assert r.reactions[0, 1, 1] == pytest.approx(p - ra, rel=RTOL)
    assert r.thrust[0] == pytest.approx(thrust, rel=RTOL)
    np.testing.assert_allclose(r.M[0], m0 - thrust * axis.y, atol=RTOL * p * span)
    interior = slice(0, -1)  # the last station reports its left side
    np.testing.assert_allclose(
        r.N[0, interior], -(q0 * np.sin(phi) + thrust * np.cos(phi))[interior], atol=RTOL * p * 10
    )
    np.testing.assert_allclose(
        r.V[0, interior], (q0 * np.cos(phi) - thrust * np.sin(phi))[interior], atol=RTOL * p * 10
    )


def test_half_span_load_gives_wl2_over_64_at_quarter_points():
    """Hibbeler: uniform w on half the span of a three-hinged parabola: |M|max = w L^2 / 64 at L/4."""
    span, rise, w = 40.0, 8.0, 12.0
    axis = _parabola_axis(span, rise, 81, required=(span / 4, 3 * span / 4))
    r = _solve(axis, (LineLoad(0.0, span / 2, w, w),), span / 2)
    quarter = int(np.argmin(np.abs(axis.x - span / 4)))
    three_quarter = int(np.argmin(np.abs(axis.x - 3 * span / 4)))
    assert r.M[0, quarter] == pytest.approx(w * span**2 / 64, rel=RTOL)
    assert r.M[0, three_quarter] == pytest.approx(-w * span**2 / 64, rel=RTOL)
    assert np.max(np.abs(r.M)) == pytest.approx(w * span**2 / 64, rel=RTOL)
    assert r.thrust[0] == pytest.approx(w * span**2 / (16 * rise), rel=RTOL)


def test_funicular_polygon_of_point_loads_has_no_bending():
    """Any statics text (funicular polygon): the polygon y = M0(x) / H through the three hinges carries
    its point loads with M = 0 at every vertex; H = M0(C) / y_C."""
    span = 24.0
    xs = np.array([4.0, 9.0, 12.0, 17.0, 21.0])
    ps = np.array([30.0, 55.0, 20.0, 70.0, 40.0])
    hinge_x, hinge_y = 12.0, 5.0

    def m0(x):
        ra = np.sum(ps * (span - xs)) / span
        return ra * x - np.sum(ps * np.clip(x - xs[:, None], 0.0, None).T, axis=1)

    thrust = float(m0(np.array([hinge_x]))[0]) / hinge_y
    x = np.array([0.0, *xs, span])
    y = m0(x) / thrust
    # tangent angle of each vertex: mean of the adjacent segments (any value works for M)
    seg = np.arctan(np.diff(y) / np.diff(x))
    theta = np.concatenate([[seg[0]], 0.5 * (seg[:-1] + seg[1:]), [seg[-1]]])
    axis = Axis(x, y, theta)
    loads = tuple(PointLoad(float(a), down_kN=float(p)) for a, p in zip(xs, ps, strict=True))
    r = _solve(axis, loads, hinge_x)
    assert r.thrust[0] == pytest.approx(thrust, rel=RTOL)
    assert np.max(np.abs(r.M)) <= RTOL * thrust * hinge_y


def test_unequal_springing_levels_point_load():
    """Megson, arches with supports at different levels: two moment equations give H and V_A.

    A at (0, 0), B at (L, h), hinge C at (c, y_c), vertical load P at a (a < c).
    Whole arch, moments about B:   V_A L - H_A h - P (L - a) = 0   (H_A acts at A, lever h below B)
    Left part, moments about C:    V_A c - H_A y_c - P (c - a) = 0
    """
    span, h, rise = 32.0, 3.0, 7.0
    a, p = 5.0, 80.0
    curve = Parabola(Chord(span, 0.0, h), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 65, required_x=(a,)))
    c = span / 2
    yc = float(curve.ordinate(np.array([c]))[0])
    lhs = np.array([[span, -h], [c, -yc]])
    rhs = np.array([p * (span - a), p * (c - a)])
    va, ha = np.linalg.solve(lhs, rhs)
    r = _solve(axis, (PointLoad(a, down_kN=p),), c)
    assert r.reactions[0, 0, 1] == pytest.approx(va, rel=RTOL)
    assert r.reactions[0, 0, 0] == pytest.approx(ha, rel=RTOL)
    assert r.reactions[0, 1, 0] == pytest.approx(-ha, rel=RTOL)
    assert r.reactions[0, 1, 1] == pytest.approx(p - va, rel=RTOL)
    # M = V_A x - H_A y - P <x - a>
    m = va * axis.x - ha * axis.y - p * np.clip(axis.x - a, 0.0, None)
    np.testing.assert_allclose(r.M[0], m, atol=RTOL * p * span)


def test_unequal_springings_sheared_parabola_stays_funicular():
    """Common practice, no source: adding a linear term to a funicular axis changes only the support
    reactions, so the sheared parabola through A, C and B carries w on plan without bending, and
    H = w L^2 / (8 f) with f measured from the chord AB at midspan."""
    span, h, rise, w = 50.0, 6.0, 10.0, 9.0
    curve = Parabola(Chord(span, 1.0, 1.0 + h), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 101))
    r = _solve(axis, (LineLoad(0.0, span, w, w),), span / 2)
    assert r.thrust[0] == pytest.approx(w * span**2 / (8 * rise), rel=RTOL)
    assert np.max(np.abs(r.M)) <= RTOL * w * span**2


def test_circle_under_radial_pressure_is_in_pure_compression():
    """Any statics text: a circular arch under uniform normal pressure p has N = -p R and M = 0 (the
    pressure on every chord of the inscribed polygon passes through the centre, so the polygon is
    funicular too)."""
    from formfind.model.geometry import CircularSegment
    from formfind.model.loads import NormalPressure

    span, rise, pressure = 20.0, 6.0, 15.0
    curve = CircularSegment(Chord(span), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 73))
    r = _solve(axis, (NormalPressure(pressure),), span / 2)
    radius = curve.radius_m
    scale = pressure * radius
    assert np.max(np.abs(r.M)) <= 1e-9 * scale * radius
    # N resolved on the smooth tangent; the resultant at a vertex is exactly p R in magnitude
    np.testing.assert_allclose(np.hypot(r.N[0], r.V[0]), scale, rtol=1e-9)
    np.testing.assert_allclose(r.N[0], -scale, rtol=2e-3)  # tangent vs chord direction, O(h)
