"""Trade studies: the textbook thrust across a sweep, failed points recorded, identical tables from
every executor, a bounded number of points in flight, and the command line."""

from __future__ import annotations

import multiprocessing
import tomllib
from concurrent.futures import Future, ProcessPoolExecutor

import pytest

from formfind.design.study import evaluate, grid, pareto_front, points_of, run_study
from formfind.model.case import parse_case
from formfind.output.study_files import groups_of
from formfind.output.tables import study_header, study_line
from tests.conftest import run_formfind

UNIFORM = """
[case]
name = "sweep"
[geometry]
span_m = 20.0
rise_m = 4.0
[supports]
kind = "three_hinged"
hinge_x_m = 10.0
[section]
width_m = 0.4
depth_m = 0.8
elastic_modulus_MPa = 30000
unit_weight_kN_m3 = 25
[stations]
count = 21
[analysis]
buckling = false
[[cases]]
name = "deck"
action = "permanent"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = 20.0
  start_kN_m = 12.0
"""


def _case(extra: str = ""):
    return parse_case(tomllib.loads(UNIFORM + extra), "sweep.toml")


def _table(case, rows) -> str:
    groups = groups_of(case)
    return study_header(groups) + "".join(study_line(r, groups) for r in rows)


def test_thrust_follows_w_l2_over_8f_across_the_sweep():
    """Hibbeler, *Structural Analysis* (three-hinged arches; from memory): a uniform load w per
    horizontal metre on a three-hinged arch of span L and rise f gives H = w L^2 / (8 f), and the
    parabola that form finding returns carries it without bending."""
    case = _case()
    points = grid((20.0, 30.0), (0.1, 0.2, 0.35))
    rows = list(run_study(case, points))
    assert [r.status for r in rows] == ["ok"] * 6
    for r in rows:
        expected = 12.0 * r.span_m**2 / (8.0 * r.rise_m)
        assert r.max_thrust_kN == pytest.approx(expected, rel=1e-9)  # exact statics of the funicular
        assert r.peak_M_all_kNm < 1e-6 * expected * r.rise_m


def test_an_infeasible_point_is_recorded_and_the_others_complete():
    # a clearance line 3.5 m up over the middle: the 2 m rise cannot clear it, the others can
    case = _case("[find]\nclearance_x_m = [8.0, 12.0]\nclearance_y_m = [3.5, 3.5]\n")
    rows = list(run_study(case, grid((20.0,), (0.1, 0.3, 0.4))))
    assert [r.status for r in rows] == ["infeasible", "ok", "ok"]
    assert "clearance" in rows[0].reason
    assert rows[1].max_thrust_kN == pytest.approx(12.0 * 400 / (8 * 6.0), rel=1e-6)


