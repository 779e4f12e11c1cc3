"""The calculation report: every section present (parsed, not just "file exists"), the verdict
table's numbers equal checks.json's, the PDF has its pages, and a real browser renders the HTML
without console errors into a page that is not blank."""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
from html.parser import HTMLParser

import numpy as np
import pytest

from formfind.analysis.engine import analyse
from formfind.design.check import check
from formfind.model.case import load_case
from formfind.output.package import build_files
from formfind.output.report import CAUTIONS, SECTIONS
from tests.conftest import BASE_CASE

CHECKS = '\n[check]\ncompression_limit_MPa = 20.0\ntension_limit_MPa = 0.5\neccentricity_limit = "kern"\nmin_buckling_factor = 3.0\n'
BROWSER_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync",
                 "--hide-scrollbars", "--enable-logging=stderr", "--v=0"]


class _Report(HTMLParser):
    """Collects section ids, the verdict table's cells, svg count and text per section."""

    def __init__(self) -> None:
        super().__init__()
        self.sections: list[str] = []
        self.text: dict[str, list[str]] = {}
        self.verdict_rows: list[list[tuple[str | None, str]]] = []
        self.svgs = 0
        self._section = ""
        self._in_tbody = False
        self._row: list | None = None
        self._cell: list | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section":
            self._section = a.get("id", "")
            self.sections.append(self._section)
            self.text[self._section] = []
        elif tag == "svg":
            self.svgs += 1
        elif tag == "tbody" and self._section == "verdicts":
            self._in_tbody = True
        elif tag == "tr" and self._in_tbody:
            self._row = []
        elif tag == "td" and self._row is not None:
            self._cell = [a.get("data-value"), ""]

    def handle_endtag(self, tag):
        if tag == "td" and self._cell is not None and self._row is not None:
            self._row.append(tuple(self._cell))
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.verdict_rows.append(self._row)
            self._row = None
        elif tag == "tbody":
            self._in_tbody = False

    def handle_data(self, data):
        if self._section:
            self.text[self._section].append(data)
        if self._cell is not None:
            self._cell[1] += data


@pytest.fixture(scope="module")
def package(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    path = folder / "case.toml"
    path.write_text(BASE_CASE.replace('rise_m = 4.0', 'rise_m = 4.0\nshape = "circle"') + CHECKS, encoding="utf-8")
    case = load_case(path)
    result = analyse(case)
    checks = check(case, result)
    files = build_files(case, None, result, checks=checks)
    return path, case, files


def test_report_has_every_section_and_its_content(package):
    path, case, files = package
    parser = _Report()
    parser.feed(files["report.html"].decode("utf-8"))
    assert tuple(parser.sections) == SECTIONS
    text = {k: " ".join(v) for k, v in parser.text.items()}
    assert hashlib.sha256(path.read_bytes()).hexdigest() in text["cover"]
    assert "version of cvxpy" in text["cover"] and "version of formfind" in text["cover"]
    assert "span" in text["inputs"] and "kN/m3" in text["inputs"] and "stations.spacing" in text["inputs"]
    assert 'name = "small"' in text["inputs"]  # the case file echoed
    assert "Sign conventions" in text["method"] and "Engine" in text["method"]
    assert "thrust H kN" in text["results"] and "ULS" in text["results"]
    assert parser.svgs == sum(1 for n in files if n.endswith(".svg")) > 3
    assert "Check failed" in text["warnings"]
    assert all(c in text["cautions"] for c in CAUTIONS)


def test_verdict_table_numbers_equal_the_json(package):
    _, _, files = package
    parser = _Report()
    parser.feed(files["report.html"].decode("utf-8"))
    rows = json.loads(files["checks.json"])["rows"]
    assert len(parser.verdict_rows) == len(rows) > 3
    for cells, row in zip(parser.verdict_rows, rows, strict=True):
        assert cells[0][1] == row["check"]
        for index, key in ((1, "value"), (2, "limit"), (4, "utilisation"), (7, "x_m")):
            exact = cells[index][0]
            if row[key] is None:
                assert exact in (None, "inf", "-inf")
            else:
                assert float(exact) == row[key]  # the same float, not a rounded copy
        assert cells[8][1].lower() == row["verdict"]


def test_pdf_report_is_a4_throughout_numbered_and_in_the_html_s_order(package):
    """A deliverable PDF: every page A4 portrait (595 x 842 pt, ISO 216), 'page n of N' on every page,
    the sections in the HTML's order, every figure and the verdict table's columns present."""
    _, _, files = package
    pdf = files["report.pdf"]
    assert pdf.startswith(b"%PDF")
    import re

    boxes = re.findall(rb"/MediaBox\s*\[\s*([\d.]+)\s+([\d.]+)\s+([\d.]+)\s+([\d.]+)\s*\]", pdf)
    assert boxes and all((float(b[2]), float(b[3])) == pytest.approx((595.28, 841.89), abs=0.01) for b in boxes)
    tool = shutil.which("pdftotext")
    if tool is None:
        if os.environ.get("CI"):
            pytest.fail("CI must install poppler-utils (.ci/run does) to read the PDF report's text")
        pytest.skip("no pdftotext on this machine (CI installs it)")
    pages = subprocess.run([tool, "-layout", "-", "-"], input=pdf, capture_output=True, timeout=60,
                           check=True).stdout.decode("utf-8").split("\f")
    pages = [p for p in pages if p.strip()]
    total = len(pages)
    for number, text in enumerate(pages, 1):
        assert f"page {number} of {total}" in text
    whole = "\n".join(pages)
    titles = ["1. Inputs", "2. Assumptions and method", "3. Results", "4. Diagrams", "5. Verdict table",
              "6. Warnings", "7. Cautions"]
    positions = [whole.index(t) for t in titles]
    assert positions == sorted(positions)
    figures = sum(1 for n in files if n.endswith(".svg"))
    assert all(f"Figure {k}." in whole for k in range(1, figures + 1))
    for column in ("utilisation", "combination", "verdict", "note"):
        assert column in whole
    assert "prepared by" in whole and "checked by" in whole  # the sign-off block


def _browser() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    return None


def test_report_renders_in_a_real_browser_without_console_errors(package, tmp_path):
    browser = _browser()
    if browser is None:
        if os.environ.get("CI"):
            pytest.fail("CI must install Debian's chromium (.ci/run does) to test the report in a browser")
        pytest.skip("no chromium on this machine (CI installs it)")
    _, _, files = package
    page = tmp_path / "report.html"
    page.write_bytes(files["report.html"])
    shot, pdf = tmp_path / "shot.png", tmp_path / "print.pdf"
    common = [browser, *BROWSER_FLAGS, f"--user-data-dir={tmp_path / 'profile'}"]
    runs = [subprocess.run([*common, "--window-size=1100,1800", f"--screenshot={shot}", page.as_uri()],
                           capture_output=True, text=True, timeout=120),
            subprocess.run([*common, "--no-pdf-header-footer", f"--print-to-pdf={pdf}", page.as_uri()],
                           capture_output=True, text=True, timeout=120)]
    for run in runs:
        assert run.returncode == 0, run.stderr[-2000:]
        console = [line for line in run.stderr.splitlines() if "CONSOLE" in line or "Uncaught" in line]
        assert not console, console
    assert pdf.read_bytes().startswith(b"%PDF") and pdf.stat().st_size > 20_000
    from matplotlib.image import imread

    image = imread(shot)
    ink = np.mean(np.any(image[..., :3] < 0.85, axis=-1))
    assert ink > 0.02  # text, tables and the red caution box: not a blank page

