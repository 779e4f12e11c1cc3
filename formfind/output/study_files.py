"""A study's files: the table streamed row by row, then JSON, the trade-off plots, a report page and a
manifest.

The CSV is written as the rows arrive (a sweep of thousands of points never holds its axes, and the
table itself is written to a temporary name and renamed when complete); the JSON and plots follow
from the rows, which hold a few numbers each, and from a bounded sample of the found axes (at most
``MAX_AXES_DRAWN`` of them, each at most ``AXIS_POINTS_DRAWN`` points) for the overlay of axes.

The plots are honest about precision: values are drawn rounded to four significant figures, a
quantity that hardly varies over the sweep is drawn flat and labelled constant, and the Pareto front
is computed on the rounded values (so solver noise cannot build a stepped "front").
"""

from __future__ import annotations

import hashlib
import html
from collections.abc import Iterable
from dataclasses import replace
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.design.study import StudyRow, pareto_front
from formfind.model.case import Case
from formfind.output import files, numbers, plots, tables
from formfind.output.package import figure_bytes

FIGURES = (
    ("fig-study-thrust", "The largest thrust on the abutments against rise/span."),
    ("fig-study-moment", "The peak bending moment over every combination against rise/span."),
    ("fig-study-buckling", "The least in-plane buckling factor against rise/span, with the least factor the case "
                           "asks for."),
    ("fig-study-material", "The weight of the rib against rise/span, in tonnes."),
    ("fig-study-pareto", "Peak moment against thrust for every point: the Pareto front joins the points no other "
                         "beats in both."),
    ("fig-study-axes", "The found axes of every point with an axis, drawn to their span's scale and coloured by "
                       "rise/span."),
)
MAX_AXES_DRAWN = 400  # the overlay of axes keeps at most this many (every k-th point beyond)
AXIS_POINTS_DRAWN = 101  # ... each resampled to at most this many points


def study_names() -> list[str]:
    """Every file a study writes."""
    return (["study.csv", "study-axes.csv", "study.json", "study.html", "manifest-study.json"]
            + [f"{stem}.{e}" for stem, _ in FIGURES for e in ("png", "svg")])


def groups_of(case: Case) -> list[str]:
    """Combination (or case) names whose thrust the table reports."""
    return [c.name for c in case.combinations] or [c.name for c in case.cases]


def _thin(x: tuple[float, ...], y: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray]:
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if x.size <= AXIS_POINTS_DRAWN:
        return x, y
    keep = np.unique(np.round(np.linspace(0, x.size - 1, AXIS_POINTS_DRAWN)).astype(int))
    return x[keep], y[keep]


def write_study(folder: Path, case: Case, rows: Iterable[StudyRow], overwrite: bool) -> tuple[list[Path], list[StudyRow]]:
    """Stream ``rows`` into study.csv (and each point's found axis into study-axes.csv), then write
    study.json, the plots, study.html and manifest-study.json."""
    files.prepare_folder(folder, study_names(), overwrite)
    groups = groups_of(case)
    kept: list[StudyRow] = []
    drawn: list[tuple[int, np.ndarray, np.ndarray]] = []
    stride = 1
    with files.StreamingFile(folder / "study.csv") as out, files.StreamingFile(folder / "study-axes.csv") as axes:
        out.write(tables.study_header(groups))
        axes.write("point,station,x_m,y_m\n")
        for row in rows:
            out.write(tables.study_line(row, groups))
            axes.write("".join(f"{row.index},{i},{numbers.length(x)},{numbers.length(y)}\n"
                               for i, (x, y) in enumerate(zip(row.axis_x_m, row.axis_y_m, strict=True))))
            if row.status == "ok" and row.axis_x_m and len(kept) % stride == 0:
                drawn.append((len(kept), *_thin(row.axis_x_m, row.axis_y_m)))
                if len(drawn) > MAX_AXES_DRAWN:  # keep every other one from here on
                    drawn = drawn[::2]
                    stride *= 2
            kept.append(replace(row, axis_x_m=(), axis_y_m=()))  # the axis is on disk: let it go
        csv_path = out.commit()
        axes_path = axes.commit()
    contents: dict[str, bytes] = {"study.json": tables.study_json(kept, groups, case.name).encode()}
    rendered = study_figures(case, kept, drawn)
    contents.update(rendered)
    captions = [(stem, caption, rendered[f"{stem}.svg"]) for stem, caption in FIGURES if f"{stem}.svg" in rendered]
    contents["study.html"] = study_html(case, kept, groups, captions).encode("utf-8")
    written = [csv_path, axes_path]
    manifest = {"formfind_version": __version__, "files": [
        {"name": p.name, "bytes": p.stat().st_size, "sha256": hashlib.sha256(p.read_bytes()).hexdigest()}
        for p in (csv_path, axes_path)]}
    for name in sorted(contents):
        written.append(files.write_bytes(folder / name, contents[name]))
        manifest["files"].append({"name": name, "bytes": len(contents[name]),
                                  "sha256": hashlib.sha256(contents[name]).hexdigest()})
    written.append(files.write_text(folder / "manifest-study.json", tables.dumps(manifest, indent=2)))
    return written, kept


