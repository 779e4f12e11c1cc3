"""Robustness: hostile inputs through the real command line, output safety under failure, extreme
numbers, a fuzz of the case loader, determinism."""

from __future__ import annotations

import json
import os
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from formfind.analysis.engine import analyse
from formfind.enums import SupportKind
from formfind.errors import AnalysisError, CaseError
from formfind.model.case import parse_case
from formfind.output import files
from formfind.output.package import write_package
from tests.conftest import BASE_CASE, ROOT, examples, run_formfind

CORPUS = ROOT / "tests" / "corpus"


def _expected():
    rows = []
    for line in (CORPUS / "EXPECTED.tsv").read_text(encoding="utf-8").splitlines():
        if line and not line.startswith("#"):
            name, code, needle = line.split("\t")
            rows.append((name, int(code), needle))
    return rows


EXPECTED = _expected()


def test_the_corpus_is_large_enough():
    assert len(EXPECTED) >= 40 and all((CORPUS / n).exists() for n, _, _ in EXPECTED)


@pytest.mark.parametrize(("name", "code", "needle"), EXPECTED, ids=[e[0] for e in EXPECTED])
def test_hostile_case_file_through_the_command_line(tmp_path, name, code, needle):
    out = tmp_path / "out"
    proc = run_formfind("run", str(CORPUS / name), "--out", str(out))
    assert proc.returncode == code, proc.stderr
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr, proc.stderr
    assert needle in proc.stderr, proc.stderr
    assert not out.exists() or not any(out.rglob("*"))  # nothing created


def test_huge_file_is_refused(tmp_path):
    path = tmp_path / "huge.toml"
    path.write_text(BASE_CASE + "#" + "x" * 1_100_000 + "\n", encoding="utf-8")
    proc = run_formfind("validate", str(path))
    assert proc.returncode == 3 and "limited to" in proc.stderr and proc.stderr.count("\n") == 1


def test_contradictory_constraints_exit_6_through_the_command_line(write_case, tmp_path):
    path = write_case(BASE_CASE + "\n[find]\nclearance_x_m = [8.0, 12.0]\nclearance_y_m = [4.5, 4.5]\n")
    proc = run_formfind("find", str(path), "--out", str(tmp_path / "o"))
    assert proc.returncode == 6 and "clearance" in proc.stderr and proc.stderr.count("\n") == 1
    assert not (tmp_path / "o" / "small").exists() or not any((tmp_path / "o" / "small").iterdir())


def test_failure_in_the_middle_of_writing_leaves_the_earlier_set_whole(tmp_path, monkeypatch):
    """A set is written whole beside the folder and swapped in one step: a failure on the fourth file
    (a full disk) leaves every earlier output and its manifest as they were, and nothing beside."""
    from formfind.errors import OutputError

    folder = tmp_path / "out"
    first = {f"f{i}.txt": f"first {i}".encode() for i in range(6)}
    write_package(folder, first, overwrite=False)
    original = os.fsync
    calls = {"n": 0}

    def failing_fsync(fd):
        calls["n"] += 1
        if calls["n"] == 4:
            raise OSError(28, "No space left on device")  # ENOSPC, injected
        return original(fd)

    monkeypatch.setattr(os, "fsync", failing_fsync)
    second = {f"f{i}.txt": f"second {i}".encode() for i in range(6)}
    with pytest.raises(OutputError, match="disk is full"):
        write_package(folder, second, overwrite=True)
    monkeypatch.setattr(os, "fsync", original)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]  # no staging folder left beside it
    assert [(folder / f"f{i}.txt").read_text() for i in range(6)] == [f"first {i}" for i in range(6)]
    manifest = json.loads((folder / "manifest.json").read_text())  # still the first run's
    assert len(manifest["files"]) == 6


