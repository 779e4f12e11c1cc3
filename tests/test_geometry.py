"""Axis families and the sampled Axis against closed forms of analytic geometry."""

from __future__ import annotations

import numpy as np
import pytest

from formfind.enums import StationSpacing
from formfind.model.geometry import (
    Axis,
    Chord,
    CircularSegment,
    MCurve,
    Parabola,
    PointSpline,
    catenary,
    place_stations,
)


def test_parabola_arc_length_closed_form():
    """Arc length of y = 4 f x (L - x) / L^2 (from memory; any calculus table):
    s = (L/2) sqrt(1 + 16 n^2) + L / (8 n) asinh(4 n), n = f / L."""
    span, rise = 30.0, 7.5
    n = rise / span
    exact = 0.5 * span * np.sqrt(1 + 16 * n**2) + span / (8 * n) * np.arcsinh(4 * n)
    curve = Parabola(Chord(span), rise)
    axis = Axis.from_curve(curve, np.linspace(0, span, 41))
    # cubic Hermite + 4-point Gauss is exact to ~h^4: 1e-8 at 40 segments
    assert axis.length_m == pytest.approx(exact, rel=1e-8)
    assert axis.rise_m == pytest.approx(rise)


@pytest.mark.parametrize("rise", [2.0, 5.0, 10.0])
def test_circle_radius_angle_and_arc_length(rise):
    """Circular segment: R = (c^2 + f^2) / (2 f), half-angle alpha = asin(c / R), arc 2 R alpha."""
    span = 20.0
    c = span / 2
    radius = (c**2 + rise**2) / (2 * rise)
    curve = CircularSegment(Chord(span), rise)
    assert curve.radius_m == pytest.approx(radius)
    x = place_stations(curve, 801, StationSpacing.ARC)
    axis = Axis.from_curve(curve, x)
    alpha = np.arcsin(c / radius)
    assert axis.theta[0] == pytest.approx(alpha, rel=1e-12)
    assert axis.theta[-1] == pytest.approx(-alpha, rel=1e-12)
    # chord polygon at 800 equal arcs: relative error (d_alpha)^2 / 24 < 1e-6
    assert np.sum(axis.chord_lengths) == pytest.approx(2 * radius * alpha, rel=1e-6)
    # the distance to the centre is R everywhere
    centre_y = rise - radius
    np.testing.assert_allclose(np.hypot(axis.x - c, axis.y - centre_y), radius, rtol=1e-12)
    # equal arc steps
    steps = axis.chord_lengths
    assert np.ptp(steps) < 1e-3 * steps.mean()


def test_semicircle_has_vertical_tangents_at_the_springings():
    curve = CircularSegment(Chord(10.0), 5.0)
    axis = Axis.from_curve(curve, place_stations(curve, 101, StationSpacing.ARC))
    assert axis.theta[0] == pytest.approx(np.pi / 2)
    assert np.all(np.isfinite(axis.normal))


def test_catenary_matches_the_hanging_chain():
    """Hanging chain y = f - a (cosh(u / a) - 1), u = x - L/2, through the springings and crown."""
    span, rise = 40.0, 10.0
    curve = catenary(Chord(span), rise)
    a = span / (2 * curve.k)
    assert a * (np.cosh(span / (2 * a)) - 1) == pytest.approx(rise, rel=1e-12)
    x = np.linspace(0, span, 17)
    u = x - span / 2
    np.testing.assert_allclose(curve.ordinate(x), rise - a * (np.cosh(u / a) - 1), atol=1e-10)
    np.testing.assert_allclose(np.tan(curve.angle(x)), -np.sinh(u / a), atol=1e-10)


def test_m_curve_tends_to_the_parabola():
    """Filled-spandrel texts: the m-curve becomes the parabola as m -> 1."""
    span, rise = 12.0, 3.0
    x = np.linspace(0, span, 25)
    near = MCurve(Chord(span), rise, m=1.0 + 1e-7).ordinate(x)
    np.testing.assert_allclose(near, Parabola(Chord(span), rise).ordinate(x), atol=1e-6)
    with pytest.raises(ValueError):
        MCurve(Chord(span), rise, m=1.0)


