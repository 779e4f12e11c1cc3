"""Form-finding machinery: the exact per-station method against the LP, the structured program against
a dense LP built independently, the certificate, infeasibility messages, the command line."""

from __future__ import annotations

import json
import tomllib

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from formfind.analysis.sensitivity import MomentModel
from formfind.cli import run_cli
from formfind.design.program import ProgramData, Structure, solve_program
from formfind.design.separable import per_station_minimax
from formfind.design.shape import find_shape
from formfind.enums import Objective, Solver
from formfind.errors import FormFindingError
from formfind.model.case import parse_case
from tests.conftest import BASE_CASE, ROOT, examples

EXIT_FORM_FINDING = 6


def _structure(n: int, k: int, objective=Objective.MINIMAX, solver=Solver.CLARABEL) -> Structure:
    eye = np.eye(n)
    equality = sp.csr_matrix(eye[[0, n - 1]])
    return Structure(objective, n, k, equality, (("rise_max", sp.csr_matrix(eye[1:-1])),), solver)


@settings(max_examples=examples(25), deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(5, 30), k=st.integers(1, 6))
def test_per_station_method_equals_the_lp(seed, n, k):
    """Without coupling constraints the minimax separates: the exact method and the LP agree (the
    issue's cross-check), within 3e-7 relative: the LP's smoothest-axis stage may give up 1e-7 of the
    optimum by design, plus the solver's own tolerance."""
    rng = np.random.default_rng(seed)
    a = rng.normal(0, 100, (k, n))
    h = np.repeat(rng.uniform(20, 200, (k, 1)), n, axis=1)
    upper = np.full(n, 50.0)
    structure = _structure(n, k)
    data = ProgramData(model=MomentModel.diagonal(np.arange(n, dtype=float), np.zeros(n), a, h), c=np.ones((k, n)),
                       w=np.ones(n), g=np.zeros(2), q=(upper[1:-1],), lower=np.full(n, -np.inf),
                       upper=np.full(n, np.inf))
    lp = solve_program(structure, data)
    lower, upper_b = np.full(n, -1e3), upper.copy()
    lower[[0, -1]] = upper_b[[0, -1]] = 0.0
    _, values = per_station_minimax(a, h, lower, upper_b)
    assert lp.value == pytest.approx(values.max(), rel=3e-7, abs=1e-9)
    assert lp.value >= values.max() * (1 - 1e-9)  # the exact method is never beaten
    # the certificate closes, to within the 1e-6 the per-station tie-break costs it (program.TIE_BREAK)
    assert lp.dual_bound <= lp.value * (1 + 1e-9)
    assert lp.dual_bound == pytest.approx(lp.value, rel=3e-6, abs=1e-8)


@pytest.mark.parametrize("kind", ["two_hinged", "fixed", "three_hinged_free_rise"])
def test_structured_program_equals_a_dense_lp_of_the_same_linearisation(kind):
    """The program holds the linearised moments through running sums; the same minimax built with the
    dense Jacobian (every dM_i/dy_j written out) and solved by scipy's linprog must give the same
    optimum, to 1e-7 relative to the moments (both solvers' tolerances; an optimum may vanish)."""
    from scipy.optimize import linprog

    from formfind.design.constraints import build_limits
    from formfind.design.governing import analyse_governing
    from formfind.design.sequential import linearise, program_data

    data = tomllib.loads(BASE_CASE)
    if kind == "three_hinged_free_rise":
        data["find"] = {"rise_min_m": 3.0, "rise_max_m": 5.0}
    else:
        data["supports"] = {"kind": kind}
    data["stations"] = {"count": 25}
    case = parse_case(data, "t.toml")
    axis = case.axis()
    response, loads, model = analyse_governing(case, axis, case.section)
    moments = linearise(case, axis, case.section, response, loads, model)
    limits = build_limits(case, axis.x, axis.y, loads.count)
    prog = program_data(case, limits, axis, case.section, response, moments, 0.5)
    ours = solve_program(limits.structure, prog, axis.y, select=False)
    jac = moments.dense()
    n, k = axis.count, loads.count
    a0 = moments.M0 - np.einsum("kij,j->ki", jac, axis.y)
    rows = jac.reshape(k * n, n)
    ones = np.ones((k * n, 1))
    blocks = [blk.toarray() for _, blk in limits.structure.blocks]
    a_ub = np.vstack([np.hstack([rows, -ones]), np.hstack([-rows, -ones])]
                     + [np.hstack([b, np.zeros((b.shape[0], 1))]) for b in blocks])
    b_ub = np.concatenate([-a0.ravel(), a0.ravel()] + list(prog.q))
    a_eq = np.hstack([limits.structure.equality.toarray(), np.zeros((limits.structure.equality.shape[0], 1))])
    bounds = [(lo, up) for lo, up in zip(prog.lower, prog.upper, strict=True)] + [(None, None)]
    cost = np.zeros(n + 1)
    cost[-1] = 1.0
    dense = linprog(cost, A_ub=a_ub, b_ub=b_ub, A_eq=a_eq, b_eq=limits.g, bounds=bounds, method="highs")
    assert dense.status == 0
    scale = float(np.abs(moments.M0).max())
    assert ours.value == pytest.approx(dense.fun, rel=1e-7, abs=1e-7 * scale)
    assert ours.dual_bound == pytest.approx(dense.fun, rel=1e-5, abs=1e-7 * scale)  # the tie-break costs it a little


