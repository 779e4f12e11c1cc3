"""Fair axes: the kink, flat-run and reversal detector against shapes whose turns are known, the
automatic symmetry test, the fairness step of form finding on every shipped case, and the simple
curves near a found axis.

Sources:
- Elementary geometry (from memory): the exterior angle of a regular polygon is its central angle, so
  chords of equal length inscribed in a circle all turn by the angle each subtends at the centre; the
  sagitta relation R = (c^2 / 4 + s^2) / (2 s) for a circular segment of chord c and rise s.
- The thresholds of the detector (3 x the mean turn, 5 % of the span straight) are ours: common
  practice, no source. The shipped cases' test (largest turn at most 3 x the mean) is the measure the
  project set itself.
"""

from __future__ import annotations

import json
import tomllib
from dataclasses import replace

import numpy as np
import pytest

from formfind.cli import run_cli
from formfind.design.fairness import assess, turns_deg
from formfind.design.governing import governing_loads, mirror_symmetric
from formfind.design.shape import find_shape
from formfind.design.simple_curves import nearby_curves
from formfind.model.case import load_case, parse_case
from formfind.model.geometry import Axis, Chord, Parabola, axis_through
from tests.conftest import BASE_CASE, ROOT

SHIPPED = sorted((ROOT / "cases").glob("*.toml"))


def _axis(x: np.ndarray, y: np.ndarray) -> Axis:
    return axis_through(np.asarray(x, float), np.asarray(y, float))


# ------------------------------------------------------------------------------ the detector
def test_chords_of_a_circle_turn_by_the_angle_they_subtend():
    """Equal chords inscribed in a circle: every turn is the central angle of one chord (exterior
    angle of a regular polygon), so the largest turn is the mean and nothing is flagged. Tolerance:
    round-off of arctan2 on chords of ~1 m."""
    n, half_angle, radius = 25, np.radians(60.0), 10.0
    phi = np.linspace(-half_angle, half_angle, n)
    axis = _axis(radius * np.sin(phi), radius * np.cos(phi))
    expected = np.degrees(2 * half_angle / (n - 1))
    np.testing.assert_allclose(turns_deg(axis), -expected, rtol=1e-12)
    report = assess(axis)
    assert report.ratio == pytest.approx(1.0, rel=1e-12)
    assert report.fair and report.warnings() == ()


def test_a_kink_is_found_with_its_station_and_angle():
    """A parabola with a vertex pushed up at one station: the turn there is the difference of the two
    chords' directions (arctan of their slopes), flagged with its station."""
    x = np.linspace(0.0, 20.0, 41)
    y = Parabola(Chord(20.0), 4.0).ordinate(x)
    y[12] += 0.15
    report = assess(_axis(x, y))
    expected = np.degrees(np.arctan2(y[13] - y[12], 0.5) - np.arctan2(y[12] - y[11], 0.5))
    kinks = {k.station: k for k in report.kinks}
    assert 12 in kinks
    assert kinks[12].turn_deg == pytest.approx(expected, rel=1e-12)
    assert any("station 12" in w and f"{expected:.3f} deg" in w for w in report.warnings())
    assert not report.fair


def test_a_straight_run_between_curves_and_a_reversal_are_reported():
    # two circular arcs joined by a tangent straight (a flat run), then an S curve (a reversal)
    x = np.linspace(0.0, 30.0, 61)
    y = np.where(x < 10, -0.02 * (x - 10) ** 2, np.where(x <= 20, 0.0, -0.02 * (x - 20) ** 2)) + 2.0
    flat = assess(_axis(x, y))
    assert len(flat.flat_runs) == 1
    a, b = flat.flat_runs[0]
    assert 9.5 <= a <= 10.5 and 19.5 <= b <= 20.5
    s_curve = assess(_axis(x, np.sin(2 * np.pi * x / 30.0)))
    assert s_curve.reversals and abs(s_curve.reversals[0] - 15.0) <= 0.5


# ------------------------------------------------------------------------------ symmetry
def _mirror_case(live_loads):
    data = tomllib.loads(BASE_CASE)
    data["cases"][1]["loads"] = live_loads
    return parse_case(data)


def test_mirrored_load_pairs_make_the_problem_symmetric():
    left = {"type": "line", "from_x_m": 0.0, "to_x_m": 10.0, "start_kN_m": 5.0}
    right = {"type": "line", "from_x_m": 10.0, "to_x_m": 20.0, "start_kN_m": 5.0}
    data = tomllib.loads(BASE_CASE)
    data["cases"][1]["loads"] = [left]
    data["cases"].append({"name": "live_right", "loads": [right]})
    data["combinations"].append({"name": "ULS-right", "factors": {"dead": 1.35, "live_right": 1.5}})
    case = parse_case(data)
    axis = case.axis()
    assert mirror_symmetric(case, axis, governing_loads(case, axis, case.section))
    one_sided = _mirror_case([left])
    assert not mirror_symmetric(one_sided, one_sided.axis(), governing_loads(one_sided, one_sided.axis(),
                                                                            one_sided.section))


