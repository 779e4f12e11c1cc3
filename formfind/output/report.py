"""The calculation report: one document model, rendered to a self-contained HTML page and to a PDF.

`report_sections` builds the report once, as plain blocks (paragraphs, tables, lists, figures); the
HTML (inline SVG, print-friendly) and the PDF (A4 portrait, ``page n of N``, a title and sign-off
block, tables typeset with every column, the figures as the PNG images written beside it, each
rendered once) are two renderings of the same blocks, so they hold the same content in the same
order.

Sections, in order, each an HTML ``<section>`` with a fixed id (tests and readers rely on them):

    cover       title, project, job, revision, issue date; the case file's name and SHA-256; versions
                of formfind and its solvers; the sign-off block
    inputs      the principal inputs with units, the defaults that were filled in, the case file itself
    method      assumptions and method: engine, discretisation, sign conventions, form finding
                (objective, constraints that bind, solver, status, certificate)
    results     per case and combination: thrust, peak N, V, M and where; buckling factors
    diagrams    the figures of the run with captions in words, numbered in order
    verdicts    the verdict table of the checks (numbers equal to checks.json: each value cell carries
                its exact value in ``data-value``)
    warnings    what the reader must not miss: failed checks, low buckling factors, loose certificates
    cautions    the standing cautions, in the report's one caution box

The PDF is written with fpdf2 (pure Python; tables and page numbers built in; its SVG import loses
matplotlib's text, so the figures go in as PNG). Nothing here computes mechanics: it formats `ShapeResult`, `CaseAnalysis` and `CheckResult`.
Nothing depends on the day of the run or the folder it ran in: the date shown is the case file's
``issue_date``, the case file is named by its file name and hash.
"""

from __future__ import annotations

import datetime
import hashlib
import html
import io
import re
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import summarise
from formfind.design.check import FAIL, CheckResult
from formfind.design.shape import ShapeResult
from formfind.model.case import Case
from formfind.output import numbers
from formfind.output.tables import SIGN_CONVENTION

SECTIONS = ("cover", "inputs", "method", "results", "diagrams", "verdicts", "warnings", "cautions")
PACKAGES = ("numpy", "scipy", "highspy", "clarabel", "cvxpy", "matplotlib", "ezdxf", "fpdf2")
CAUTIONS = (
    "This report is an aid to a qualified engineer, not a substitute for one.",
    "Local codes and licensed practice govern every design; the checks here use the limits the case "
    "file gives, and formfind ships no code values.",
    "The load factors in the example cases are examples only, not code values for any jurisdiction.",
    "Analysis is linear elastic in the plane of the arch unless a row says otherwise; out-of-plane "
    "stability, connections, foundations and construction stages are outside this report.",
)
EPOCH = datetime.datetime(2000, 1, 1, tzinfo=datetime.UTC)  # the PDF's creation date when no issue date


# ------------------------------------------------------------------------------------ the model
@dataclass(frozen=True)
class Cell:
    """A table cell: its text, and for numbers the exact value (HTML ``data-value``) and alignment."""

    text: str
    exact: float | None = None
    numeric: bool = False
    css: str = ""


@dataclass(frozen=True)
class Table:
    """Header, rows of cells, an optional class per row, and relative column widths for the PDF."""

    header: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    row_classes: tuple[str, ...] = ()
    widths: tuple[float, ...] = ()
    small: bool = False


@dataclass(frozen=True)
class Paragraph:
    text: str
    css: str = ""


@dataclass(frozen=True)
class Heading:
    text: str


@dataclass(frozen=True)
class Items:
    items: tuple[str, ...]
    css: str = ""


@dataclass(frozen=True)
class Preformatted:
    text: str


@dataclass(frozen=True, eq=False)
class Figure:
    """A numbered figure: its file stem, caption in words, and the SVG and PNG bytes."""

    number: int
    stem: str
    caption: str
    svg: bytes
    png: bytes


@dataclass(frozen=True)
class Section:
    id: str
    title: str
    blocks: tuple = field(default_factory=tuple)


def input_digest(case: Case) -> str:
    """SHA-256 of the case file's bytes, or "" if the case was built in code."""
    path = Path(case.source) if case.source else None
    if path is None or not path.is_file():
        return ""
    return hashlib.sha256(path.read_bytes()).hexdigest()


