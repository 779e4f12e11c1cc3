"""Design checks against textbook results.

Sources (from memory):
- Hibbeler, *Structural Analysis*, influence lines of three-hinged arches: the influence line of the
  moment at the quarter point of a three-hinged parabolic arch changes sign at x = 0.4 L; a uniform
  live load w on its positive part gives the largest sagging moment 3 w L^2 / 160, and on its
  negative part the largest hogging moment -3 w L^2 / 160 (the two areas are equal, since the full
  load, whose funicular the parabola is, gives none).
- Heyman, *The Masonry Arch*; any masonry text: the middle-third rule (no tension while |e| <= d/6)
  and the cracked-section peak stress 2 N / (3 b (d/2 - e)) beyond it.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from formfind.analysis.engine import analyse, frame_model
from formfind.analysis.frame import influence_lines
from formfind.cli import run_cli
from formfind.design.check import check, cracked_stress, patterned_envelope
from formfind.model.case import parse_case
from tests.conftest import BASE_CASE

EXIT_CHECK_FAILED = 7


def _arch(stations=81, extra=""):
    data = tomllib.loads(BASE_CASE + extra)
    data["stations"] = {"count": stations}
    return parse_case(data, "t.toml")


def test_quarter_point_envelope_of_a_patterned_load_is_3wl2_over_160():
    case = _arch()
    axis = case.axis()
    lines = influence_lines(frame_model(case, axis, case.section.at(axis)))
    quarter = int(np.argmin(np.abs(axis.x - 5.0)))
    w, span = 10.0, 20.0
    maximum, minimum = patterned_envelope(lines.M, axis.x, w)
    # the influence line changes sign at 0.4 L (three-hinged parabola, quarter point)
    il = lines.M[:, quarter]
    crossing = axis.x[np.flatnonzero(np.diff(np.sign(il[1:-1])) != 0)[0] + 1]
    assert crossing == pytest.approx(0.4 * span, abs=span / 80)
    # trapezoidal lumping of a kinked influence line: O(h^2), 1e-3 at 80 elements
    assert maximum[quarter] == pytest.approx(3 * w * span**2 / 160, rel=2e-3)
    assert minimum[quarter] == pytest.approx(-3 * w * span**2 / 160, rel=2e-3)


def test_patterned_envelope_equals_brute_force_over_loaded_lengths():
    """Every contiguous loaded length on the station grid, and every pair of them (an influence line
    with two sign changes needs two), never beats the influence-line envelope (common practice)."""
    case = _arch(stations=31)
    axis = case.axis()
    lines = influence_lines(frame_model(case, axis, case.section.at(axis)))
    w = 7.0
    maximum, minimum = patterned_envelope(lines.M, axis.x, w)
    trib = np.zeros(axis.count)
    trib[:-1] += 0.5 * np.diff(axis.x)
    trib[1:] += 0.5 * np.diff(axis.x)
    n = axis.count
    best_hi = np.full(n, -np.inf)
    best_lo = np.full(n, np.inf)
    cumulative = np.vstack([np.zeros(n), np.cumsum(lines.M * (w * trib)[:, None], axis=0)])
    for a in range(n):
        for b in range(a + 1, n + 1):
            effect = cumulative[b] - cumulative[a]
            best_hi = np.maximum(best_hi, effect)
            best_lo = np.minimum(best_lo, effect)
    assert np.all(best_hi <= maximum + 1e-9)
    assert np.all(best_lo >= minimum - 1e-9)
    # for a quarter-point-like station (one sign change) one loaded length attains the envelope
    i = n // 4
    assert best_hi[i] == pytest.approx(maximum[i], rel=1e-12)


def test_middle_third_rule_and_cracked_section_stress():
    b, d, n = 1.0, 0.6, 300.0
    area = b * d
    # within the middle third: linear distribution, zero stress reached exactly at e = d/6
    assert cracked_stress(n, d / 6, b, d) == pytest.approx(2 * n / area)
    assert n / area * (1 - 6 * (d / 6) / d) == pytest.approx(0.0)
    # beyond it: contact length 3 (d/2 - e), triangular block
    e = 0.2
    assert cracked_stress(n, e, b, d) == pytest.approx(2 * n / (3 * b * (d / 2 - e)))
    assert cracked_stress(n, d / 2, b, d) == float("inf")


def test_a_circle_under_loads_it_does_not_follow_fails_and_names_where():
    extra = '\n[check]\ncompression_limit_MPa = 2.0\ntension_limit_MPa = 0.1\neccentricity_limit = "kern"\n'
    data = tomllib.loads(BASE_CASE + extra)
    data["geometry"]["shape"] = "circle"
    case = parse_case(data, "t.toml")
    result = check(case, analyse(case))
    assert not result.passed
    failing = [r for r in result.rows if r.verdict == "fail"]
    assert {r.name for r in failing} >= {"tensile stress", "eccentricity within the kern"}
    for row in failing:
        assert row.combination == "ULS" and row.station is not None and 0.0 <= row.x_m <= 20.0


def test_check_command_exits_7_on_failure_and_writes_the_table(write_case, tmp_path, capsys):
    extra = '\n[check]\ntension_limit_MPa = 0.0\neccentricity_limit = "kern"\n'
    path = write_case(BASE_CASE.replace('rise_m = 4.0', 'rise_m = 4.0\nshape = "circle"') + extra)
    code = run_cli(["check", str(path), "--out", str(tmp_path)])
    out = capsys.readouterr().out
    assert code == EXIT_CHECK_FAILED and "SOME CHECKS FAIL" in out
    table = (tmp_path / "small" / "checks.csv").read_text().splitlines()
    assert table[0].startswith("check,value,limit") and any(",fail," in line for line in table[1:])


def test_fixed_parabolic_arch_influence_lines_match_the_hingeless_table():
    """Karnovsky & Lebed, Appendix Table A.19 (hingeless parabolic arches, I = I_c sec(theta); point-load
    formulas from memory): for a unit load at u = x/L, H = 15 L u^2 (1 - u)^2 / (4 f) and
    R_A = (1 - u)^2 (1 + 2 u). Tolerance 1e-3: chord discretisation at 80 elements and a rib stiff
    enough in compression (A_c / I_c = 1e4) for shortening to be negligible."""
    from formfind.analysis.frame import build_frame
    from formfind.enums import SectionVariation, SupportKind
    from formfind.model.geometry import Axis, Chord, Parabola, place_stations
    from formfind.model.section import Section

    span, rise = 30.0, 6.0
    curve = Parabola(Chord(span), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 81))
    section = Section(200.0, 0.02, 0.8, 2e8, variation=SectionVariation.SECANT).at(axis)
    lines = influence_lines(build_frame(axis, section, SupportKind.FIXED))
    u = axis.x / span
    np.testing.assert_allclose(lines.thrust, 15 * span * u**2 * (1 - u) ** 2 / (4 * rise), atol=1e-3 * span / rise)
    np.testing.assert_allclose(lines.reactions[:, 0, 1], (1 - u) ** 2 * (1 + 2 * u), atol=1e-3)


def test_patterned_load_in_a_combination_equals_brute_force_over_every_pattern():
    """The fibre-stress and eccentricity verdicts with a patterned load added to a combination equal
    the worst over all 2^n loadings of the stations (each station's tributary length loaded or not):
    the definition of the adverse pattern (common practice, no source)."""
    from itertools import product

    from formfind.analysis.frame import solve
    from formfind.design.check import tributary
    from formfind.model.loads import StationLoads

    extra = ('\n[check]\ncompression_limit_MPa = 50.0\ntension_limit_MPa = 50.0\neccentricity_limit = "boundary"\n'
             'patterned_load_kN_m = 8.0\npatterned_factors = { ULS = 1.5 }\n')
    data = tomllib.loads(BASE_CASE + extra)
    data["stations"] = {"count": 13}
    data["supports"] = {"kind": "two_hinged"}
    data["analysis"] = {"buckling": False}
    case = parse_case(data, "t.toml")
    result = analyse(case)
    checked = check(case, result)
    axis, sec = result.axis, result.section
    n = axis.count
    masks = np.array(list(product([0.0, 1.0], repeat=n)))
    w = 1.5 * 8.0 * tributary(axis.x)
    count = masks.shape[0]
    state, station = np.nonzero(masks)
    loads = StationLoads(tuple(f"p{k}" for k in range(count)), ("p",) * count, np.zeros((count, n - 1, 2, 2)),
                         state, axis.x[station], np.stack([np.zeros(state.size), -w[station]], axis=1),
                         np.zeros(count), np.zeros(count), np.zeros((count, 2, 3)))
    patterns = solve(result.frame, loads, displacements=False)
    uls = result.combinations
    M = uls.M[0] + patterns.M
    N = np.minimum(uls.N[0], uls.N_left[0]) + 0.5 * (patterns.N + patterns.N_left)
    A, W = sec.area_m2, sec.section_modulus_m3
    fibres = np.stack([N / A + M / W, N / A - M / W])
    rows = {r.name: r for r in checked.rows}
    assert rows["compressive stress"].value == pytest.approx(-fibres.min() / 1000, rel=1e-9)
    assert rows["tensile stress"].value == pytest.approx(max(fibres.max(), 0) / 1000, rel=1e-9)
    worst = np.where(N < 0, np.abs(M / N), np.inf) / (0.5 * sec.depth_m)
    assert (rows["eccentricity within the boundary"].verdict == "pass") == bool(worst.max() <= 1.0)
    assert rows["eccentricity within the boundary"].utilisation <= worst.max() * (1 + 1e-9)
    # the pattern's own envelope, reported with its loaded lengths
    best = next(r for r in checked.rows if r.name == "patterned load: largest M")
    assert best.value == pytest.approx((patterns.M / 1.5).max(), rel=1e-9)
    assert "kN/m on" in best.state


def test_moving_train_envelope_equals_brute_force_over_positions_both_ways():
    """The train's envelope (one state per position, both directions, at the stated step) equals the
    worst of separate analyses of every position enumerated here by hand (common practice, no source)."""
    from formfind.analysis.frame import build_frame, solve
    from formfind.analysis.response import envelope
    from formfind.enums import SupportKind
    from formfind.model.geometry import Axis, Chord, Parabola, place_stations
    from formfind.model.loads import AxleTrain, LoadCase, PointLoad, case_station_loads
    from formfind.model.section import Section

    span, step = 24.0, 0.5
    offsets, axles = (0.0, 2.0, 3.5), (60.0, 60.0, 40.0)
    curve = Parabola(Chord(span), 5.0)
    axis = Axis.from_curve(curve, place_stations(curve, 49))
    section = Section(0.05, 2e-3, 0.6, 2.1e8).at(axis)
    model = build_frame(axis, section, SupportKind.TWO_HINGED)
    train = case_station_loads(LoadCase("t", (AxleTrain(offsets, axles, step),)), axis, section)
    env = envelope(solve(model, train, displacements=False), "t")
    hi = np.full((3, axis.count), -np.inf)
    lo = np.full((3, axis.count), np.inf)
    count = 0
    for direction in (1, -1):
        lead = 0.0
        while lead <= span + offsets[-1] + 1e-9:
            on = [(lead - o, p) for o, p in zip(offsets, axles, strict=True) if 0.0 <= lead - o <= span]
            loads = tuple(PointLoad(t if direction == 1 else span - t, p) for t, p in on)
            r = solve(model, case_station_loads(LoadCase("p", loads), axis, section), displacements=False)
            for e, (a, b) in enumerate(((r.N, r.N_left), (r.V, r.V_left), (r.M, r.M))):
                hi[e] = np.maximum(hi[e], np.maximum(a[0], b[0]))
                lo[e] = np.minimum(lo[e], np.minimum(a[0], b[0]))
            lead += step
            count += 1
    assert len(env.states) == count
    # the same arithmetic in another order: round-off only
    np.testing.assert_allclose(env.maximum, hi, rtol=1e-9, atol=1e-9 * np.abs(hi).max())
    np.testing.assert_allclose(env.minimum, lo, rtol=1e-9, atol=1e-9 * np.abs(lo).max())


def test_check_json_flag_prints_the_verdict_table_machine_readably(write_case, tmp_path, capsys):
    import json

    extra = '\n[check]\ntension_limit_MPa = 0.0\neccentricity_limit = "kern"\n'
    path = write_case(BASE_CASE.replace('rise_m = 4.0', 'rise_m = 4.0\nshape = "circle"') + extra)
    code = run_cli(["check", str(path), "--out", str(tmp_path), "--json"])
    data = json.loads(capsys.readouterr().out)
    assert code == EXIT_CHECK_FAILED and data["passed"] is False
    saved = json.loads((tmp_path / "small" / "checks.json").read_text())
    assert data == saved
