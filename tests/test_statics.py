"""Property tests of the exact three-hinged statics engine over random valid load sets.

Invariants (common practice, no source): reactions balance the applied loads; the bending moment
vanishes at the two springing pins and the crown hinge; the response is linear (case A + case B
equals the combination A + B).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from formfind.analysis.statics import three_hinged
from formfind.enums import LoadDirection, Projection
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis, Chord, CircularSegment, Parabola, place_stations
from formfind.model.loads import (
    Combination,
    LineLoad,
    LoadCase,
    NormalPressure,
    PointLoad,
    SelfWeight,
    build_load_set,
    case_station_loads,
)
from formfind.model.section import Section
from tests.conftest import examples

EQ_RTOL = 1e-9  # the requirement: global equilibrium to 1e-9 relative

spans = st.floats(8.0, 120.0)
ratios = st.floats(0.08, 0.45)
fracs = st.floats(0.0, 1.0)
mags = st.floats(-200.0, 200.0)


@st.composite
def arches(draw):
    span = draw(spans)
    rise = draw(ratios) * span
    dy = draw(st.floats(-0.2, 0.2)) * span
    kind = draw(st.sampled_from(["parabola", "circle"]))
    chord = Chord(span, 0.0, dy)
    curve = Parabola(chord, rise) if kind == "parabola" else CircularSegment(chord, min(rise, 0.45 * span))
    hinge = draw(st.floats(0.25, 0.75)) * span
    x = place_stations(curve, draw(st.integers(9, 80)), required_x=(hinge,))
    return Axis.from_curve(curve, x), hinge


@st.composite
def load_sets(draw, span):
    loads = []
    for _ in range(draw(st.integers(1, 5))):
        kind = draw(st.sampled_from(["point", "line", "pressure", "self"]))
        if kind == "point":
            loads.append(PointLoad(draw(fracs) * span, draw(mags), draw(mags)))
        elif kind == "line":
            a, b = sorted([draw(fracs) * span, draw(fracs) * span])
            if b - a < 1e-3 * span:
                b = min(span, a + 0.1 * span)
                a = b - 0.1 * span
            loads.append(
                LineLoad(a, b, draw(mags), draw(mags),
                         draw(st.sampled_from(list(LoadDirection))), draw(st.sampled_from(list(Projection))))
            )
        elif kind == "pressure":
            loads.append(NormalPressure(draw(mags)))
        else:
            loads.append(SelfWeight(draw(st.floats(0.5, 2.0))))
    return tuple(loads)


def _section(axis):
    return Section(area_m2=0.2, second_moment_m4=0.02, depth_m=0.6, elastic_modulus_kN_m2=3e7,
                   unit_weight_kN_m3=25.0).at(axis)


def _independent_totals(loads, axis, section):
    """Resultant force (x right, y up) of the loads, summed from their descriptions by quadrature."""
    fx = fy = 0.0
    xs, ys = axis.x, axis.y
    for ld in loads:
        if isinstance(ld, PointLoad):
            fx += ld.right_kN
            fy -= ld.down_kN
        elif isinstance(ld, LineLoad):
            # grid over the loaded length holding every polygon vertex: trapezoid rule is exact there
            a, b = ld.from_x_m, ld.to_x_m
            grid = np.union1d(np.linspace(a, b, 2001), xs[(xs > a) & (xs < b)])
            w = np.interp(grid, [a, b], [ld.start_kN_m, ld.end_kN_m])
            mid = 0.5 * (grid[1:] + grid[:-1])
            seg = np.searchsorted(xs, mid, side="right").clip(1, xs.size - 1) - 1
            slope = (np.diff(ys) / np.diff(xs))[seg]
            per = {Projection.HORIZONTAL: 1.0, Projection.VERTICAL: np.abs(slope),
                   Projection.ARC: np.sqrt(1 + slope**2)}[ld.projection]
            total = np.sum(0.5 * (w[1:] + w[:-1]) * np.diff(grid) * per)
            if ld.direction is LoadDirection.DOWN:
                fy -= total
            else:
                fx += total
        elif isinstance(ld, NormalPressure):
            # pressure on the polygon: resultant p * (y_B - y_A, -(x_B - x_A)) of the chord AB
            fx += ld.inward_kN_m * (ys[-1] - ys[0])
            fy -= ld.inward_kN_m * (xs[-1] - xs[0])
        else:
            w = ld.factor * section.weight_kN_m
            fy -= np.sum(0.5 * (w[1:] + w[:-1]) * axis.chord_lengths)
    return np.array([fx, fy])


@settings(max_examples=examples(60), deadline=None)
@given(data=st.data())
def test_reactions_balance_the_applied_loads(data):
    axis, hinge = data.draw(arches())
    loads = data.draw(load_sets(axis.span_m))
    section = _section(axis)
    st_loads = case_station_loads(LoadCase("a", loads), axis, section)
    r = three_hinged(axis, st_loads, int(np.argmin(np.abs(axis.x - hinge))))
    applied = _independent_totals(loads, axis, section)
    reaction = r.reactions[0, :, :2].sum(axis=0)
    scale = max(np.abs(applied).max(), np.abs(r.reactions[0]).max(), 1e-6)
    # the independent quadrature is exact for piecewise-linear loads: round-off only
    np.testing.assert_allclose(reaction + applied, 0.0, atol=EQ_RTOL * scale)
    np.testing.assert_allclose(st_loads.total_force()[0], applied, atol=EQ_RTOL * scale)
    np.testing.assert_allclose(reaction + st_loads.total_force()[0], 0.0, atol=EQ_RTOL * scale)


@settings(max_examples=examples(60), deadline=None)
@given(data=st.data())
def test_moment_vanishes_at_the_three_hinges(data):
    axis, hinge = data.draw(arches())
    loads = data.draw(load_sets(axis.span_m))
    section = _section(axis)
    c = int(np.argmin(np.abs(axis.x - hinge)))
    r = three_hinged(axis, case_station_loads(LoadCase("a", loads), axis, section), c)
    scale = max(np.abs(r.reactions).max(), 1.0) * axis.span_m
    for station in (0, c, axis.count - 1):
        assert abs(r.M[0, station]) <= EQ_RTOL * scale


@settings(max_examples=examples(40), deadline=None)
@given(data=st.data(), fa=st.floats(-3.0, 3.0), fb=st.floats(-3.0, 3.0))
def test_superposition_of_cases_equals_the_combination(data, fa, fb):
    axis, hinge = data.draw(arches())
    span = axis.span_m
    case_a = LoadCase("A", data.draw(load_sets(span)))
    case_b = LoadCase("B", data.draw(load_sets(span)))
    section = _section(axis)
    ls = build_load_set((case_a, case_b), (Combination("AB", (("A", fa), ("B", fb))),), axis, section)
    c = int(np.argmin(np.abs(axis.x - hinge)))
    cases = three_hinged(axis, ls.cases, c)
    combo = three_hinged(axis, ls.combinations, c)
    scale = max(np.abs(cases.reactions).max(), 1.0)
    for name in ("N", "V", "M", "N_left", "V_left"):
        expected = fa * getattr(cases, name)[0] + fb * getattr(cases, name)[1]
        np.testing.assert_allclose(getattr(combo, name)[0], expected, atol=1e-9 * scale * span)
    np.testing.assert_allclose(combo.reactions[0], fa * cases.reactions[0] + fb * cases.reactions[1],
                               atol=1e-9 * scale * span)


def test_point_load_exactly_at_a_station_gives_a_shear_jump():
    """A point load P at a station: V_left - V_right = P cos(theta) there (common practice, no source)."""
    curve = Parabola(Chord(20.0), 4.0)
    axis = Axis.from_curve(curve, place_stations(curve, 21))
    st_loads = case_station_loads(LoadCase("p", (PointLoad(5.0, down_kN=10.0),)), axis, _section(axis))
    r = three_hinged(axis, st_loads, 10)
    i = 5
    assert r.V_left[0, i] - r.V[0, i] == pytest.approx(10.0 * np.cos(axis.theta[i]), rel=1e-12)
    assert r.N_left[0, i] - r.N[0, i] == pytest.approx(-10.0 * np.sin(axis.theta[i]), rel=1e-12)


def test_hinge_on_the_springing_chord_is_a_mechanism():
    x = np.linspace(0.0, 10.0, 11)
    y = np.where(x <= 5.0, 0.0, 0.0) + np.sin(np.pi * x / 10.0) * (np.abs(x - 5.0) > 1e-9)
    axis = Axis(x, y, np.zeros_like(x))
    loads = case_station_loads(LoadCase("p", (PointLoad(3.0, down_kN=1.0),)), axis, _section(axis))
    with pytest.raises(AnalysisError, match="mechanism"):
        three_hinged(axis, loads, 5)


def test_envelope_of_a_moving_train_equals_brute_force():
    """The envelope over train positions equals the max/min over all states (common practice)."""
    from formfind.analysis.response import envelope
    from formfind.model.loads import AxleTrain

    curve = Parabola(Chord(20.0), 4.0)
    axis = Axis.from_curve(curve, place_stations(curve, 41))
    train = AxleTrain((0.0, 1.5, 3.0), (30.0, 30.0, 20.0), step_m=0.25)
    st_loads = case_station_loads(LoadCase("t", (train,)), axis, _section(axis))
    r = three_hinged(axis, st_loads, 20)
    env = envelope(r, "t")
    np.testing.assert_array_equal(env.maximum[2], r.M.max(axis=0))
    np.testing.assert_array_equal(env.minimum[2], r.M.min(axis=0))
    np.testing.assert_array_equal(env.maximum[1], np.maximum(r.V, r.V_left).max(axis=0))
    k = env.max_state[2, 10]
    assert r.M[k, 10] == env.maximum[2, 10]


def test_regression_a_load_within_the_station_tolerance_has_no_lever_arm_at_the_hinge():
    """Found by the property test above on a fresh clone: a point load 8e-9 m from the left springing
    of an 8 m arch counts as standing at the springing (within 1e-9 of the span), but kept its 8e-9 m
    lever arm, so the springing's moment read P x 8e-9 instead of 0."""
    curve = Parabola(Chord(8.0, 0.3, -0.2), 2.4)
    axis = Axis.from_curve(curve, place_stations(curve, 9))
    section = _section(axis)
    r = three_hinged(axis, case_station_loads(LoadCase("a", (PointLoad(8e-9, 500.0, 300.0),)), axis, section), 4)
    scale = np.abs(r.reactions).max() * axis.span_m  # round-off only: 1e-12 of it
    assert abs(r.M[0, 0]) <= 1e-12 * scale and abs(r.M[0, 4]) <= 1e-12 * scale