def versions() -> dict[str, str]:
    """Versions of formfind and of the packages and solvers it ran with."""
    out = {"formfind": __version__}
    for name in PACKAGES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _num(value: float | None, digits: int = 4) -> Cell:
    """A numeric cell showing ``digits`` significant figures (a dash if not finite) with its exact value."""
    if value is None:
        return Cell("", None, True)
    value = float(value)
    exact = value if np.isfinite(value) else None
    return Cell(numbers.for_reading(value, digits), exact, True)


def _len(value: float | None) -> Cell:
    if value is None:
        return Cell("", None, True)
    return Cell(numbers.length(value, numbers.DASH), float(value), True)


def _text(value: str, css: str = "") -> Cell:
    return Cell(str(value), None, False, css)


def _plain_table(header, rows, widths=(), small=False, row_classes=()) -> Table:
    return Table(tuple(header), tuple(tuple(c if isinstance(c, Cell) else _text(c) for c in row) for row in rows),
                 tuple(row_classes), tuple(widths), small)


# ---------------------------------------------------------------------------------- the sections
def warnings(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None,
             checks: CheckResult | None) -> list[str]:
    """Plain-language warnings drawn from the results."""
    out = []
    if checks is not None:
        for r in checks.rows:
            if r.verdict == FAIL:
                where = f" at x = {numbers.length(r.x_m)} m" if r.x_m is not None else ""
                out.append(f"Check failed: {r.name} = {numbers.for_reading(r.value)} {r.unit} against "
                           f"{numbers.for_reading(r.limit)} {r.unit}, {r.combination} ({r.state}){where}.")
    if analysis is not None:
        for b in analysis.buckling:
            if b.critical_factor < case.check.second_order_below:
                out.append(f"Buckling factor of {b.group} is {numbers.for_reading(b.critical_factor, 3)}, below "
                           f"{case.check.second_order_below:g}: second-order effects matter (see the verdict rows).")
    if shape is not None:
        if shape.status not in ("optimal", "converged"):
            out.append(f"Form finding ended with status {shape.status!r}.")
        if shape.gap > 1e-3:
            out.append(f"Form finding's certificate leaves a relative gap of {shape.gap:.1e}: the axis may not be "
                       "the best one within its limits.")
        out += [f"Found axis: {w[0].upper()}{w[1:]}." for w in shape.warnings]
    out.append("The load factors of the case file are the user's; examples shipped with formfind are examples only.")
    return out


def _cover(case: Case) -> tuple:
    d = case.document
    ver = versions()
    rows = [["case", case.name], ["case file", Path(case.source).name if case.source else "(built in code)"],
            ["case file SHA-256", input_digest(case) or "(no file)"]]
    reference = case.find.reference
    if reference is not None and reference.sha256:
        rows += [["reference curve file", reference.source], ["reference curve file SHA-256", reference.sha256]]
    rows += [[f"version of {k}", v] for k, v in ver.items()]
    signoff = _plain_table(["project", "job number", "revision", "date of issue"],
                           [[d.project or "-", d.job_number or "-", d.revision or "-", d.issue_date or "-"]],
                           widths=(3, 2, 1, 1.5))
    sign = _plain_table(["", "name", "signature", "date"],
                        [["prepared by", d.drawn_by, "", ""], ["checked by", d.checked_by, "", ""]],
                        widths=(1.2, 2, 2.5, 1.3))
    blocks = [Paragraph(case.description)] if case.description else []
    return tuple(blocks + [signoff, sign, Paragraph("Read the cautions (section 7) before using these results.",
                                                    "lead"),
                           _plain_table(["item", "value"], rows, widths=(1, 3), small=True)])


