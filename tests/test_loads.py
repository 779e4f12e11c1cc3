"""Station loads: resultants and moments of each load kind, trains and combinations."""

from __future__ import annotations

import numpy as np
import pytest

from formfind.enums import TrainDirection
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import (
    AxleTrain,
    Combination,
    FillLoad,
    LineLoad,
    LoadCase,
    PointLoad,
    SelfWeight,
    Temperature,
    build_load_set,
    case_station_loads,
    fill_intensity,
)
from formfind.model.section import Section


@pytest.fixture
def axis():
    curve = Parabola(Chord(24.0), 6.0)
    return Axis.from_curve(curve, place_stations(curve, 25))


@pytest.fixture
def section(axis):
    return Section.rectangle(0.5, 1.0, elastic_modulus_kN_m2=3e7, unit_weight_kN_m3=24.0).at(axis)


def test_self_weight_total_is_weight_times_polygon_length(axis, section):
    st = case_station_loads(LoadCase("g", (SelfWeight(),)), axis, section)
    expected = 24.0 * 0.5 * 1.0 * np.sum(axis.chord_lengths)
    np.testing.assert_allclose(st.total_force()[0], [0.0, -expected], rtol=1e-12)


def test_partial_line_load_inside_an_element_keeps_resultant_and_moment(axis, section):
    """A linear load from 3.3 m to 7.9 m (ends between stations): resultant and first moment about
    x = 0 equal the closed forms of a trapezoid (common practice, no source)."""
    a, b, wa, wb = 3.3, 7.9, 4.0, 10.0
    st = case_station_loads(LoadCase("q", (LineLoad(a, b, wa, wb),)), axis, section)
    total = 0.5 * (wa + wb) * (b - a)
    centroid = a + (b - a) * (wa + 2 * wb) / (3 * (wa + wb))
    f = st.dist[0]
    assert -0.5 * f[:, :, 1].sum() == pytest.approx(total, rel=1e-12)
    # moment of the vertical densities about x = 0: integral of x(t) f(t) dt per element
    x0, dx = axis.x[:-1], np.diff(axis.x)
    fa, fb = -f[:, 0, 1], -f[:, 1, 1]
    moment = np.sum(x0 * 0.5 * (fa + fb) + dx * (fa / 6 + fb / 3))
    assert moment == pytest.approx(total * centroid, rel=1e-12)


def test_fill_intensity_at_crown_and_springing(axis, section):
    fill = FillLoad(unit_weight_kN_m3=20.0, width_m=2.0, cover_m=0.5, surcharge_kPa=10.0)
    w = fill_intensity(fill, axis, section)
    crown = int(np.argmax(axis.y))
    assert w[crown] == pytest.approx(2.0 * (20.0 * 0.5 + 10.0))
    extrados_0 = axis.y[0] + 0.5 / np.cos(axis.theta[0])
    surface = axis.y[crown] + 0.5 + 0.5
    assert w[0] == pytest.approx(2.0 * (20.0 * (surface - extrados_0) + 10.0))


def test_axle_train_positions_and_combination_expansion(axis, section):
    train = AxleTrain((0.0, 2.0), (50.0, 30.0), step_m=1.0, direction=TrainDirection.BOTH)
    positions = train.positions(24.0)
    assert len(positions) == 2 * 27  # lead from 0 to 26 m in 1 m steps, both directions
    live = LoadCase("axles", (train,))
    dead = LoadCase("dead", (SelfWeight(), Temperature(10.0)))
    ls = build_load_set((dead, live), (Combination("U", (("dead", 1.35), ("axles", 1.5))),), axis, section)
    assert ls.cases.count == 1 + 54
    assert ls.combinations.count == 54
    assert ls.combinations.names[0] == "U@ltr=0.000m"
    # every combination state holds 1.35 x dead and 1.5 x one train position
    dead_total = ls.cases.total_force()[0]
    on_span = [sum(p.down_kN for p in train.axles_at(lead, tag, 24.0)) for lead, tag in positions]
    expected = 1.35 * dead_total[1] - 1.5 * np.array(on_span)
    np.testing.assert_allclose(ls.combinations.total_force()[:, 1], expected, rtol=1e-12)
    np.testing.assert_allclose(ls.combinations.temperature_uniform_C, 13.5)


def test_point_loads_keep_their_abscissa(axis, section):
    st = case_station_loads(LoadCase("p", (PointLoad(5.25, 10.0, -2.0),)), axis, section)
    assert st.point_x.tolist() == [5.25]
    assert st.point_force.tolist() == [[-2.0, -10.0]]