def test_normals_offsets_and_resampling():
    curve = Parabola(Chord(16.0, 0.0, 2.0), 4.0)
    axis = Axis.from_curve(curve, np.linspace(0, 16.0, 33))
    np.testing.assert_allclose(np.linalg.norm(axis.normal, axis=1), 1.0)
    np.testing.assert_allclose(np.sum(axis.normal * axis.tangent, axis=1), 0.0, atol=1e-15)
    depth = 0.6
    gap = axis.extrados(depth) - axis.intrados(depth)
    np.testing.assert_allclose(np.linalg.norm(gap, axis=1), depth)
    assert np.all(axis.extrados(depth)[:, 1] > axis.intrados(depth)[:, 1])
    fine = axis.resample(np.linspace(0, 16.0, 301))
    np.testing.assert_allclose(fine.y, curve.ordinate(fine.x), atol=1e-6)  # cubic Hermite, h = 0.5 m
    # curvature of a parabola at the crown: y'' = -8 f / L^2
    crown = Axis.from_curve(Parabola(Chord(16.0), 4.0), np.linspace(0, 16.0, 1601))
    assert crown.curvature[800] == pytest.approx(-8 * 4.0 / 16.0**2, rel=1e-4)


def test_required_stations_are_exact_and_count_kept():
    curve = Parabola(Chord(30.0), 6.0)
    x = place_stations(curve, 31, required_x=(7.3, 15.0, 22.51))
    assert {7.3, 15.0, 22.51} <= set(x.tolist())
    assert x.size == 31 and np.all(np.diff(x) > 0)


def test_point_spline_passes_through_its_points():
    xs = (0.0, 4.0, 9.0, 14.0, 20.0)
    ys = (0.0, 3.1, 4.6, 3.9, 0.5)
    curve = PointSpline(xs, ys)
    np.testing.assert_allclose(curve.ordinate(np.array(xs)), ys, atol=1e-12)
    with pytest.raises(ValueError):
        PointSpline((0.0, 3.0, 2.0), (0.0, 1.0, 0.0))


def test_a_tapered_rib_on_a_symmetric_axis_is_symmetric_without_a_station_at_midspan():
    """The taper runs from the geometric crown (the top of the parabola through the highest stations),
    not from whichever of two equal top stations rounding picked."""
    from formfind.enums import SectionVariation
    from formfind.model.section import Section, crown_abscissa

    axis = Axis.from_curve(Parabola(Chord(20.0), 4.0), np.linspace(0.0, 20.0, 40))  # no station at 10 m
    assert crown_abscissa(axis) == pytest.approx(10.0, abs=1e-12)
    rib = Section(0.4, 0.02, 0.8, 3e7, width_m=0.5, variation=SectionVariation.TAPERED, springing_depth_m=1.2)
    depth = rib.at(axis).depth_m
    np.testing.assert_allclose(depth, depth[::-1], atol=1e-12)


def test_spline_slopes_match_scipy_cubic_spline():
    """The banded solve for the tangents of every stretch at once gives the slopes of scipy's
    CubicSpline (reference library): not-a-knot ends from four stations, natural ends for three, the
    chord for two. Tolerance 1e-12 of the largest slope: the same linear system, solved differently."""
    from scipy.interpolate import CubicSpline

    from formfind.model.geometry import spline_slopes

    rng = np.random.default_rng(7)
    x = np.concatenate([[0.0], np.cumsum(rng.uniform(0.2, 1.0, 39))])
    y = np.sin(0.3 * x) + rng.normal(0.0, 0.05, x.size)
    ends = [0, 1, 4, 6, 20, 39]
    for (a, b), got in zip(zip(ends[:-1], ends[1:], strict=True), spline_slopes(x, y, ends), strict=True):
        xs, ys = x[a:b + 1], y[a:b + 1]
        if xs.size == 2:
            want = np.full(2, (ys[1] - ys[0]) / (xs[1] - xs[0]))
        else:
            want = CubicSpline(xs, ys, bc_type="not-a-knot" if xs.size > 3 else "natural")(xs, 1)
        assert np.allclose(got, want, rtol=0, atol=1e-12 * max(1.0, np.abs(want).max()))