def _inputs(case: Case, analysis: CaseAnalysis | None) -> tuple:
    g, s, sec = case.geometry, case.supports, case.section
    rows = [
        ["span", _len(g.span_m), "m"], ["rise (at midspan, above the springing chord)", _len(g.rise_m), "m"],
        ["shape of the given axis", g.shape.value, ""], ["supports", s.kind.value, ""],
        ["rib depth (crown)", _len(sec.depth_m), "m"], ["rib area (crown)", _num(sec.area_m2, 5), "m2"],
        ["second moment of area (crown)", _num(sec.second_moment_m4, 5), "m4"],
        ["elastic modulus", _num(sec.elastic_modulus_kN_m2 / 1000.0, 5), "MPa"],
        ["shear modulus", _num(sec.shear_modulus_kN_m2 / 1000.0, 5), "MPa"],
        ["unit weight", _num(sec.unit_weight_kN_m3, 4), "kN/m3"], ["section variation", sec.variation.value, ""],
        ["stations", str(analysis.axis.count if analysis else case.stations.count), ""],
        ["load cases", ", ".join(f"{c.name} ({c.action.value})" for c in case.cases), ""],
        ["combinations", "; ".join(f"{c.name}: " + ", ".join(f"{f:g} x {n}" for n, f in c.factors)
                                  for c in case.combinations) or "none", ""],
    ]
    if sec.profile is not None:
        walls = ", ".join(f"{name.replace('_m', '').replace('_', ' ')} {_len(getattr(sec, name)).text} m"
                          for name in ("width_m", "wall_thickness_m", "web_thickness_m", "flange_thickness_m")
                          if getattr(sec, name) is not None)
        rows.insert(4, ["rib profile (properties computed)", f"{sec.profile.value.replace('_', ' ')}"
                        + (f": {walls}" if walls else ""), ""])
    if sec.lateral_second_moment_m4 is not None:
        at = rows.index(next(r for r in rows if r[0] == "elastic modulus"))
        rows.insert(at, ["second moment of area out of the plane", _num(sec.lateral_second_moment_m4, 5), "m4"])
        if sec.torsion_constant_m4 is not None:
            rows.insert(at + 1, ["torsion constant", _num(sec.torsion_constant_m4, 5), "m4"])
    if sec.material is not None:
        rows.insert(4, ["material preset (example values; explicit keys win)", sec.material.value, ""])
    if s.hinge_x_m is not None:
        rows.insert(4, ["crown hinge at", _len(s.hinge_x_m), "m"])
    blocks = [_plain_table(["input", "value", "unit"], rows, widths=(2.2, 3, 0.6)),
              Heading("Defaults filled in"), Items(tuple(case.defaults_used) or ("none",))]
    path = Path(case.source) if case.source else None
    if path is not None and path.is_file():
        blocks += [Heading("The case file"), Preformatted(path.read_text(encoding="utf-8", errors="replace"))]
    return tuple(blocks)