def test_a_folder_where_an_output_file_goes_is_refused_with_exit_5(tmp_path):
    """--overwrite over a folder named like an output file: a one-line refusal, exit 5, nothing lost."""
    out = tmp_path / "out" / "small"
    (out / "forces.csv").mkdir(parents=True)
    (out / "forces.csv" / "keep.txt").write_text("mine")
    case = tmp_path / "case.toml"
    case.write_text(BASE_CASE, encoding="utf-8")
    proc = run_formfind("run", str(case), "--out", str(tmp_path / "out"), "--overwrite", "-q")
    assert proc.returncode == 5 and "is a folder" in proc.stderr and proc.stderr.count("\n") == 1
    assert (out / "forces.csv" / "keep.txt").read_text() == "mine"


def test_a_run_over_a_study_keeps_the_study_s_files(tmp_path):
    """The set swap carries over what another command wrote into the folder (a study's table)."""
    folder = tmp_path / "out"
    folder.mkdir()
    (folder / "study.csv").write_text("point\n0\n")
    write_package(folder, {"a.txt": b"1"}, overwrite=True)
    write_package(folder, {"b.txt": b"2"}, overwrite=True)
    assert sorted(p.name for p in folder.iterdir()) == ["b.txt", "manifest.json", "study.csv"]  # a.txt was ours


@pytest.mark.parametrize("name", ["../../escape", "a/b\\c", ".hidden", "x" * 200, ""])
def test_names_from_case_files_cannot_leave_the_output_folder(tmp_path, name):
    safe = files.safe_name(name)
    assert "/" not in safe and "\\" not in safe and not safe.startswith(".") and 0 < len(safe) <= 64
    assert (tmp_path / safe).resolve().parent == tmp_path.resolve()


def _case(ratio=0.2, shape="parabola", area=0.32, inertia=0.017, scale=1.0, kind="two_hinged"):
    data = tomllib.loads(BASE_CASE)
    data["geometry"] = {"span_m": 20.0, "rise_m": ratio * 20.0, "shape": shape}
    data["section"] = {"area_m2": area, "second_moment_m4": inertia, "depth_m": 0.8,
                       "elastic_modulus_MPa": 30000, "unit_weight_kN_m3": 25}
    data["cases"][1]["loads"][0]["start_kN_m"] = 5.0 * scale
    data["cases"][0]["loads"] = [{"type": "point", "x_m": 7.0, "down_kN": 10.0 * scale}]
    data["stations"] = {"count": 61, "spacing": "arc"}
    data["supports"] = {"kind": kind} if kind != "three_hinged" else {"kind": kind, "hinge_x_m": 10.0}
    return parse_case(data, "t.toml")


@pytest.mark.parametrize(("ratio", "shape"), [(0.02, "parabola"), (0.1, "circle"), (0.5, "circle"), (0.8, "parabola")])
@pytest.mark.parametrize("kind", ["two_hinged", "fixed", "three_hinged"])
def test_very_flat_to_semicircular_arches_give_finite_results(ratio, shape, kind):
    result = analyse(_case(ratio, shape, kind=kind))
    for r in (result.cases, result.combinations):
        assert np.all(np.isfinite(r.M)) and np.all(np.isfinite(r.N)) and np.all(np.isfinite(r.reactions))


@pytest.mark.parametrize("ratio_ea", [1e2, 1e4, 1e6, 1e8, 1e10])
def test_axial_to_bending_stiffness_ratios_give_finite_results_or_a_clear_error(ratio_ea):
    """EA L^2 / EI from 1e2 to 1e10 (L the span): finite, equilibrated results or an AnalysisError."""
    inertia = 0.017
    area = ratio_ea * inertia / 20.0**2
    try:
        result = analyse(_case(area=area, inertia=inertia), buckling=False)
    except AnalysisError as exc:
        assert "backward error" in str(exc) or "equilibrium" in str(exc)
        return
    assert np.all(np.isfinite(result.combinations.M))


@pytest.mark.parametrize("scale", [1e-6, 1.0, 1e6])
def test_loads_from_micro_to_mega_newtons_scale_linearly(scale):
    base = analyse(_case(scale=1.0), buckling=False).combinations.M
    scaled = analyse(_case(scale=scale), buckling=False).combinations.M
    # self-weight does not scale; compare the difference against the pure-load part
    weight_only = analyse(_case(scale=0.0 + 1e-300), buckling=False).combinations.M
    np.testing.assert_allclose(scaled - weight_only, scale * (base - weight_only),
                               atol=1e-7 * max(scale, 1.0) * np.abs(base).max())


