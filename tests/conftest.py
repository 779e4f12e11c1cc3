"""Shared fixtures: a small valid case file text and helpers to write variants of it."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

# Property tests run a few examples each so that the suite stays within minutes; a long fuzz run
# multiplies them: FORMFIND_FUZZ=50 python3 -m pytest tests -k "property or fuzz or given" (see DEVELOPERS.md)
FUZZ = max(1, int(os.environ.get("FORMFIND_FUZZ", "1") or "1"))


def examples(count: int) -> int:
    """The number of examples a property test runs: ``count``, times FORMFIND_FUZZ for a long run."""
    return count * FUZZ

BASE_CASE = """\
[case]
name = "small"

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
count = 41

[[cases]]
name = "dead"
action = "permanent"
  [[cases.loads]]
  type = "self_weight"

[[cases]]
name = "live"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = 10.0
  start_kN_m = 5.0

[[combinations]]
name = "ULS"
factors = { dead = 1.35, live = 1.5 }
"""


@pytest.fixture
def base_case_text() -> str:
    return BASE_CASE


@pytest.fixture
def write_case(tmp_path):
    def _write(text: str | bytes, name: str = "case.toml") -> Path:
        path = tmp_path / name
        if isinstance(text, bytes):
            path.write_bytes(text)
        else:
            path.write_text(text, encoding="utf-8")
        return path

    return _write


def run_formfind(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    """Run the real command line in a subprocess."""
    env = dict(os.environ)
    env.pop("FORMFIND_DEBUG", None)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run(
        [sys.executable, "-m", "formfind", *args],
        capture_output=True,
        text=True,
        cwd=cwd,
        env=env,
        timeout=120,
    )