def _method(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None) -> tuple:
    blocks: list = []
    if analysis is not None:
        engine = analysis.cases.engine
        kind = ("exact statics of the three-hinged arch" if engine == "statics" else
                "frame model of straight elements between stations, verified by equilibrium and backward error")
        buckling = ("linear, in-plane, " + ("pressure following the axis" if case.analysis.pressure_follows_axis
                                            else "loads keeping their direction")) if case.analysis.buckling else "not analysed"
        blocks.append(Paragraph(
            f"Engine: {engine} ({kind}). {analysis.axis.count} stations ({case.stations.spacing.value} spacing), "
            f"arc length {numbers.length(analysis.axis.length_m)} m. Shear deformation: "
            f"{'on' if case.analysis.shear_deformation else 'off'}. Rib shortening: "
            f"{'none (axially rigid rib, lengths held by constraints)' if case.analysis.axially_rigid else 'included'}."
            f" Buckling: {buckling}."))
        ratio = case.check.imperfection_over_span
        if analysis.buckling and ratio > 0:
            blocks.append(Paragraph(
                f"Imperfection: the checks use each combination's moments on the arch displaced by its lowest "
                f"in-plane buckling mode, amplitude span/{1 / ratio:.0f} = {numbers.length(ratio * analysis.axis.span_m)} m, "
                f"with the adverse sign; where the buckling factor is below {case.check.second_order_below:g} they are "
                f"found to second order on that imperfect arch ({case.check.second_order.value.replace('_', '-')}). "
                "The amplitude is the case's ([check] imperfection_over_span; the default is an example, not a code "
                "value)."))
        elif analysis.buckling:
            blocks.append(Paragraph("Imperfection: none ([check] imperfection_over_span = 0): the checks use the "
                                    "perfect arch."))
    blocks.append(Paragraph(f"Sign conventions: {SIGN_CONVENTION}"))
    if shape is not None:
        f = case.find
        limits = []
        if f.rise_min_m is not None or f.rise_max_m is not None:
            limits.append(f"rise between {numbers.length(f.rise_min_m)} and {numbers.length(f.rise_max_m)} m")
        for on, text in ((f.symmetric is True, "symmetric axis"), (f.concave, "concave axis"),
                         (bool(f.clearance), "clearance line (intrados)"), (bool(f.envelope), "site line (extrados)")):
            if on:
                limits.append(text)
        if f.max_slope is not None:
            limits.append(f"slope at most {f.max_slope:g}")
        if f.max_curvature_per_m is not None:
            limits.append(f"curvature at most {f.max_curvature_per_m:g} 1/m")
        fair = shape.fairness
        curves = "; ".join(f"{c.name} {numbers.for_reading(1000.0 * c.deviation_m, 4)} mm at x = "
                           f"{numbers.length(c.at_x_m)} m" for c in shape.simple_curves)
        rows = [["objective", f"{shape.objective.value} ({shape.unit})"], ["certified optimum", _num(shape.optimum, 6)],
                ["returned axis" + (f" (fairest within {f.fairness_tolerance:.1%})" if f.fair and shape.nearest is None
                                    else ""),
                 _num(shape.value, 6)],
                ["checked by the exact engine", _num(shape.checked_value, 6)],
                ["dual bound (no admissible axis does better)", _num(shape.dual_bound, 6)],
                ["relative gap", Cell(f"{shape.gap:.1e}", shape.gap, True)],
                ["method", str(shape.method)], ["solver and status", f"{shape.solver}, {shape.status}"],
                ["iterations", str(len(shape.iterations))], ["governing states", ", ".join(shape.states)],
                ["limits imposed", "; ".join(limits) or "none"],
                ["constraints that bind", "; ".join(f"{a.name} ({len(a.stations)} stations, cost "
                                                    f"{numbers.for_reading(a.cost)} {a.unit})"
                                                    for a in shape.active) or "none"],
                ["symmetric axis", "yes" if shape.symmetric else "no"]]
        if fair is not None:
            rows.append(["largest turn between chords", f"{numbers.for_reading(fair.largest_turn_deg, 3)} deg at x = "
                         f"{numbers.length(fair.largest_at_x_m)} m, {numbers.for_reading(fair.ratio, 3)} x the mean"
                         + ("" if fair.fair else " (see the warnings)")])
        if curves:
            rows.append(["simple curves through the springings and rise (largest deviation)", curves])
        if shape.nearest is not None:
            n = shape.nearest
            rows += [["reference curve", f"{f.deviation.value} deviation minimised; moment limit "
                      f"{numbers.for_reading(n.moment_limit_kNm)} kNm"],
                     ["largest deviation from the reference", f"{numbers.for_reading(1000.0 * n.largest_deviation_m, 4)} mm "
                      f"at x = {numbers.length(n.largest_at_x_m)} m (RMS {numbers.for_reading(1000.0 * n.rms_deviation_m, 4)} mm)"],
                     ["peak |M| on the axis found", f"{numbers.for_reading(n.peak_moment_kNm)} kNm, {n.peak_state} at x = "
                      f"{numbers.length(n.peak_at_x_m)} m" + (" (the limit binds)" if n.limit_binds else "")],
                     ["peak |M| on the reference", f"{numbers.for_reading(n.reference_peak_moment_kNm)} kNm"]]
        blocks += [Heading("Form finding"), _plain_table(["item", "value"], rows, widths=(1.6, 3))]
    return tuple(blocks)


def _results(analysis: CaseAnalysis) -> tuple:
    factors = {b.group: b.critical_factor for b in analysis.buckling}
    rows = []
    for label, resp in (("case", analysis.cases), ("combination", analysis.combinations)):
        for s in summarise(resp):
            rows.append([label, s.group, str(s.states), _num(s.thrust_kN, 5), _num(s.M.value, 5), _len(s.M.x_m),
                         _num(s.N.value, 5), _len(s.N.x_m), _num(s.V.value, 5), _len(s.V.x_m),
                         _num(factors.get(s.group), 3) if s.group in factors else _text("")])
    header = ["set", "name", "states", "thrust H kN", "peak M kNm", "at x m", "peak N kN", "at x m", "peak V kN",
              "at x m", "buckling factor"]
    return (_plain_table(header, rows, widths=(1.5, 2.0, 0.7, 1.1, 1.1, 0.9, 1.1, 0.9, 1.1, 0.9, 1.1), small=True),)