def test_three_hinged_collinear_hinge_is_a_clear_analysis_error():
    case = _case(kind="three_hinged")
    axis = case.axis()
    flat = axis.__class__(axis.x, np.where(np.abs(axis.x - 10.0) < 1e-9, 0.0, axis.y), axis.theta)
    with pytest.raises(AnalysisError, match="mechanism"):
        analyse(case, axis=flat)


# --- fuzz: random TOML-like documents never crash the loader ------------------------------------
scalars = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True),
                    st.text(max_size=12))
values = st.recursive(scalars, lambda children: st.one_of(st.lists(children, max_size=4),
                                                          st.dictionaries(st.text(max_size=8), children, max_size=4)),
                      max_leaves=12)
KEYS = ["case", "geometry", "supports", "section", "stations", "cases", "combinations", "find", "check", "outputs",
        "name", "span_m", "rise_m", "loads", "type", "x_m", "factors", "kind", "shape", "count"]


def _mutate(draw_doc: dict, path: list[str], value) -> dict:
    node = draw_doc
    for key in path[:-1]:
        child = node.get(key) if isinstance(node, dict) else None
        if not isinstance(child, dict):
            return draw_doc
        node = child
    if isinstance(node, dict):
        node[path[-1]] = value
    return draw_doc


@settings(max_examples=examples(300), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(path=st.lists(st.sampled_from(KEYS), min_size=1, max_size=3), value=values,
       extra=st.dictionaries(st.sampled_from(KEYS), values, max_size=3))
def test_fuzzed_documents_give_a_case_or_a_case_error(path, value, extra):
    document = tomllib.loads(BASE_CASE)
    document = _mutate(document, path, value)
    document.update(extra)
    try:
        parse_case(document, "fuzz.toml")
    except CaseError as exc:
        assert str(exc).startswith("fuzz.toml") and "\n" not in str(exc)


def test_an_ill_conditioned_frame_is_warned_about(caplog):
    """A very fine mesh of a stocky rib drives the condition estimate past 1e12: a warning names it."""
    import logging

    from formfind.analysis.frame import build_frame
    from formfind.model.geometry import Axis, Chord, Parabola, place_stations
    from formfind.model.section import Section

    curve = Parabola(Chord(40.0), 8.0)
    axis = Axis.from_curve(curve, place_stations(curve, 6401))
    section = Section(5.0, 2e-3, 0.6, 2.1e8).at(axis)
    with caplog.at_level(logging.WARNING, logger="formfind.analysis.frame"):
        model = build_frame(axis, section, SupportKind.FIXED)
    assert model.maps.condition_estimate > 1e12
    assert any("ill-conditioned" in r.message for r in caplog.records)


def test_regression_fuzz_key_with_a_newline_stays_one_line():
    """Found by the fuzz above: a key holding a newline was echoed into a two-line message."""
    document = tomllib.loads(BASE_CASE)
    document["case"]["bad\nkey"] = 1
    with pytest.raises(CaseError) as info:
        parse_case(document, "fuzz.toml")
    assert "\n" not in str(info.value) and "bad\\nkey" in str(info.value)


def test_killing_a_run_at_random_moments_never_leaves_a_torn_set(tmp_path):
    """kill -9 during `run --overwrite`, many times at random moments (seeded): the folder always
    holds one whole set, every file its manifest lists with the right hash and nothing else; the next
    run cleans what a killed one left beside it."""
    import hashlib
    import random
    import signal
    import subprocess
    import sys
    import time

    rng = random.Random(20261204)
    variants = []
    for k, load in enumerate((5.0, 7.5)):
        path = tmp_path / f"case{k}.toml"
        path.write_text(BASE_CASE.replace("start_kN_m = 5.0", f"start_kN_m = {load}"), encoding="utf-8")
        variants.append(path)
    out = tmp_path / "out"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    command = [sys.executable, "-m", "formfind", "run", "--out", str(out), "--overwrite", "-q", "--stations", "31"]
    subprocess.run(command[:4] + [str(variants[0])] + command[4:], env=env, check=True, capture_output=True)

    def whole(folder):
        manifest = json.loads((folder / "manifest.json").read_text())
        listed = {e["name"]: e["sha256"] for e in manifest["files"]}
        present = {p.name for p in folder.iterdir()} - {"manifest.json"}
        assert present == set(listed), (present ^ set(listed))
        for name, digest in listed.items():
            assert hashlib.sha256((folder / name).read_bytes()).hexdigest() == digest, name

    for attempt in range(8):
        proc = subprocess.Popen(command[:4] + [str(variants[(attempt + 1) % 2])] + command[4:], env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.3, 3.0))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        whole(out / "small")
    subprocess.run(command[:4] + [str(variants[0])] + command[4:], env=env, check=True, capture_output=True)
    whole(out / "small")
    assert sorted(p.name for p in out.iterdir()) == ["small"]  # leftovers of killed runs are gone