def study_figures(case: Case, kept: list[StudyRow], drawn: list) -> dict[str, bytes]:
    """The study's figures as PNG and SVG bytes, by file name."""
    out: dict[str, bytes] = {}
    own = case.geometry.rise_m / case.geometry.span_m
    axes = {}
    for (stem, _), quantity in zip(FIGURES[:4], plots.STUDY_QUANTITIES, strict=True):
        axes[stem] = plots.plot_study(kept, quantity, own, case.check.min_buckling_factor)
    thrust = plots.rounded(np.array([r.max_thrust_kN if r.status == "ok" else np.nan for r in kept]))
    moment = plots.rounded(np.array([r.peak_M_all_kNm if r.status == "ok" else np.nan for r in kept]))
    ratios = np.array([r.rise_over_span for r in kept])
    axes["fig-study-pareto"] = plots.plot_pareto(thrust, moment, pareto_front(thrust, moment), ratios)
    if drawn:
        axes["fig-study-axes"] = plots.plot_study_axes([(x, y) for _, x, y in drawn],
                                                       np.array([ratios[k] for k, _, _ in drawn]))
    for stem, ax in axes.items():
        for fmt, data in figure_bytes(ax).items():
            out[f"{stem}.{fmt}"] = data
    return out


def study_html(case: Case, kept: list[StudyRow], groups: list[str], figures: list[tuple[str, str, bytes]]) -> str:
    """One self-contained page: what was swept, the plots with captions, the table of points, the
    cautions."""
    from formfind.output.report import CAUTIONS, STYLE, _inline_svg

    e = html.escape
    ok = [r for r in kept if r.status == "ok"]
    passing = [r for r in ok if r.verdict == "pass"]
    spans = sorted({r.span_m for r in kept})
    ratios = sorted({r.rise_over_span for r in kept})
    head = ["point", "span m", "rise m", "rise/span", "depth m", "status", "largest thrust kN", "peak M kNm",
            "buckling factor", "weight t", "worst utilisation", "verdict", "reason"]
    body = []
    for r in kept:
        cells = [str(r.index), numbers.length(r.span_m), numbers.length(r.rise_m), numbers.for_reading(r.rise_over_span),
                 numbers.length(r.depth_m), r.status, numbers.for_reading(r.max_thrust_kN, 5),
                 numbers.for_reading(r.peak_M_all_kNm, 5), numbers.for_reading(r.buckling_factor, 3),
                 numbers.for_reading(r.weight_kN / 9.80665, 4), numbers.for_reading(r.worst_utilisation, 3),
                 r.verdict, r.reason]
        cls = ' class="fail"' if r.status != "ok" or r.verdict == "fail" else ""
        body.append(f"<tr{cls}>" + "".join(
            f'<td class="num">{e(c)}</td>' if k in (1, 2, 3, 4, 6, 7, 8, 9, 10) else f"<td>{e(c)}</td>"
            for k, c in enumerate(cells)) + "</tr>")
    figs = "".join(f"<figure id='{e(stem)}'>{_inline_svg(svg)}<figcaption><b>Figure {k}.</b> {e(caption)}"
                   f"</figcaption></figure>" for k, (stem, caption, svg) in enumerate(figures, 1))
    title = f"{case.title or case.name}: rise-span study"
    summary = (f"{len(kept)} points: spans {', '.join(f'{s:g}' for s in spans)} m; rise/span "
               f"{', '.join(f'{r:g}' for r in ratios)}. {len(ok)} with an axis, {len(passing)} passing every check.")
    return (f"<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{e(title)}</title>"
            f"<style>{STYLE}</style></head><body>\n<section id=\"summary\"><h1>{e(title)}</h1><p>{e(summary)}</p>"
            f"<p>Thrust of each combination and the found axes are in study.csv and study-axes.csv.</p></section>\n"
            f"<section id=\"plots\"><h2>1. Plots</h2>{figs}</section>\n"
            f"<section id=\"points\"><h2>2. Points</h2><table class=\"small\"><thead><tr>"
            + "".join(f"<th>{e(h)}</th>" for h in head) + f"</tr></thead><tbody>{''.join(body)}</tbody></table></section>\n"
            f"<section id=\"cautions\"><h2>3. Cautions</h2><ul class=\"caution\">"
            + "".join(f"<li>{e(c)}</li>" for c in CAUTIONS) + "</ul></section>\n</body></html>\n")