def test_vertical_point_loads_mirror_despite_negative_zero():
    """A vertical point load mirrored has a horizontal component of -0.0: still its own mirror."""
    case = _mirror_case([{"type": "point", "x_m": 5.0, "down_kN": 10.0},
                         {"type": "point", "x_m": 15.0, "down_kN": 10.0}])
    assert mirror_symmetric(case, case.axis(), governing_loads(case, case.axis(), case.section))


# ------------------------------------------------------------------------------ shipped cases
@pytest.fixture(scope="module")
def shipped_results():
    return {path.stem: (load_case(path), find_shape(load_case(path))) for path in SHIPPED}


@pytest.mark.parametrize("name", [p.stem for p in SHIPPED])
def test_every_shipped_case_finds_a_fair_axis(shipped_results, name):
    """The project's measure: the largest turn between neighbouring chords at most 3 x the mean, and
    no kink the detector flags (each shipped case, its own settings)."""
    case, result = shipped_results[name]
    report = assess(result.axis)
    assert report.ratio <= 3.0, result.warnings
    assert not report.kinks
    assert result.value <= result.optimum * (1 + case.find.fairness_tolerance) * (1 + 1e-9)
    assert result.checked_value == pytest.approx(result.value, rel=1e-9)


@pytest.mark.parametrize("name", [p.stem for p in SHIPPED])
def test_symmetric_shipped_cases_give_symmetric_axes(shipped_results, name):
    case, result = shipped_results[name]
    axis = case.axis()
    if not mirror_symmetric(case, axis, governing_loads(case, axis, case.section)):
        assert not result.symmetric
        return
    assert result.symmetric
    rise = result.axis.rise_m
    assert np.abs(result.axis.y - result.axis.y[::-1]).max() <= 1e-9 * rise


def test_fairness_trades_a_stated_fraction_of_the_optimum_for_a_fair_roof():
    """The roof's optimum bends the rib to tune its states (a flat top, a kink near a springing); the
    fair axis costs at most the tolerance and removes them."""
    case = load_case(ROOT / "cases" / "timber-roof.toml")
    raw = find_shape(replace(case, find=replace(case.find, fair=False)))
    fair = find_shape(case)
    assert raw.fairness.kinks and raw.value == pytest.approx(raw.optimum, rel=1e-4)
    assert fair.optimum == pytest.approx(raw.optimum, rel=1e-4)
    assert fair.fairness.ratio < raw.fairness.ratio / 3
    assert 0.0 <= fair.fairness_cost <= case.find.fairness_tolerance + 1e-9


# ------------------------------------------------------------------------------ simple curves
def test_simple_curves_near_a_parabolic_axis():
    """A found parabola (uniform load on plan, three-hinged): the parabola deviates by round-off; the
    circle through the same springings and rise, from the sagitta relation, by its own difference."""
    data = tomllib.loads(BASE_CASE)
    data["cases"] = [{"name": "g", "loads": [{"type": "line", "start_kN_m": 10.0}]}]
    data.pop("combinations")
    result = find_shape(parse_case(data))
    curves = {c.name: c for c in result.simple_curves}
    assert abs(curves["parabola"].deviation_m) <= 1e-9
    span, rise = 20.0, 4.0
    radius = (span**2 / 4 + rise**2) / (2 * rise)
    x = result.axis.x
    circle = np.sqrt(radius**2 - (x - span / 2) ** 2) - (radius - rise)
    difference = circle - result.axis.y
    assert curves["circle"].deviation_m == pytest.approx(difference[np.argmax(np.abs(difference))], abs=1e-9)
    assert set(curves) == {"parabola", "circle", "catenary"}
    assert nearby_curves(result.axis) == result.simple_curves


# ------------------------------------------------------------------------------ what the user sees
def test_find_reports_fairness_symmetry_and_simple_curves(tmp_path, capsys):
    code = run_cli(["find", str(ROOT / "cases" / "masonry-culvert.toml"), "--out", str(tmp_path), "-q"])
    assert code == 0
    data = json.loads((tmp_path / "masonry-culvert" / "shape.json").read_text(encoding="utf-8"))
    assert data["symmetric"] is True
    assert data["fairness"]["largest_over_mean"] <= 3.0
    assert {c["curve"] for c in data["simple_curves"]} == {"parabola", "circle", "catenary"}
    assert data["value"] <= data["optimum"] * 1.01 * (1 + 1e-9)
    assert all("concavity limit" in w for w in data["warnings"] if "straight" in w)
    code = run_cli(["find", str(ROOT / "cases" / "masonry-culvert.toml"), "--out", str(tmp_path), "--overwrite"])
    printed = capsys.readouterr().out
    assert "shape: symmetric" in printed and "simple curves through the springings" in printed