def _slow_writer(folder: str, tag: str) -> None:  # runs in a child process that the test kills
    import time as _time

    from formfind.output import files as _files

    original = _files._write_in

    def slow(path, data):
        _time.sleep(0.01)
        original(path, data)

    _files._write_in = slow
    write_package(folder, {f"f{i:03d}.txt": f"{tag} {i}".encode() for i in range(60)}, overwrite=True)


def test_killing_the_writer_itself_at_random_moments_never_leaves_a_torn_set(tmp_path):
    """The write phase itself, slowed down and killed at random moments (seeded) many times."""
    import hashlib
    import multiprocessing
    import random
    import signal
    import time

    rng = random.Random(7)
    folder = tmp_path / "out"
    write_package(folder, {f"f{i:03d}.txt": f"start {i}".encode() for i in range(60)}, overwrite=False)
    context = multiprocessing.get_context("fork")
    for attempt in range(12):
        child = context.Process(target=_slow_writer, args=(str(folder), f"run{attempt}"))
        child.start()
        time.sleep(rng.uniform(0.0, 0.9))
        os.kill(child.pid, signal.SIGKILL)
        child.join()
        manifest = json.loads((folder / "manifest.json").read_text())
        listed = {e["name"]: e["sha256"] for e in manifest["files"]}
        assert {p.name for p in folder.iterdir()} - {"manifest.json"} == set(listed)
        texts = {(folder / n).read_text().split()[0] for n in listed}
        assert len(texts) == 1  # one run's files, never a mix
        for name, digest in listed.items():
            assert hashlib.sha256((folder / name).read_bytes()).hexdigest() == digest
    write_package(folder, {"a.txt": b"done"}, overwrite=True)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def _public_calls():
    import formfind

    case = parse_case(tomllib.loads(BASE_CASE), "t.toml")
    analysis = formfind.analyse(case, buckling=False)
    return [
        ("analyse(path)", lambda: formfind.analyse(str(ROOT / "cases" / "footbridge.toml"))),
        ("analyse(None)", lambda: formfind.analyse(None)),
        ("analyse(buckling='no')", lambda: formfind.analyse(case, buckling="no")),
        ("analyse(displacements=1)", lambda: formfind.analyse(case, displacements=1)),
        ("analyse(axis=list)", lambda: formfind.analyse(case, axis=[0.0, 1.0])),
        ("find_shape(dict)", lambda: formfind.find_shape({"case": 1})),
        ("find_shape(start=str)", lambda: formfind.find_shape(case, start="parabola")),
        ("check(None, analysis)", lambda: formfind.check(None, analysis)),
        ("check(case, None)", lambda: formfind.check(case, None)),
        ("grid(str)", lambda: formfind.grid("20,30", (0.2,))),
        ("grid(nan)", lambda: formfind.grid((20.0,), (float("nan"),))),
        ("run_study(points=ints)", lambda: next(formfind.run_study(case, [1, 2]))),
        ("run_study(executor=str)", lambda: next(formfind.run_study(case, formfind.grid((20.0,), (0.2,)), "pool"))),
        ("summarise(case)", lambda: formfind.summarise(case)),
        ("load_case(None)", lambda: formfind.load_case(None)),
        ("load_case(3)", lambda: formfind.load_case(3)),
        ("parse_case(list)", lambda: formfind.parse_case([1, 2], "x.toml")),
        ("parse_case(file=None)", lambda: formfind.parse_case({}, None)),
    ]