def _verdicts(checks: CheckResult) -> tuple:
    header = ["check", "value", "limit", "unit", "utilisation", "combination", "state", "x m", "verdict", "note"]
    rows, classes = [], []
    for r in checks.rows:
        rows.append([_text(r.name), _num(r.value), _num(r.limit), _text(r.unit), _num(r.utilisation, 3),
                     _text(r.combination), _text(r.state), _len(r.x_m),
                     _text(r.verdict.upper(), f"verdict-{r.verdict}"), _text(r.note)])
        classes.append("fail" if r.verdict == FAIL else "")
    summary = (Paragraph("All checks pass.", "verdict-pass") if checks.passed
               else Paragraph("SOME CHECKS FAIL.", "verdict-fail"))
    return (summary, _plain_table(header, rows, widths=(2.2, 1, 0.9, 0.6, 1.3, 1.4, 1.6, 0.8, 0.9, 2.3),
                                  small=True, row_classes=classes))


def report_sections(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None, checks: CheckResult | None,
                    figures: list[tuple[str, str, bytes, bytes]]) -> list[Section]:
    """The report as blocks, section by section (module docstring). ``figures``: (stem, caption, SVG
    bytes, PNG bytes) in the order to show them."""
    numbered = [Figure(k + 1, stem, caption, svg, png) for k, (stem, caption, svg, png) in enumerate(figures)]
    return [
        Section("cover", f"{case.title or case.name}: calculation report", _cover(case)),
        Section("inputs", "1. Inputs", _inputs(case, analysis)),
        Section("method", "2. Assumptions and method", _method(case, shape, analysis)),
        Section("results", "3. Results", _results(analysis) if analysis else (Paragraph("No analysis was run."),)),
        Section("diagrams", "4. Diagrams", tuple(numbered) or (Paragraph("No diagrams."),)),
        Section("verdicts", "5. Verdict table", _verdicts(checks) if checks else (Paragraph("No checks were run."),)),
        Section("warnings", "6. Warnings", (Items(tuple(warnings(case, shape, analysis, checks))),)),
        Section("cautions", "7. Cautions", (Items(CAUTIONS, "caution"),)),
    ]


# ----------------------------------------------------------------------------------------- HTML
STYLE = """
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10.5pt; color: #111; margin: 2em auto;
       max-width: 62em; line-height: 1.35; }
h1 { font-size: 18pt; margin-bottom: 0.3em; } h2 { font-size: 13pt; border-bottom: 1px solid #888;
  margin-top: 1.6em; page-break-after: avoid; } h3 { font-size: 11pt; margin-bottom: 0.3em; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 9pt; }
table.small { font-size: 8pt; }
th, td { border: 1px solid #bbb; padding: 2px 6px; text-align: left; vertical-align: top; }
th { background: #eeeeee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.fail td { background: #fde2e2; } .verdict-fail { color: #a00; font-weight: bold; }
.verdict-pass { color: #060; font-weight: bold; } p.lead { font-weight: bold; }
pre { background: #f6f6f6; padding: 0.6em; font-size: 8pt; overflow-x: auto; }
figure { margin: 1.2em 0; page-break-inside: avoid; } figure svg { max-width: 100%; height: auto; }
figcaption { font-size: 9pt; margin-top: 0.2em; }
.caution { border: 2px solid #a00; padding: 0.5em 1.5em; }
@media print { body { margin: 0; max-width: none; } section { page-break-inside: auto; } }
"""


def _e(text: object) -> str:
    return html.escape(str(text), quote=True)


def _inline_svg(data: bytes) -> str:
    text = data.decode("utf-8")
    text = re.sub(r"<\?xml[^>]*\?>", "", text)
    text = re.sub(r"<!DOCTYPE[^>]*>", "", text, flags=re.S)
    return text.strip()


def _html_cell(cell: Cell) -> str:
    classes = " ".join(c for c in ("num" if cell.numeric else "", cell.css) if c)
    attr = f' class="{classes}"' if classes else ""
    if cell.numeric and cell.exact is not None:
        attr += f' data-value="{cell.exact!r}"'
    return f"<td{attr}>{_e(cell.text)}</td>"


