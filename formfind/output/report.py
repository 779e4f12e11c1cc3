"""The calculation report: one self-contained HTML file (inline SVG, print-friendly) and a PDF.

Sections, in order, each an HTML ``<section>`` with a fixed id (tests and readers rely on them):

    cover       case name and title, the input file's SHA-256, versions of formfind and its solvers
    inputs      the principal inputs with units, the defaults that were filled in, the case file itself
    method      assumptions and method: engine, discretisation, sign conventions, form finding
                (objective, constraints that bind, solver, status, certificate)
    results     per case and combination: thrust, peak N, V, M and where; buckling factors; reactions
    diagrams    the figures of the run, inline SVG
    verdicts    the verdict table of the checks (numbers equal to checks.json: each value cell carries
                its exact value in ``data-value``)
    warnings    what the reader must not miss: failed checks, low buckling factors, loose certificates
    cautions    the standing cautions

Nothing here computes mechanics: it formats `ShapeResult`, `CaseAnalysis` and `CheckResult`.
"""

from __future__ import annotations

import hashlib
import html
import io
import re
import textwrap
from importlib import metadata
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import summarise
from formfind.design.check import FAIL, CheckResult
from formfind.design.shape import ShapeResult
from formfind.model.case import Case
from formfind.output.tables import CAUTION, SIGN_CONVENTION

SECTIONS = ("cover", "inputs", "method", "results", "diagrams", "verdicts", "warnings", "cautions")
PACKAGES = ("numpy", "scipy", "cvxpy", "highspy", "clarabel", "matplotlib", "ezdxf")
CAUTIONS = (
    "This report is an aid to a qualified engineer, not a substitute for one.",
    "Local codes and licensed practice govern every design; the checks here use the limits the case "
    "file gives, and formfind ships no code values.",
    "The load factors in the example cases are examples only, not code values for any jurisdiction.",
    "Analysis is linear elastic in the plane of the arch unless a row says otherwise; out-of-plane "
    "stability, connections, foundations and construction stages are outside this report.",
)

STYLE = """
body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10.5pt; color: #111; margin: 2em auto;
       max-width: 60em; line-height: 1.35; }
h1 { font-size: 18pt; margin-bottom: 0.2em; } h2 { font-size: 13pt; border-bottom: 1px solid #888;
  margin-top: 1.6em; page-break-after: avoid; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 9pt; }
th, td { border: 1px solid #bbb; padding: 2px 6px; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.fail td { background: #fde2e2; } .verdict-fail { color: #a00; font-weight: bold; }
.verdict-pass { color: #060; } pre { background: #f6f6f6; padding: 0.6em; font-size: 8pt; overflow-x: auto; }
figure { margin: 1em 0; page-break-inside: avoid; } figure svg { max-width: 100%; height: auto; }
.caution { border: 2px solid #a00; padding: 0.5em 1em; }
@media print { body { margin: 0; max-width: none; } section { page-break-inside: auto; } }
"""


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


def _e(text: object) -> str:
    return html.escape(str(text), quote=True)


def _num(value: float | None, digits: int = 4) -> str:
    if value is None:
        return ""
    if isinstance(value, float | np.floating) and not np.isfinite(value):
        return "inf" if value > 0 else "-inf"
    return f"{value:.{digits}g}"


def _cell(value: float | None, digits: int = 4) -> str:
    """A numeric cell showing ``digits`` figures, carrying the exact value in data-value."""
    if value is None:
        return '<td class="num"></td>'
    exact = repr(float(value)) if np.isfinite(value) else ("inf" if value > 0 else "-inf")
    return f'<td class="num" data-value="{exact}">{_e(_num(value, digits))}</td>'