@pytest.mark.parametrize("index", range(18))
def test_public_functions_refuse_bad_arguments_with_a_formfind_error(index):
    """Every public function checks its arguments at the boundary and says what was expected; a
    truthy string never passes for a flag."""
    from formfind.errors import FormfindError

    name, call = _public_calls()[index]
    with pytest.raises(FormfindError) as info:
        call()
    assert "expected" in str(info.value), name


@pytest.mark.parametrize("kind", ["zero", "null", "fifo", "directory"])
def test_a_case_path_that_is_no_regular_file_is_refused_at_once(tmp_path, kind):
    """/dev/zero is endless and a FIFO with no writer blocks for ever: neither is read; a folder neither."""
    path = {"zero": "/dev/zero", "null": "/dev/null", "fifo": str(tmp_path / "pipe.toml"),
            "directory": str(tmp_path)}[kind]
    if kind == "fifo":
        os.mkfifo(path)
    proc = run_formfind("validate", path)
    assert proc.returncode == 3 and proc.stderr.count("\n") == 1
    assert ("regular file" in proc.stderr) or ("directory" in proc.stderr)


def test_silent_answers_are_said_in_words(write_case):
    """A fill whose surface lies below the arch adds no load, and a combination that buckles below its
    own loads cannot be carried: both are said on the terminal (the run goes on)."""
    fill = BASE_CASE.replace('  type = "self_weight"', '  type = "fill"\n  unit_weight_kN_m3 = 19.0\n  surface_y_m = -5.0')
    proc = run_formfind("validate", str(write_case(fill, "fill.toml")))
    assert proc.returncode == 0 and "adds no load" in proc.stderr
    weak = BASE_CASE.replace("elastic_modulus_MPa = 30000", "elastic_modulus_MPa = 0.001").replace(
        'kind = "three_hinged"\nhinge_x_m = 10.0', 'kind = "two_hinged"')
    proc = run_formfind("analyse", str(write_case(weak, "weak.toml")), "--out", str(write_case(weak).parent / "o"))
    assert proc.returncode == 0 and "cannot carry this combination" in proc.stderr


def test_a_full_disk_leaves_no_folder_behind(tmp_path, monkeypatch):
    """Writing into a new --out folder on a full disk: exit code 5's error, and no empty folder left."""
    from formfind.errors import OutputError

    def full(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", full)
    with pytest.raises(OutputError, match="disk is full"):
        write_package(tmp_path / "new" / "deeper" / "case", {"a.txt": b"1"}, overwrite=False)
    assert list(tmp_path.iterdir()) == []


def test_form_finding_works_after_another_highs_user_in_the_same_process():
    """HiGHS keeps one thread scheduler per process: a program that asked it for another thread count than
    the first user (cvxpy's HiGHS interface, which the thrust-line checks use) failed every later solve.
    A fresh process: cvxpy solves with HiGHS first, then form finding's own HiGHS programs must solve."""
    import subprocess
    import sys

    script = (
        "import cvxpy as cp, formfind\n"
        "x = cp.Variable(2)\n"
        "cp.Problem(cp.Minimize(cp.sum(x)), [x >= 1]).solve(solver=cp.HIGHS)\n"
        "shape = formfind.find_shape(formfind.load_case('cases/road-bridge.toml'))\n"
        "print(shape.status)\n"
    )
    root = Path(__file__).resolve().parents[1]
    result = subprocess.run([sys.executable, "-c", script], cwd=root, capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr[-2000:]
    assert result.stdout.strip().splitlines()[-1] == "optimal"