def _html_block(block) -> str:
    if isinstance(block, Paragraph):
        return f'<p class="{block.css}">{_e(block.text)}</p>' if block.css else f"<p>{_e(block.text)}</p>"
    if isinstance(block, Heading):
        return f"<h3>{_e(block.text)}</h3>"
    if isinstance(block, Items):
        cls = f' class="{block.css}"' if block.css else ""
        return f"<ul{cls}>" + "".join(f"<li>{_e(i)}</li>" for i in block.items) + "</ul>"
    if isinstance(block, Preformatted):
        return f"<pre>{_e(block.text)}</pre>"
    if isinstance(block, Figure):
        return (f"<figure id='{_e(block.stem)}'>{_inline_svg(block.svg)}<figcaption><b>Figure {block.number}.</b> "
                f"{_e(block.caption)}</figcaption></figure>")
    head = "".join(f"<th>{_e(h)}</th>" for h in block.header)
    body = []
    for k, row in enumerate(block.rows):
        cls = block.row_classes[k] if k < len(block.row_classes) else ""
        body.append(f"<tr{f' class={chr(34)}{cls}{chr(34)}' if cls else ''}>" + "".join(_html_cell(c) for c in row)
                    + "</tr>")
    return (f"<table{' class=' + chr(34) + 'small' + chr(34) if block.small else ''}><thead><tr>{head}</tr></thead>"
            f"<tbody>{''.join(body)}</tbody></table>")


def report_html(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None, checks: CheckResult | None,
                figures: list[tuple[str, str, bytes, bytes]]) -> str:
    """The whole report as one HTML document (no external resources)."""
    sections = report_sections(case, shape, analysis, checks, figures)
    parts = []
    for s in sections:
        title = f"<h1>{_e(s.title)}</h1>" if s.id == "cover" else f"<h2>{_e(s.title)}</h2>"
        parts.append(f'<section id="{s.id}">{title}' + "".join(_html_block(b) for b in s.blocks) + "</section>")
    return (f"<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{_e(sections[0].title)}"
            f"</title><style>{STYLE}</style></head><body>\n" + "\n".join(parts) + "\n</body></html>\n")


# ------------------------------------------------------------------------------------------ PDF
def _fonts() -> dict[str, Path]:
    """DejaVu fonts shipped with matplotlib: full Unicode in the PDF without a system font."""
    import matplotlib

    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    return {"": folder / "DejaVuSans.ttf", "B": folder / "DejaVuSans-Bold.ttf", "mono": folder / "DejaVuSansMono.ttf"}


def report_pdf(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None, checks: CheckResult | None,
               figures: list[tuple[str, str, bytes, bytes]]) -> bytes:
    """The report as an A4 portrait PDF with the same blocks as the HTML (module docstring)."""
    from fpdf import FPDF
    from fpdf.fonts import FontFace

    sections = report_sections(case, shape, analysis, checks, figures)
    title = sections[0].title
    d = case.document

    class _Pdf(FPDF):
        def header(self) -> None:
            if self.page_no() == 1:
                return
            self.set_font("sans", "", 7.5)
            self.set_text_color(90, 90, 90)
            self.cell(0, 5, title[:110], align="L")
            self.ln(7)
            self.set_text_color(0, 0, 0)

        def footer(self) -> None:
            self.set_y(-12)
            self.set_font("sans", "", 7.5)
            self.set_text_color(90, 90, 90)
            left = " | ".join(t for t in (d.project, d.job_number and f"job {d.job_number}",
                                          d.revision and f"rev. {d.revision}", d.issue_date) if t)
            self.cell(120, 5, left[:90], align="L")
            self.cell(0, 5, f"page {self.page_no()} of {{nb}}", align="R")
            self.set_text_color(0, 0, 0)

    pdf = _Pdf(orientation="P", unit="mm", format="A4")
    pdf.set_creation_date(datetime.datetime.fromisoformat(d.issue_date).replace(tzinfo=datetime.UTC)
                          if d.issue_date else EPOCH)
    pdf.set_title(title)
    pdf.set_creator(f"formfind {__version__}")
    pdf.set_producer("formfind")
    fonts = _fonts()
    pdf.add_font("sans", "", str(fonts[""]))
    pdf.add_font("sans", "B", str(fonts["B"]))
    pdf.add_font("mono", "", str(fonts["mono"]))
    pdf.set_margins(15, 15, 15)
    pdf.set_auto_page_break(True, margin=16)
    pdf.alias_nb_pages()
    width = pdf.w - pdf.l_margin - pdf.r_margin
    heading = FontFace(emphasis="BOLD", fill_color=(235, 235, 235))
    for section in sections:
        if section.id in ("cover", "inputs", "results", "diagrams", "verdicts"):
            pdf.add_page()
        if section.id == "cover":
            pdf.set_font("sans", "B", 16)
            pdf.multi_cell(width, 8, section.title)
            pdf.ln(2)
        else:
            pdf.set_font("sans", "B", 12.5)
            pdf.multi_cell(width, 7, section.title)
            pdf.set_draw_color(140, 140, 140)
            pdf.line(pdf.l_margin, pdf.get_y(), pdf.l_margin + width, pdf.get_y())
            pdf.ln(2)
        for block in section.blocks:
            _pdf_block(pdf, block, width, heading)
    return bytes(pdf.output())


