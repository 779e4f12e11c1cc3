"""The command line: happy paths, exit codes, one-line errors, no traceback, nothing half-written."""

from __future__ import annotations

import json

import pytest

from formfind import __version__
from formfind.cli import run_cli
from tests.conftest import BASE_CASE, ROOT, run_formfind
from tests.test_case import BAD

CASE_ERROR = 3
OUTPUT_ERROR = 5


def _files_under(folder):
    return sorted(p for p in folder.rglob("*") if p.is_file()) if folder.exists() else []


@pytest.mark.parametrize(("label", "text", "key", "needle"), BAD, ids=[b[0] for b in BAD])
def test_bad_case_files_exit_3_with_one_line_and_no_files(write_case, tmp_path, capsys, label, text, key, needle):
    path = write_case(text)
    out = tmp_path / "out"
    code = run_cli(["run", str(path), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == CASE_ERROR
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("formfind: error: ") and needle in lines[0], err
    assert "Traceback" not in err
    assert _files_under(out) == []


@pytest.mark.parametrize("label", ["syntax", "unknown key", "nan", "load outside span", "unknown case in combination"])
def test_bad_case_files_through_a_real_process(write_case, tmp_path, label):
    text = next(b[1] for b in BAD if b[0] == label)
    path = write_case(text)
    out = tmp_path / "out"
    proc = run_formfind("analyse", str(path), "--out", str(out))
    assert proc.returncode == CASE_ERROR
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert str(path) in proc.stderr
    assert _files_under(out) == []


def test_missing_file_through_a_real_process(tmp_path):
    proc = run_formfind("validate", str(tmp_path / "absent.toml"))
    assert proc.returncode == CASE_ERROR
    assert "file not found" in proc.stderr and proc.stderr.count("\n") == 1


def test_version_and_help():
    proc = run_formfind("--version")
    assert proc.returncode == 0 and __version__ in proc.stdout
    for command in ("validate", "run", "analyse", "keys"):
        proc = run_formfind(command, "--help")
        assert proc.returncode == 0 and "usage" in proc.stdout


def test_usage_error_exits_2():
    proc = run_formfind("analyse")
    assert proc.returncode == 2


def test_default_case_runs_and_writes_results(tmp_path):
    proc = run_formfind("run", str(ROOT / "cases" / "footbridge.toml"), "--out", str(tmp_path))
    assert proc.returncode == 0, proc.stderr
    folder = tmp_path / "footbridge"
    names = {p.name for p in _files_under(folder)}
    assert {"analysis.json", "forces.csv", "reactions.csv", "summary.csv", "checks.csv", "shape.json", "axis.dxf",
            "setting-out.csv", "fig-axis.png", "fig-envelope-M.svg", "report.html", "report.pdf",
            "manifest.json"} <= names
    assert not [n for n in names if n.endswith(".part")]
    data = json.loads((folder / "analysis.json").read_text())
    assert data["case"] == "footbridge" and "caution" in data
    assert "peak M kNm" in proc.stdout and "Caution" in proc.stdout
    # a second run refuses to overwrite, a third with --overwrite succeeds
    again = run_formfind("run", str(ROOT / "cases" / "footbridge.toml"), "--out", str(tmp_path))
    assert again.returncode == OUTPUT_ERROR and "--overwrite" in again.stderr
    forced = run_formfind("run", str(ROOT / "cases" / "footbridge.toml"), "--out", str(tmp_path), "--overwrite", "-q")
    assert forced.returncode == 0 and forced.stdout == ""


def test_validate_reports_defaults(write_case, capsys):
    path = write_case(BASE_CASE)
    assert run_cli(["validate", str(path), "-v"]) == 0
    out = capsys.readouterr().out
    assert "valid" in out and "stations.spacing = x" in out and "find.kern_fraction = 0.333333" in out


def test_keys_prints_the_reference(capsys):
    assert run_cli(["keys"]) == 0
    assert "## [geometry]" in capsys.readouterr().out


def test_every_output_is_the_same_bytes_from_another_folder_process_and_hash_seed(tmp_path, monkeypatch):
    """Same input, same bytes: two real processes, run from different folders with the case given by a
    relative and by an absolute path and different hash seeds, write identical files, every one of
    them (tables, JSON, DXF, SVG, PNG, HTML, PDF, manifest)."""
    import shutil

    runs = []
    for name, seed in (("a", "1"), ("b", "2")):
        folder = tmp_path / name
        folder.mkdir()
        shutil.copy(ROOT / "cases" / "footbridge.toml", folder / "footbridge.toml")
        monkeypatch.setenv("PYTHONHASHSEED", seed)
        case = "footbridge.toml" if name == "a" else str(folder / "footbridge.toml")
        done = run_formfind("run", case, "--out", "out", "--stations", "41", "-q", cwd=folder)
        assert done.returncode == 0, done.stderr
        runs.append(folder / "out" / "footbridge")
    names = sorted(p.name for p in runs[0].iterdir())
    assert names == sorted(p.name for p in runs[1].iterdir()) and "axis.dxf" in names and "report.pdf" in names
    for name in names:
        assert (runs[0] / name).read_bytes() == (runs[1] / name).read_bytes(), name


def test_supports_override_and_all_states(tmp_path, capsys):
    case = str(ROOT / "cases" / "footbridge.toml")
    assert run_cli(["analyse", case, "--out", str(tmp_path), "--supports", "fixed", "--all-states", "-q"]) == 0
    folder = tmp_path / "footbridge"
    data = json.loads((folder / "analysis.json").read_text())
    assert data["cases"]["engine"] == "frame"
    states = (folder / "states.csv").read_text().splitlines()
    stations = len(data["axis"]["x_m"])
    assert len(states) - 1 == stations * (len(data["cases"]["states"]) + len(data["combinations"]["states"]))
    # the buckling table and the JSON hold the same factors
    rows = (folder / "buckling.csv").read_text().splitlines()[1:]
    first = {r.split(",")[0]: float(r.split(",")[3]) for r in rows}
    for entry in data["buckling"]:
        assert first[entry["group"]] == pytest.approx(entry["factors"][0], rel=5e-6)  # CSV: 6 figures


def test_tied_override_without_a_tie_is_a_case_error(tmp_path, capsys):
    code = run_cli(["analyse", str(ROOT / "cases" / "footbridge.toml"), "--out", str(tmp_path), "--supports", "tied"])
    err = capsys.readouterr().err
    assert code == CASE_ERROR and "tie_area_m2" in err and err.count("\n") == 1
    assert _files_under(tmp_path) == []
