"""The axis nearest an architect's curve whose bending stays within a limit (objective = "nearest").

Sources:
- Beam analogy of the three-hinged arch (from memory; e.g. Hibbeler, *Structural Analysis*, three-hinged
  arches): M(x) = M0(x) - H y(x), with M0 the simply supported beam's moment and H = M0(crown) / rise.
  For a load w uniform on plan over the span and q over the left half, M0 follows in closed form; with
  these loads the nearest axis is one linear program, rebuilt here from the closed form and solved by
  scipy's linprog (HiGHS), independently of formfind's engines.
- Hibbeler (three-hinged arches): under dead load plus live load q on either half, the least peak
  moment of any axis is q L^2 / 64 (the parabola of dead + q / 2): the limit below which no axis exists.
- DXF: $INSUNITS 4 = millimetres, 6 = metres (the DXF reference, header variables).
"""

from __future__ import annotations

import hashlib
import tomllib

import ezdxf
import numpy as np
import pytest
from scipy.optimize import linprog

from formfind.cli import run_cli
from formfind.design.governing import analyse_governing
from formfind.design.shape import find_shape
from formfind.enums import ShapeMethod
from formfind.errors import CaseError, FormFindingError
from formfind.model.case import load_case, parse_case
from formfind.model.geometry import Chord, CircularSegment, Parabola
from tests.conftest import BASE_CASE

SPAN, RISE, W, Q = 20.0, 4.0, 20.0, 8.0
LINE_CASES = [
    {"name": "dead", "action": "permanent", "loads": [{"type": "line", "start_kN_m": W}]},
    {"name": "live_left", "loads": [{"type": "line", "from_x_m": 0.0, "to_x_m": SPAN / 2, "start_kN_m": Q}]},
    {"name": "live_right", "loads": [{"type": "line", "from_x_m": SPAN / 2, "to_x_m": SPAN, "start_kN_m": Q}]},
]
LINE_COMBOS = [{"name": "L", "factors": {"dead": 1.0, "live_left": 1.0}},
               {"name": "R", "factors": {"dead": 1.0, "live_right": 1.0}}]


def _circle(x):
    return CircularSegment(Chord(SPAN), RISE).ordinate(np.asarray(x, dtype=float))


def _data(limit, *, supports="three_hinged", self_weight=False, find=None, stations=41):
    data = tomllib.loads(BASE_CASE)
    data["stations"] = {"count": stations}
    data["supports"] = {"kind": supports}
    if not self_weight:
        data["cases"] = LINE_CASES
        data["combinations"] = LINE_COMBOS
    xs = np.linspace(0.0, SPAN, 21)
    data["find"] = {"objective": "nearest", "reference_x_m": xs.tolist(), "reference_y_m": _circle(xs).tolist(),
                    "moment_limit_kNm": limit, **(find or {})}
    return data


def _peak(case, axis) -> float:
    response, _, _ = analyse_governing(case, axis, case.section)
    return float(np.abs(response.M).max())


# ------------------------------------------------------------------------------ loose and tight
@pytest.mark.parametrize("supports", ["three_hinged", "two_hinged", "fixed"])
def test_a_loose_limit_returns_the_reference_itself(supports):
    case = parse_case(_data(1e5, supports=supports, self_weight=True))
    result = find_shape(case)
    assert result.method is ShapeMethod.REFERENCE
    assert result.value < 1e-6
    np.testing.assert_allclose(result.axis.y, case.find.reference.ordinate(result.axis.x), atol=1e-6)
    assert result.nearest.peak_moment_kNm == pytest.approx(result.nearest.reference_peak_moment_kNm, rel=1e-12)


@pytest.mark.parametrize("supports,self_weight", [("three_hinged", False), ("three_hinged", True),
                                                  ("two_hinged", True), ("fixed", True)])
def test_tightening_the_limit_moves_the_axis_away_and_never_exceeds_it(supports, self_weight):
    """The deviation grows as the limit falls, and the exact engine finds every peak within its limit
    (round-off of the engines: 1e-9)."""
    case0 = parse_case(_data(1e5, supports=supports, self_weight=self_weight))
    reference_peak = find_shape(case0).nearest.reference_peak_moment_kNm
    deviations = []
    for fraction in (0.9, 0.75, 0.6):
        limit = fraction * reference_peak
        case = parse_case(_data(limit, supports=supports, self_weight=self_weight))
        result = find_shape(case)
        assert _peak(case, result.axis) <= limit * (1 + 1e-9)
        assert result.nearest.peak_moment_kNm <= limit * (1 + 1e-9)
        deviations.append(result.nearest.largest_deviation_m)
    assert deviations[0] > 1e-4
    assert all(b > a for a, b in zip(deviations, deviations[1:], strict=False)), deviations


