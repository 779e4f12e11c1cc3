"""The linearised moments (`MomentModel`) against brute-force differences of the whole engines.

Brute force rebuilds and re-solves the whole frame (or the exact statics) for each moved station
(central differences, step 1e-4 m); the structured Jacobian must agree to 1e-5 relative (the
reference's own truncation error is about 1e-6). With loads that follow the shape the brute force
rebuilds the loads on every moved axis too."""

from __future__ import annotations

import numpy as np
import pytest

from formfind.analysis.frame import build_frame, solve
from formfind.analysis.sensitivity import frame_model_moments, statics_model
from formfind.analysis.statics import three_hinged
from formfind.enums import FillReference, LoadDirection, Projection, SupportKind
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import (
    FillLoad,
    LineLoad,
    LoadCase,
    NormalPressure,
    PointLoad,
    SelfWeight,
    SupportMovement,
    Temperature,
    case_station_loads,
    combine_density_rates,
    density_derivative,
)
from formfind.model.section import Section

RTOL = 1e-5


def _setup():
    curve = Parabola(Chord(20.0), 5.0)
    axis = Axis.from_curve(curve, place_stations(curve, 21))
    section = Section(0.4, 0.02, 0.6, 3e7, thermal_expansion_per_C=1e-5).at(axis)
    loads = case_station_loads(LoadCase("a", (LineLoad(0, 12, 5, 9), PointLoad(13.3, 40.0, 3.0),
                                              LineLoad(0, 10, 2, 2, LoadDirection.RIGHT), Temperature(15, 5),
                                              SupportMovement(0.002))), axis, section)
    free = np.ones(axis.count, dtype=bool)
    free[[0, -1]] = False
    return axis, section, loads, free


def _brute(axis, solve_on, eps=1e-4):
    """Central differences of a whole engine run at every interior station."""
    columns = []
    for j in range(axis.count):
        if j in (0, axis.count - 1):
            columns.append(None)
            continue
        moments = []
        for sign in (1.0, -1.0):
            y = axis.y.copy()
            y[j] += sign * eps
            moments.append(solve_on(Axis(axis.x, y, axis.theta)))
        columns.append((moments[0] - moments[1]) / (2 * eps))
    k, n = columns[1].shape
    return np.stack([np.zeros((k, n)) if c is None else c for c in columns], axis=-1)


@pytest.mark.parametrize("rigid", [False, True])
@pytest.mark.parametrize("kind", [SupportKind.TWO_HINGED, SupportKind.FIXED, SupportKind.TIED])
def test_frame_linearisation_matches_brute_force(kind, rigid):
    """Also with an axially rigid rib, whose constraints turn with the moved elements."""
    axis, section, loads, _ = _setup()
    model = build_frame(axis, section, kind, tie_EA_kN=5e5, axially_rigid=rigid)
    moments = frame_model_moments(model, loads, solve(model, loads, displacements=False))
    brute = _brute(axis, lambda moved: solve(build_frame(moved, section, kind, tie_EA_kN=5e5, axially_rigid=rigid),
                                             loads, displacements=False).M)
    np.testing.assert_allclose(moments.dense(), brute, atol=RTOL * np.abs(brute).max())


MOVING = LoadCase("moving", (SelfWeight(), NormalPressure(3.0, 2.0, 15.0), FillLoad(19.0, 1.0, cover_m=1.0),
                             FillLoad(5.0, 1.0, surface_y_m=7.0, reference=FillReference.AXIS),
                             LineLoad(3, 17, 1, 2, LoadDirection.RIGHT, Projection.VERTICAL),
                             LineLoad(2, 12, 4, 4, projection=Projection.ARC), PointLoad(7.3, 20.0, -4.0)))


@pytest.mark.parametrize("kind", [SupportKind.THREE_HINGED, SupportKind.TWO_HINGED, SupportKind.FIXED, SupportKind.TIED])
def test_linearisation_with_loads_that_follow_the_shape_matches_brute_force(kind):
    """Self-weight per arc, normal pressure, fill (surface by cover above the crown, or fixed), loads per
    vertical projection and per arc length, a point load with a horizontal component: the loads are
    rebuilt on every moved axis of the brute force. 21 stations, so the crown is a station and the
    fill surface's dependence on it is smooth."""
    axis, section, _, _ = _setup()
    loads = case_station_loads(MOVING, axis, section)
    rates = combine_density_rates([density_derivative(MOVING, axis, section)], np.ones((1, 1)))
    if kind is SupportKind.THREE_HINGED:
        moments = statics_model(axis, loads, three_hinged(axis, loads, 10), 10, rates)
        brute = _brute(axis, lambda moved: three_hinged(moved, case_station_loads(MOVING, moved, section), 10).M)
    else:
        model = build_frame(axis, section, kind, tie_EA_kN=5e5)
        moments = frame_model_moments(model, loads, solve(model, loads, displacements=False), rates)
        brute = _brute(axis, lambda moved: solve(build_frame(moved, section, kind, tie_EA_kN=5e5),
                                                 case_station_loads(MOVING, moved, section), displacements=False).M)
    np.testing.assert_allclose(moments.dense(), brute, atol=RTOL * np.abs(brute).max())
    coeff = np.random.default_rng(1).normal(size=moments.M0.shape)
    np.testing.assert_allclose(moments.gradient(coeff)[1:-1], np.einsum("ki,kij->j", coeff, moments.dense())[1:-1],
                               rtol=1e-12, atol=1e-9 * np.abs(brute).max())


def test_statics_linearisation_is_minus_the_thrust_for_vertical_loads():
    """Three-hinged arch, vertical loads, hinge fixed: M = M0 - H (y - chord), so dM_i/dy_j = -H
    delta_ij (Karnovsky & Lebed ch. 4 beam analogy, from memory)."""
    axis, section, _, _ = _setup()
    loads = case_station_loads(LoadCase("v", (LineLoad(0, 15, 6, 10), PointLoad(4.0, 30.0))), axis, section)
    response = three_hinged(axis, loads, 10)
    jac = statics_model(axis, loads, response, 10).dense()
    thrust = response.thrust[0]
    free = np.ones(axis.count, dtype=bool)
    free[[0, 10, -1]] = False
    expected = np.diag(np.where(free, -thrust, 0.0))
    np.testing.assert_allclose(jac[0][:, free], expected[:, free], atol=1e-9 * thrust)