def test_highs_and_clarabel_agree_on_a_program_and_its_certificate():
    rng = np.random.default_rng(3)
    n, k = 40, 5
    a = rng.normal(0, 50, (k, n))
    h = np.repeat(rng.uniform(50, 150, (k, 1)), n, axis=1)
    values = []
    for solver in (Solver.HIGHS, Solver.CLARABEL):
        structure = _structure(n, k, solver=solver)
        data = ProgramData(model=MomentModel.diagonal(np.arange(n, dtype=float), np.zeros(n), a, h),
                           c=np.ones((k, n)), w=np.ones(n), g=np.zeros(2), q=(np.full(n - 2, 10.0),),
                           lower=np.full(n, -np.inf), upper=np.full(n, np.inf))
        sol = solve_program(structure, data, select=False)
        values.append((sol.value, sol.dual_bound))
    assert values[0][0] == pytest.approx(values[1][0], rel=1e-6)
    assert values[0][1] == pytest.approx(values[1][1], rel=1e-5)


def _case(find):
    data = tomllib.loads(BASE_CASE)
    data["find"] = find
    return parse_case(data, "t.toml")


def test_conflicting_constraints_are_named():
    case = _case({"clearance_x_m": [8.0, 12.0], "clearance_y_m": [4.5, 4.5], "max_slope": 2.0})
    with pytest.raises(FormFindingError, match="clearance"):
        find_shape(case)


def test_highs_and_clarabel_agree_on_an_lp():
    values = []
    for solver in ("clarabel", "highs"):
        values.append(find_shape(_case({"objective": "minimax", "max_slope": 3.0, "solver": solver})).value)
    assert values[0] == pytest.approx(values[1], rel=1e-5)


def test_find_and_run_commands_write_the_axis(tmp_path, capsys):
    case = str(ROOT / "cases" / "footbridge.toml")
    assert run_cli(["find", case, "--out", str(tmp_path), "--stations", "41", "-q"]) == 0
    shape = json.loads((tmp_path / "footbridge" / "shape.json").read_text())
    assert shape["unit"] == "kNm" and shape["dual_bound"] <= shape["value"] * (1 + 1e-6)
    rows = (tmp_path / "footbridge" / "axis.csv").read_text().splitlines()
    assert rows[0].startswith("station,x_m,y_m,theta_deg") and len(rows) == 42
    assert run_cli(["run", case, "--out", str(tmp_path / "r"), "--stations", "41"]) == 0
    out = capsys.readouterr().out
    assert "found axis" in out and "peak M kNm" in out


def test_infeasible_case_exits_6_with_one_line(write_case, tmp_path, capsys):
    text = BASE_CASE + '\n[find]\nclearance_x_m = [8.0, 12.0]\nclearance_y_m = [4.5, 4.5]\n'
    code = run_cli(["find", str(write_case(text)), "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == EXIT_FORM_FINDING and err.count("\n") == 1 and "clearance" in err
    assert not (tmp_path / "o" / "small" / "shape.json").exists()


def test_found_axis_keeps_rise_bounds_envelope_slope_and_curvature():
    """Every limit given is met by the found axis (rise between bounds, site envelope on the extrados
    measured vertically, slope and curvature bounds), checked on the axis itself."""
    find = {"rise_min_m": 3.0, "rise_max_m": 4.5, "envelope_x_m": [0.0, 20.0], "envelope_y_m": [4.9, 4.9],
            "max_slope": 1.2, "max_curvature_per_m": 0.2}
    case = _case(find)
    result = find_shape(case)
    axis = result.axis
    x, y = axis.x, axis.y
    chord = np.interp(x, x[[0, -1]], y[[0, -1]])
    crown = int(np.argmin(np.abs(x - 10.0)))
    tol = 1e-6
    assert 3.0 - tol <= y[crown] - chord[crown] and np.max(y - chord) <= 4.5 + tol
    extrados = y + 0.5 * case.section.at(axis).depth_m / np.cos(axis.theta)
    assert np.max(extrados) <= 4.9 + 1e-4  # vertical half-depth of the previous iterate: within the last step
    assert np.max(np.abs(np.diff(y) / np.diff(x))) <= 1.2 + tol
    h = np.diff(x)
    second = (np.diff(y)[1:] / h[1:] - np.diff(y)[:-1] / h[:-1]) / (0.5 * (h[1:] + h[:-1]))
    assert np.max(np.abs(second)) <= 0.2 + tol
    assert result.method.startswith("sequential")