def test_the_exact_program_matches_an_independent_lp_of_the_beam_analogy():
    """Three-hinged, loads on plan: M = M0 - H y is exact, so the least largest deviation is an LP. Rebuilt
    from the closed-form M0 and solved by scipy's linprog; the two agree to the solvers' tolerance."""
    limit = 60.0
    case = parse_case(_data(limit, find={"fair": False}))
    result = find_shape(case)
    assert result.method is ShapeMethod.PROGRAM
    x = result.axis.x
    n = x.size
    r = case.find.reference.ordinate(x)
    r[0] = r[-1] = 0.0
    half = SPAN / 2
    m0_dead = W * x * (SPAN - x) / 2
    # live load q on the left half of a simply supported beam: reactions 3qL/8 (left), qL/8 (right)
    m0_left = np.where(x <= half, 3 * Q * SPAN / 8 * x - Q * x**2 / 2, Q * SPAN / 8 * (SPAN - x))
    m0_right = m0_left[::-1]
    crown = int(np.argmin(np.abs(x - half)))
    rows_ub, rhs_ub = [], []
    for m0 in (m0_dead + m0_left, m0_dead + m0_right):
        h = m0[crown] / RISE
        for i in range(n):  # |m0_i - h y_i| <= limit
            row = np.zeros(n + 1)
            row[i] = -h
            rows_ub += [row, -row]
            rhs_ub += [limit - m0[i], limit + m0[i]]
    for i in range(n):  # |y_i - r_i| <= t
        row = np.zeros(n + 1)
        row[i], row[n] = 1.0, -1.0
        rows_ub.append(row)
        rhs_ub.append(r[i])
        row = np.zeros(n + 1)
        row[i], row[n] = -1.0, -1.0
        rows_ub.append(row)
        rhs_ub.append(-r[i])
    for i in range(1, n - 1):  # concave (the default), and no higher than the crown's rise
        row = np.zeros(n + 1)
        row[i - 1], row[i], row[i + 1] = 1.0, -2.0, 1.0
        rows_ub.append(row)
        rhs_ub.append(0.0)
        row = np.zeros(n + 1)
        row[i] = 1.0
        rows_ub.append(row)
        rhs_ub.append(RISE)
    eq = np.zeros((3, n + 1))
    eq[0, 0] = eq[1, n - 1] = eq[2, crown] = 1.0
    cost = np.zeros(n + 1)
    cost[n] = 1.0
    lp = linprog(cost, A_ub=np.array(rows_ub), b_ub=np.array(rhs_ub), A_eq=eq, b_eq=[0.0, 0.0, RISE],
                 bounds=[(None, None)] * n + [(0, None)], method="highs")
    assert lp.status == 0
    assert result.value == pytest.approx(lp.fun, rel=1e-6, abs=1e-9)
    assert result.dual_bound == pytest.approx(lp.fun, rel=1e-6, abs=1e-9)  # the certificate


def test_a_limit_below_the_least_peak_is_refused_with_that_peak():
    """Dead load plus live load on either half: no axis bends less than q L^2 / 64 (Hibbeler)."""
    least = Q * SPAN**2 / 64
    data = _data(0.9 * least, find={"rise_max_m": 2 * RISE, "rise_min_m": RISE})  # the rise may grow: no cap
    data["find"]["reference_y_m"] = Parabola(Chord(SPAN), RISE).ordinate(np.array(data["find"]["reference_x_m"])).tolist()
    with pytest.raises(FormFindingError, match=r"least peak .* about 50(\.0+)? kNm"):
        find_shape(parse_case(data))


# ------------------------------------------------------------------------------ reference files
def _dxf(path, unit_code, scale, origin, extra=False):
    doc = ezdxf.new("R2010", units=unit_code)
    xs = np.linspace(0.0, SPAN, 81)
    pts = [(origin[0] + scale * a, origin[1] + scale * b) for a, b in zip(xs, _circle(xs), strict=True)]
    doc.modelspace().add_lwpolyline(pts, dxfattribs={"layer": "ARCH"})
    if extra:
        doc.modelspace().add_lwpolyline([(0, 0), (1, 1)], dxfattribs={"layer": "OTHER"})
    doc.saveas(path)


@pytest.mark.parametrize("unit_code,scale", [(4, 1000.0), (6, 1.0)])
def test_a_dxf_reference_reads_back_at_true_size_in_either_unit(tmp_path, unit_code, scale):
    """A polyline drawn in mm or m, anywhere on the sheet: read in metres, its left end on the left
    springing; its vertices come back to round-off."""
    _dxf(tmp_path / "curve.dxf", unit_code, scale, (5000.0, -300.0))
    data = _data(1e5)
    del data["find"]["reference_x_m"], data["find"]["reference_y_m"]
    data["find"]["reference_file"] = str(tmp_path / "curve.dxf")
    curve = parse_case(data).find.reference
    xs = np.linspace(0.0, SPAN, 81)
    np.testing.assert_allclose(curve.x_m, xs, atol=1e-9)
    np.testing.assert_allclose(curve.y_m, _circle(xs), atol=1e-9)
    result = find_shape(parse_case(data))
    assert result.value < 1e-6