def _pdf_block(pdf, block, width: float, heading) -> None:
    from fpdf.enums import TableCellFillMode

    pdf.set_x(pdf.l_margin)
    if isinstance(block, Paragraph):
        colour = {"verdict-fail": (170, 0, 0), "verdict-pass": (0, 100, 0)}.get(block.css, (0, 0, 0))
        pdf.set_text_color(*colour)
        pdf.set_font("sans", "B" if block.css else "", 9.5)
        pdf.multi_cell(width, 5, block.text)
        pdf.set_text_color(0, 0, 0)
        pdf.ln(1.5)
    elif isinstance(block, Heading):
        pdf.ln(1)
        pdf.set_font("sans", "B", 10.5)
        pdf.multi_cell(width, 6, block.text)
    elif isinstance(block, Items):
        pdf.set_font("sans", "", 8.5 if block.css != "caution" else 9.5)
        top = pdf.get_y()
        for item in block.items:
            pdf.set_x(pdf.l_margin + (5 if block.css == "caution" else 2))
            pdf.multi_cell(width - 8, 4.6, f"\u2022  {item}")
        if block.css == "caution":
            pdf.set_draw_color(170, 0, 0)
            pdf.set_line_width(0.6)
            pdf.rect(pdf.l_margin, top - 2, width, pdf.get_y() - top + 4)
            pdf.set_line_width(0.2)
            pdf.ln(4)
        pdf.ln(1.5)
    elif isinstance(block, Preformatted):
        import textwrap

        pdf.set_font("mono", "", 6.3)
        pdf.set_fill_color(246, 246, 246)
        columns = int(width / pdf.get_string_width("M"))
        for line in block.text.splitlines():  # one cell per line: the text needs no paragraph breaking
            for piece in textwrap.wrap(line, columns, subsequent_indent="    ") or [""]:
                pdf.cell(width, 2.9, piece, fill=True, new_x="LMARGIN", new_y="NEXT")
        pdf.ln(1.5)
    elif isinstance(block, Figure):
        if pdf.get_y() > pdf.h - 125:
            pdf.add_page()
        pdf.image(io.BytesIO(block.png), x=pdf.l_margin, w=width)
        pdf.set_font("sans", "", 8.5)
        pdf.multi_cell(width, 4.4, f"Figure {block.number}. {block.caption}")
        pdf.ln(4)
    elif isinstance(block, Table):
        size = 6.8 if block.small else 8.5
        pdf.set_font("sans", "", size)
        widths = block.widths or tuple(1.0 for _ in block.header)
        aligns = []
        for j in range(len(block.header)):
            numeric = any(j < len(row) and row[j].numeric for row in block.rows)
            aligns.append("RIGHT" if numeric else "LEFT")
        pdf.set_draw_color(170, 170, 170)
        with pdf.table(col_widths=widths, width=width, text_align=tuple(aligns), headings_style=heading,
                       line_height=1.35 * size * 0.3528, padding=0.8, cell_fill_mode=TableCellFillMode.NONE,
                       first_row_as_headings=True) as table:
            row = table.row()
            for h in block.header:
                row.cell(h)
            for k, cells in enumerate(block.rows):
                failing = k < len(block.row_classes) and block.row_classes[k] == "fail"
                row = table.row()
                for cell in cells:
                    style = None
                    if failing:
                        style = _face(fill=(253, 226, 226), bold=cell.css == "verdict-fail")
                    elif cell.css == "verdict-pass":
                        style = _face(colour=(0, 100, 0))
                    row.cell(cell.text, style=style)
        pdf.ln(2)


def _face(fill=None, colour=None, bold=False):
    from fpdf.fonts import FontFace

    return FontFace(emphasis="BOLD" if bold else None, fill_color=fill, color=colour)
