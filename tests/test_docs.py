"""The Python examples in the README and docs/python-api.md run as written (the documentation cannot
drift from the API)."""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PAGES = [ROOT / "README.md", ROOT / "docs" / "python-api.md"]


def _blocks(path: Path) -> list[str]:
    return re.findall(r"```python\n(.*?)```", path.read_text(encoding="utf-8"), flags=re.S)


@pytest.mark.parametrize("page", PAGES, ids=lambda p: p.name)
def test_python_examples_run(page, tmp_path, monkeypatch):
    blocks = _blocks(page)
    assert blocks, f"{page.name} has no Python example"
    monkeypatch.chdir(ROOT)
    namespace: dict = {}
    for block in blocks:  # one page's blocks build on each other, as a reader runs them
        code = block.replace("/tmp/axis.png", os.fspath(tmp_path / "axis.png"))
        exec(compile(code, f"{page.name}", "exec"), namespace)