def test_formfinds_own_drawing_reads_back_as_a_reference(tmp_path):
    """The axis layer of formfind's DXF (in mm) names the found axis again, to a micrometre."""
    case_file = tmp_path / "case.toml"
    case_file.write_text(BASE_CASE, encoding="utf-8")
    assert run_cli(["run", str(case_file), "--out", str(tmp_path / "out"), "--no-buckling", "-q"]) == 0
    found = find_shape(load_case(case_file)).axis
    data = tomllib.loads(BASE_CASE)
    data["find"] = {"objective": "nearest", "reference_file": str(tmp_path / "out" / "small" / "axis.dxf"),
                    "reference_layer": "FF_AXIS", "moment_limit_kNm": 1e5}
    curve = parse_case(data).find.reference
    np.testing.assert_allclose(curve.ordinate(found.x), found.y, atol=1e-6)


def test_a_csv_reference_in_millimetres(tmp_path):
    xs = np.linspace(0.0, SPAN, 11)
    text = "x,y\n" + "".join(f"{1000 * a:.6f},{1000 * b:.6f}\n" for a, b in zip(xs, _circle(xs), strict=True))
    (tmp_path / "ref.csv").write_text(text, encoding="utf-8")
    data = _data(1e5)
    del data["find"]["reference_x_m"], data["find"]["reference_y_m"]
    data["find"].update(reference_file=str(tmp_path / "ref.csv"), reference_unit="mm")
    curve = parse_case(data).find.reference
    np.testing.assert_allclose(curve.ordinate(xs), _circle(xs), atol=1e-9)
    assert curve.sha256 == hashlib.sha256(text.encode()).hexdigest()  # named in the report beside the case file


@pytest.mark.parametrize("change,key,message", [
    ({"moment_limit_kNm": None}, "find.moment_limit_kNm", "missing"),
    ({"reference_file": "elsewhere.csv"}, "find.reference_x_m", "either"),
    ({"reference_x_m": [0.0, 10.0, 30.0]}, "find.reference_x_m", "span"),
    ({"reference_y_m": [0.5] + [4.0] * 19 + [0.0]}, "find.reference_x_m", "left end"),
])
def test_bad_references_name_the_key(change, key, message):
    data = _data(100.0)
    for k, v in change.items():
        if v is None:
            del data["find"][k]
        else:
            data["find"][k] = v
    if "reference_x_m" in change:
        data["find"]["reference_y_m"] = [0.0, 4.0, 0.0]
    with pytest.raises(CaseError, match=message) as info:
        parse_case(data)
    assert info.value.key == key


def test_bad_reference_files_name_the_file_and_the_problem(tmp_path):
    _dxf(tmp_path / "two.dxf", 4, 1000.0, (0.0, 0.0), extra=True)
    _dxf(tmp_path / "unitless.dxf", 0, 1000.0, (0.0, 0.0))
    _dxf(tmp_path / "metres-read-as-mm.dxf", 6, 1.0, (0.0, 0.0))
    cases = {"two.dxf": ("exactly one", {}), "unitless.dxf": ("reference_unit", {}),
             "metres-read-as-mm.dxf": ("check the unit", {"reference_unit": "mm"}),
             "missing.csv": ("not a readable file", {})}
    for name, (message, extra) in cases.items():
        data = _data(100.0)
        del data["find"]["reference_x_m"], data["find"]["reference_y_m"]
        data["find"].update(reference_file=str(tmp_path / name), **extra)
        with pytest.raises(CaseError, match=message) as info:
            parse_case(data)
        assert info.value.key == "find.reference_file"
        assert "\n" not in str(info.value)


def test_nearest_is_written_and_printed(tmp_path, capsys):
    import json

    case_file = tmp_path / "near.toml"
    data = _data(60.0)
    text = BASE_CASE + "\n[find]\nobjective = \"nearest\"\nmoment_limit_kNm = 40.0\n" + \
        f"reference_x_m = {data['find']['reference_x_m']}\nreference_y_m = {data['find']['reference_y_m']}\n"
    case_file.write_text(text, encoding="utf-8")
    assert run_cli(["find", str(case_file), "--out", str(tmp_path / "out")]) == 0
    printed = capsys.readouterr().out
    assert "nearest axis: largest deviation from the reference" in printed
    shape = json.loads((tmp_path / "out" / "small" / "shape.json").read_text(encoding="utf-8"))
    assert shape["objective"] == "nearest" and shape["unit"] == "m"
    assert shape["nearest"]["peak_moment_kNm"] <= 40.0 * (1 + 1e-9)
    assert shape["nearest"]["largest_deviation_m"] == pytest.approx(shape["value"], rel=1e-12)