def test_serial_process_pool_and_dask_give_identical_tables():
    case = _case()
    points = grid((20.0, 24.0), (0.15, 0.25))
    serial = _table(case, run_study(case, points))
    with ProcessPoolExecutor(2, mp_context=multiprocessing.get_context("spawn")) as pool:
        pooled = _table(case, run_study(case, points, pool))
    assert pooled == serial  # bitwise: the same arithmetic in each process
    distributed = pytest.importorskip("dask.distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        dasked = _table(case, run_study(case, points, client.get_executor(), window=4))
    assert dasked == serial


class _Counting:
    """A serial executor that records how many points are in flight at most."""

    def __init__(self) -> None:
        self.outstanding = 0
        self.most = 0

    def submit(self, fn, *args):
        self.outstanding += 1
        self.most = max(self.most, self.outstanding)
        future = Future()
        future.set_result(fn(*args))
        original = future.result

        def result(timeout=None):
            self.outstanding -= 1
            return original(timeout)

        future.result = result
        return future


def test_only_a_window_of_points_is_in_flight():
    case = _case()
    executor = _Counting()
    rows = list(run_study(case, grid((20.0,), tuple(0.1 + 0.02 * k for k in range(9))), executor, window=3))
    assert len(rows) == 9 and [r.index for r in rows] == list(range(9))
    assert executor.most == 3


def test_pareto_front_keeps_the_non_dominated_points():
    import numpy as np

    thrust = np.array([3.0, 1.0, 2.0, 2.5, np.nan, 1.5])
    moment = np.array([1.0, 5.0, 2.0, 2.5, 0.1, 5.5])
    assert pareto_front(thrust, moment).tolist() == [1, 2, 0]


def test_study_table_in_the_case_file_and_a_depth_sweep():
    case = _case("[study]\nrise_over_span = [0.2, 0.3]\ndepth_m = [0.6, 0.9]\n")
    points = points_of(case)
    assert [(p.rise_m, p.depth_m) for p in points] == [(4.0, 0.6), (4.0, 0.9), (6.0, 0.6), (6.0, 0.9)]
    row = evaluate(case, points[1])
    # rib volume of a 0.4 x 0.9 rib along the parabola's length
    assert row.volume_m3 == pytest.approx(0.4 * 0.9 * row.length_m, rel=1e-9)


def test_study_command_writes_its_files_and_refuses_bad_ranges(tmp_path):
    path = tmp_path / "sweep.toml"
    path.write_text(UNIFORM, encoding="utf-8")
    proc = run_formfind("study", str(path), "--rise-over-span", "0.1:0.3:3", "--serial", "--out", str(tmp_path))
    assert proc.returncode == 0, proc.stderr
    folder = tmp_path / "sweep"
    assert (folder / "study.csv").read_text().count("\n") == 4
    assert {"study.json", "fig-study-thrust.png", "fig-study-pareto.svg", "manifest-study.json"} <= {
        p.name for p in folder.iterdir()}
    axes = (folder / "study-axes.csv").read_text().splitlines()
    assert axes[0] == "point,station,x_m,y_m" and len(axes) == 1 + 3 * 21  # every point's axis at its stations
    crowns = [float(line.split(",")[3]) for line in axes[1:] if line.split(",")[1] == "10"]
    assert crowns == pytest.approx([2.0, 4.0, 6.0], rel=1e-9)  # the swept rises at the crown
    assert not [p for p in folder.iterdir() if p.name.endswith(".part")]
    bad = run_formfind("study", str(path), "--span", "ten", "--out", str(tmp_path))
    assert bad.returncode == 2 and "--span" in bad.stderr and "Traceback" not in bad.stderr
    huge = run_formfind("study", str(path), "--rise-over-span", "0.1:0.3:200", "--span", "10:20:60", "--out",
                        str(tmp_path / "x"))
    assert huge.returncode == 3 and "at most 10000 points" in huge.stderr


def test_study_command_runs_on_a_dask_scheduler(tmp_path, capsys):
    distributed = pytest.importorskip("dask.distributed")
    from formfind.cli import run_cli

    path = tmp_path / "sweep.toml"
    path.write_text(UNIFORM, encoding="utf-8")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        code = run_cli(["study", str(path), "--rise-over-span", "0.15,0.3", "--scheduler", cluster.scheduler_address,
                        "--out", str(tmp_path), "-q"])
    assert code == 0
    lines = (tmp_path / "sweep" / "study.csv").read_text().splitlines()
    assert len(lines) == 3 and all(",ok," in line for line in lines[1:])


def test_the_package_api_does_the_whole_job():
    import formfind

    case = _case()
    shape = formfind.find_shape(case)
    verdicts = formfind.check(case, formfind.analyse(case, axis=shape.axis))
    rows = list(formfind.run_study(case, formfind.grid((20.0,), (0.2,))))
    assert isinstance(verdicts, formfind.CheckResult) and verdicts.rows
    # the same point through the study and by hand: the same optimum
    assert rows[0].objective == pytest.approx(shape.value, rel=1e-9, abs=1e-9)


def test_pool_workers_run_one_thread_per_numerical_library_and_the_parent_is_left_as_it_was():
    """Oversubscription guard: each worker inherits one BLAS/OpenMP thread; the parent's environment
    is restored when the pool closes."""
    import os

    from formfind.design.study import THREAD_VARIABLES, process_pool

    before = {name: os.environ.get(name) for name in THREAD_VARIABLES}
    with process_pool(2) as pool:
        seen = pool.submit(os.getenv, "OPENBLAS_NUM_THREADS").result()
    assert seen == "1"
    assert {name: os.environ.get(name) for name in THREAD_VARIABLES} == before


HALF_SPAN = UNIFORM.replace("start_kN_m = 12.0", "start_kN_m = 20.0") + """
[[cases]]
name = "left"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = 10.0
  start_kN_m = 8.0
[[cases]]
name = "right"
  [[cases.loads]]
  type = "line"
  from_x_m = 10.0
  to_x_m = 20.0
  start_kN_m = 8.0
[[combinations]]
name = "L"
factors = { deck = 1.0, left = 1.0 }
[[combinations]]
name = "R"
factors = { deck = 1.0, right = 1.0 }
"""


def test_a_moment_constant_over_the_sweep_is_drawn_flat_and_its_pareto_front_is_one_point(tmp_path):
    """Dead load plus live load on either half of a three-hinged arch: the least peak moment is
    q L^2 / 64 whatever the rise (Hibbeler, *Structural Analysis*, three-hinged arches; from memory),
    so the study's moment plot must be flat and say so, and the least thrust beats every other point."""
    import numpy as np

    from formfind.output import plots
    from formfind.output.study_files import write_study

    case = parse_case(tomllib.loads(HALF_SPAN), "half.toml")
    rows = list(run_study(case, grid((20.0,), (0.1, 0.2, 0.3, 0.4))))
    moments = np.array([r.peak_M_all_kNm for r in rows])
    np.testing.assert_allclose(moments, 8.0 * 20.0**2 / 64, rtol=1e-6)
    ax = plots.plot_study(rows, "moment")
    line = ax.get_lines()[0]
    assert np.ptp(line.get_ydata()) == 0.0 and "constant" in line.get_label()
    assert "constant" in ax.get_title()
    thrust = plots.rounded(np.array([r.max_thrust_kN for r in rows]))
    front = pareto_front(thrust, plots.rounded(moments))
    assert front.tolist() == [3]  # the highest arch: least thrust, the same moment
    written, _ = write_study(tmp_path / "s", case, rows, overwrite=False)
    names = {p.name for p in written}
    assert {"study.html", "fig-study-axes.svg", "fig-study-pareto.png"} <= names
    page = (tmp_path / "s" / "study.html").read_text()
    assert page.count("<svg") == 6 and page.count("<tr") == len(rows) + 1 and "Cautions" in page
