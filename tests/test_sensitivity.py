"""The Jacobian dM/dy of the frame model by the adjoint method against brute-force differences.

Brute force rebuilds and re-solves the whole frame for each moved station (central differences,
step 1e-4 m); the adjoint result must agree to 1e-5 relative (the reference's own truncation error
is about 1e-6)."""

from __future__ import annotations

import numpy as np
import pytest

from formfind.analysis.frame import build_frame, solve
from formfind.analysis.sensitivity import frame_jacobian, statics_jacobian
from formfind.enums import LoadDirection, SupportKind
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, SupportMovement, Temperature, case_station_loads
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


@pytest.mark.parametrize("kind", [SupportKind.TWO_HINGED, SupportKind.FIXED, SupportKind.TIED])
def test_frame_jacobian_matches_brute_force(kind):
    axis, section, loads, free = _setup()
    jac = frame_jacobian(build_frame(axis, section, kind, tie_EA_kN=5e5), loads, free)
    eps = 1e-4
    brute = np.zeros_like(jac)
    for j in np.flatnonzero(free):
        moments = []
        for sign in (1.0, -1.0):
            y = axis.y.copy()
            y[j] += sign * eps
            moved = Axis(axis.x, y, axis.theta)
            moments.append(solve(build_frame(moved, section, kind, tie_EA_kN=5e5), loads, displacements=False).M)
        brute[:, :, j] = (moments[0] - moments[1]) / (2 * eps)
    np.testing.assert_allclose(jac, brute, atol=RTOL * np.abs(brute).max())


def test_statics_jacobian_is_minus_the_thrust_for_vertical_loads():
    """Three-hinged arch, vertical loads, hinge fixed: M = M0 - H (y - chord), so dM_i/dy_j = -H
    delta_ij (Karnovsky & Lebed ch. 4 beam analogy, from memory)."""
    axis, section, _, free = _setup()
    free[10] = False  # the hinge station keeps its ordinate
    loads = case_station_loads(LoadCase("v", (LineLoad(0, 15, 6, 10), PointLoad(4.0, 30.0))), axis, section)
    from formfind.analysis.statics import three_hinged

    thrust = three_hinged(axis, loads, 10).thrust[0]
    jac = statics_jacobian(axis, loads, 10, free)
    expected = np.diag(np.where(free, -thrust, 0.0))
    np.testing.assert_allclose(jac[0], expected, atol=1e-6 * thrust)