def _table(header: list[str], rows: list[list[str]], row_classes: list[str] | None = None) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in header)
    body = []
    for k, cells in enumerate(rows):
        cls = f' class="{row_classes[k]}"' if row_classes and row_classes[k] else ""
        body.append(f"<tr{cls}>" + "".join(c if c.startswith("<td") else f"<td>{_e(c)}</td>" for c in cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def warnings(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None,
             checks: CheckResult | None) -> list[str]:
    """Plain-language warnings drawn from the results."""
    out = []
    if checks is not None:
        for r in checks.rows:
            if r.verdict == FAIL:
                where = f" at x = {r.x_m:.3f} m" if r.x_m is not None else ""
                out.append(f"Check failed: {r.name} = {_num(r.value)} {r.unit} against {_num(r.limit)} {r.unit}, "
                           f"{r.combination} ({r.state}){where}.")
    if analysis is not None:
        for b in analysis.buckling:
            if b.critical_factor < case.check.second_order_below:
                out.append(f"Buckling factor of {b.group} is {b.critical_factor:.3g}, below "
                           f"{case.check.second_order_below:g}: second-order effects matter (see the verdict rows).")
    if shape is not None:
        if shape.status not in ("optimal", "converged"):
            out.append(f"Form finding ended with status {shape.status!r}.")
        if shape.gap > 1e-3:
            out.append(f"Form finding's certificate leaves a relative gap of {shape.gap:.1e}: the axis may not be "
                       "the best one within its limits.")
    out.append("The load factors of the case file are the user's; examples shipped with formfind are examples only.")
    return out


def _inputs(case: Case, analysis: CaseAnalysis | None) -> str:
    g, s, sec = case.geometry, case.supports, case.section
    rows = [
        ["span", _cell(g.span_m), "m"], ["rise (at midspan, above the springing chord)", _cell(g.rise_m), "m"],
        ["shape of the given axis", g.shape.value, ""], ["supports", s.kind.value, ""],
        ["rib depth (crown)", _cell(sec.depth_m), "m"], ["rib area (crown)", _cell(sec.area_m2), "m2"],
        ["second moment of area (crown)", _cell(sec.second_moment_m4), "m4"],
        ["elastic modulus", _cell(sec.elastic_modulus_kN_m2 / 1000.0), "MPa"],
        ["unit weight", _cell(sec.unit_weight_kN_m3), "kN/m3"], ["section variation", sec.variation.value, ""],
        ["stations", str(analysis.axis.count if analysis else case.stations.count), ""],
        ["load cases", ", ".join(f"{c.name} ({c.action.value})" for c in case.cases), ""],
        ["combinations", "; ".join(f"{c.name}: " + ", ".join(f"{f:g} x {n}" for n, f in c.factors)
                                  for c in case.combinations) or "none", ""],
    ]
    if s.hinge_x_m is not None:
        rows.insert(4, ["crown hinge at", _cell(s.hinge_x_m), "m"])
    text = _table(["input", "value", "unit"], rows)
    defaults = "".join(f"<li><code>{_e(d)}</code></li>" for d in case.defaults_used) or "<li>none</li>"
    source = ""
    path = Path(case.source) if case.source else None
    if path is not None and path.is_file():
        source = f"<h3>The case file</h3><pre>{_e(path.read_text(encoding='utf-8', errors='replace'))}</pre>"
    return f"{text}<h3>Defaults filled in</h3><ul>{defaults}</ul>{source}"


def _method(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None) -> str:
    parts = []
    if analysis is not None:
        engine = analysis.cases.engine
        parts.append(
            f"<p>Engine: <b>{_e(engine)}</b> ({'exact statics of the three-hinged arch' if engine == 'statics' else 'frame model of straight elements between stations, verified by equilibrium and backward error'}). "
            f"{analysis.axis.count} stations ({_e(case.stations.spacing.value)} spacing), arc length "
            f"{analysis.axis.length_m:.4g} m. Shear deformation: {'on' if case.analysis.shear_deformation else 'off'}. "
            f"Buckling: {'linear, in-plane, ' + ('pressure following the axis' if case.analysis.pressure_follows_axis else 'loads keeping their direction') if case.analysis.buckling else 'not analysed'}.</p>")
    parts.append(f"<p>Sign conventions: {_e(SIGN_CONVENTION)}</p>")
    if shape is not None:
        f = case.find
        limits = []
        if f.rise_min_m is not None or f.rise_max_m is not None:
            limits.append(f"rise between {_num(f.rise_min_m)} and {_num(f.rise_max_m)} m")
        if f.symmetric:
            limits.append("symmetric axis")
        if f.concave:
            limits.append("concave axis")
        if f.clearance:
            limits.append("clearance line (intrados)")
        if f.envelope:
            limits.append("site envelope (extrados)")
        if f.max_slope is not None:
            limits.append(f"slope at most {f.max_slope:g}")
        if f.max_curvature_per_m is not None:
            limits.append(f"curvature at most {f.max_curvature_per_m:g} 1/m")
        rows = [["objective", f"{shape.objective.value} ({shape.unit})"], ["optimum", _cell(shape.value, 6)],
                ["checked by the exact engine", _cell(shape.checked_value, 6)],
                ["dual bound", _cell(shape.dual_bound, 6)], ["relative gap", _cell(shape.gap, 3)],
                ["method", shape.method], ["solver and status", f"{shape.solver}, {shape.status}"],
                ["iterations", str(len(shape.iterations))], ["governing states", ", ".join(shape.states)],
                ["limits imposed", "; ".join(limits) or "none"],
                ["constraints that bind", "; ".join(f"{a.name} ({len(a.stations)} stations, cost {_num(a.cost)} {a.unit})"
                                                    for a in shape.active) or "none"]]
        parts.append("<h3>Form finding</h3>" + _table(["item", "value"], rows))
    return "".join(parts)


def _results(analysis: CaseAnalysis) -> str:
    factors = {b.group: b.critical_factor for b in analysis.buckling}
    rows = []
    for label, resp in (("case", analysis.cases), ("combination", analysis.combinations)):
        for s in summarise(resp):
            rows.append([label, s.group, str(s.states), _cell(s.thrust_kN), _cell(s.M.value), _cell(s.M.x_m),
                         _cell(s.N.value), _cell(s.N.x_m), _cell(s.V.value), _cell(s.V.x_m),
                         _cell(factors.get(s.group)) if s.group in factors else "<td></td>"])
    header = ["set", "name", "states", "thrust H kN", "peak M kNm", "at x m", "peak N kN", "at x m", "peak V kN",
              "at x m", "buckling factor"]
    return _table(header, rows)


def _verdicts(checks: CheckResult) -> str:
    header = ["check", "value", "limit", "unit", "utilisation", "combination", "state", "x m", "verdict", "note"]
    rows, classes = [], []
    for r in checks.rows:
        verdict = f'<td class="verdict-{r.verdict}">{_e(r.verdict.upper())}</td>'
        rows.append([r.name, _cell(r.value), _cell(r.limit), r.unit, _cell(r.utilisation, 3), r.combination, r.state,
                     _cell(r.x_m), verdict, r.note])
        classes.append("fail" if r.verdict == FAIL else "")
    summary = ("<p class='verdict-pass'>All checks pass.</p>" if checks.passed
               else "<p class='verdict-fail'>SOME CHECKS FAIL.</p>")
    return summary + _table(header, rows, classes)


def _inline_svg(data: bytes) -> str:
    text = data.decode("utf-8")
    text = re.sub(r"<\?xml[^>]*\?>", "", text)
    text = re.sub(r"<!DOCTYPE[^>]*>", "", text, flags=re.S)
    return text.strip()


def report_html(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None, checks: CheckResult | None,
                figures_svg: dict[str, bytes], generated: str = "") -> str:
    """The whole report as one HTML document (no external resources)."""
    title = case.title or case.name
    ver = versions()
    cover = (f"<h1>{_e(title)}</h1><p>Calculation report of case <b>{_e(case.name)}</b>"
             f"{' generated ' + _e(generated) if generated else ''}.</p>"
             + _table(["item", "value"], [["case file", case.source or "(built in code)"],
                                         ["case file SHA-256", input_digest(case) or "(no file)"]]
                      + [[f"version of {k}", v] for k, v in ver.items()])
             + f"<p class='caution'>{_e(CAUTIONS[0])} {_e(CAUTIONS[1])}</p>")
    body = {
        "cover": cover,
        "inputs": "<h2>1. Inputs</h2>" + _inputs(case, analysis),
        "method": "<h2>2. Assumptions and method</h2>" + _method(case, shape, analysis),
        "results": "<h2>3. Results</h2>" + (_results(analysis) if analysis else "<p>No analysis was run.</p>"),
        "diagrams": "<h2>4. Diagrams</h2>" + "".join(
            f"<figure id='{_e(name)}'>{_inline_svg(data)}<figcaption>{_e(name)}</figcaption></figure>"
            for name, data in sorted(figures_svg.items())),
        "verdicts": "<h2>5. Verdict table</h2>" + (_verdicts(checks) if checks else "<p>No checks were run.</p>"),
        "warnings": "<h2>6. Warnings</h2><ul>" + "".join(f"<li>{_e(w)}</li>"
                                                        for w in warnings(case, shape, analysis, checks)) + "</ul>",
        "cautions": "<h2>7. Cautions</h2><ul class='caution'>" + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
                    + f"</ul><p>{_e(CAUTION)}</p>",
    }
    sections = "\n".join(f'<section id="{sid}">{body[sid]}</section>' for sid in SECTIONS)
    return (f"<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{_e(title)}: calculation "
            f"report</title><style>{STYLE}</style></head><body>\n{sections}\n</body></html>\n")


def report_pdf(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None, checks: CheckResult | None,
               figure_axes: list, generated: str = "") -> bytes:
    """The report as PDF (matplotlib only): a text page per section, then the diagrams."""
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    pages: list[tuple[str, list[str]]] = []
    ver = versions()
    pages.append((f"{case.title or case.name}: calculation report",
                  [f"case {case.name}" + (f", generated {generated}" if generated else ""),
                   f"case file {case.source or '(built in code)'}", f"SHA-256 {input_digest(case) or '(no file)'}"]
                  + [f"{k} {v}" for k, v in ver.items()] + [""] + list(CAUTIONS)))
    g, sec = case.geometry, case.section
    inputs = [f"span {g.span_m:g} m, rise {g.rise_m:.4g} m, given axis {g.shape.value}, supports "
              f"{case.supports.kind.value}", f"rib: depth {sec.depth_m:g} m, area {sec.area_m2:.4g} m2, second moment "
              f"{sec.second_moment_m4:.4g} m4, E {sec.elastic_modulus_kN_m2 / 1000:g} MPa, unit weight "
              f"{sec.unit_weight_kN_m3:g} kN/m3 ({sec.variation.value})",
              "load cases: " + ", ".join(f"{c.name} ({c.action.value})" for c in case.cases)]
    inputs += [f"combination {c.name}: " + ", ".join(f"{f:g} x {n}" for n, f in c.factors) for c in case.combinations]
    inputs += ["", "defaults filled in:"] + [f"  {d}" for d in case.defaults_used]
    pages.append(("Inputs", inputs))
    method = [f"sign conventions: {SIGN_CONVENTION}"]
    if analysis is not None:
        method.insert(0, f"engine {analysis.cases.engine}, {analysis.axis.count} stations "
                         f"({case.stations.spacing.value} spacing), arc length {analysis.axis.length_m:.4g} m")
    if shape is not None:
        method += ["", f"form finding: {shape.objective.value} = {shape.value:.6g} {shape.unit} ({shape.method}, "
                       f"{shape.solver}, {shape.status}); exact re-check {shape.checked_value:.6g} {shape.unit}; "
                       f"dual bound {_num(shape.dual_bound, 6)}; gap {shape.gap:.1e}"]
        method += [f"binding: {a.name} at {len(a.stations)} stations (cost {_num(a.cost)} {a.unit})" for a in shape.active]
    pages.append(("Assumptions and method", method))
    if analysis is not None:
        lines = [f"{'name':<24} {'H kN':>10} {'peak M kNm':>11} {'x m':>7} {'peak N kN':>10} {'peak V kN':>10}"]
        for resp in (analysis.cases, analysis.combinations):
            for s in summarise(resp):
                lines.append(f"{s.group[:24]:<24} {s.thrust_kN:>10.4g} {s.M.value:>11.4g} {s.M.x_m:>7.3f} "
                             f"{s.N.value:>10.4g} {s.V.value:>10.4g}")
        pages.append(("Results", lines))
    if checks is not None:
        lines = [f"{'check':<34} {'value':>10} {'limit':>9} {'unit':<4} {'util':>6}  {'governing':<16} verdict"]
        for r in checks.rows:
            lines.append(f"{r.name[:34]:<34} {_num(r.value):>10} {_num(r.limit):>9} {r.unit:<4} "
                         f"{_num(r.utilisation, 3):>6}  {r.combination[:16]:<16} {r.verdict.upper()}")
        lines.append("")
        lines.append("verdict: " + ("all checks pass" if checks.passed else "SOME CHECKS FAIL"))
        pages.append(("Verdict table", lines))
    pages.append(("Warnings and cautions", warnings(case, shape, analysis, checks) + [""] + list(CAUTIONS)))
    buf = io.BytesIO()
    with PdfPages(buf, metadata={"Creator": f"formfind {__version__}", "CreationDate": None}) as pdf:
        for title, lines in pages:
            fig = Figure(figsize=(8.27, 11.69))
            fig.text(0.06, 0.95, "\n".join(textwrap.wrap(title, 60)), fontsize=13, weight="bold", va="top")
            wrapped = []
            for line in lines:
                wrapped += textwrap.wrap(line, 110, subsequent_indent="  ") or [""]
            fig.text(0.06, 0.88, "\n".join(wrapped[:90]), fontsize=7, family="monospace", va="top")
            pdf.savefig(fig)
        for ax in figure_axes:
            pdf.savefig(ax.figure)
    return buf.getvalue()
