"""Sliding at the joints of an unreinforced ring (`formfind.design.thrust.least_friction`): the least
friction coefficient that some line of thrust within the zone needs. Its properties are checked against
first principles: a funicular ring needs none, the value is the least one (no line found by other means
needs less, and one line needs no more), and the shipped culvert reports it."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import scipy.optimize

from formfind.design.thrust import joint_forces, least_friction, voussoir_weight
from formfind.enums import SupportKind
from formfind.model.geometry import Axis
from formfind.model.loads import LineLoad, LoadCase, case_station_loads
from formfind.model.section import Section

ROOT = Path(__file__).resolve().parents[1]


def _parabola(n: int = 41, span: float = 10.0, rise: float = 3.0) -> Axis:
    x = np.linspace(0.0, span, n)
    return Axis(x, 4 * rise * x * (span - x) / span**2, np.arctan(4 * rise * (span - 2 * x) / span**2))


def test_a_funicular_ring_needs_no_friction():
    """A parabola under a uniform load per horizontal metre is its own line of thrust (common practice,
    no source: the funicular of a uniform load is a parabola); along the axis every joint normal to it
    carries no shear, so no friction is needed (to the bisection's tolerance)."""
    axis = _parabola()
    section = Section.rectangle(1.0, 0.4, elastic_modulus_kN_m2=5e6).at(axis)
    loads = case_station_loads(LoadCase("deck", (LineLoad(0.0, 10.0, 20.0, 20.0),)), axis, section)
    joints = joint_forces(axis, loads, np.full(axis.count, 0.4), SupportKind.FIXED)
    mu, _ = least_friction(joints, 0, 0.5)
    assert mu <= 1e-6


def _ratios(joints, r):
    out = []
    for n_load, v_load in ((joints.N[0], joints.V[0]), (joints.N_left[0], joints.V_left[0])):
        n = n_load + joints.A_N @ r
        v = v_load + joints.A_V @ r
        out.append(np.where(n < 0, np.abs(v) / np.maximum(-n, 1e-300), np.inf))
    return np.maximum(*out).max()


def test_the_friction_found_is_the_least_over_the_lines_of_thrust():
    """A semicircular ring under its own weight (not a funicular): every line of thrust found by scipy's
    linprog with random objectives within the zone needs at least the reported coefficient, and the
    reported coefficient is met by a line (its LP is feasible a hair above it, not a hair below)."""
    r0 = 5.0
    phi = np.linspace(np.pi, 0.0, 61)
    axis = Axis(r0 + r0 * np.cos(phi), r0 * np.sin(phi), phi - np.pi / 2)
    depth = 0.8
    loads = voussoir_weight(axis, depth, 1.0, 20.0)
    joints = joint_forces(axis, loads, np.full(axis.count, depth), SupportKind.FIXED)
    fraction = 1.0
    mu, joint = least_friction(joints, 0, fraction)
    assert 0.0 < mu < 1.0 and joint >= 0
    # the zone constraints as A r <= b for linprog (an independent solver)
    rows, rhs = [], []
    z = fraction * joints.half_depth
    for n_load in (joints.N[0], joints.N_left[0]):
        for sign in (1.0, -1.0):  # sign M + z N <= 0
            rows.append(sign * joints.A_M + z[:, None] * joints.A_N)
            rhs.append(-(sign * joints.M[0] + z * n_load))
    A, b = np.vstack(rows), np.concatenate(rhs)
    rng = np.random.default_rng(11)
    found = []
    for _ in range(40):
        res = scipy.optimize.linprog(rng.normal(size=3), A_ub=A, b_ub=b, bounds=[(None, None)] * 3, method="highs")
        if res.status == 0:
            found.append(res.x)
    assert len(found) > 10
    for a in found:  # vertices, and points between them
        assert _ratios(joints, a) >= mu * (1 - 1e-3)
        for c in found[:5]:
            assert _ratios(joints, 0.5 * (a + c)) >= mu * (1 - 1e-3)


def test_the_culvert_reports_sliding_for_each_combination():
    import formfind

    case = formfind.load_case(ROOT / "cases" / "masonry-culvert.toml")
    checks = formfind.check(case, formfind.analyse(case))
    rows = [r for r in checks.rows if r.name == "thrust line: sliding"]
    assert [r.combination for r in rows] == ["ULS-traffic", "ULS-spread"]
    assert all(0 < r.value < r.limit == pytest.approx(0.6) for r in rows)
