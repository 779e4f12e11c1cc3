"""A study's files: the table streamed row by row, then JSON, the trade-off plots and a manifest.

The CSV is written as the rows arrive (a sweep of thousands of points never holds its axes, and the
table itself is written to a temporary name and renamed when complete); the JSON and plots follow
from the rows, which hold a few numbers each.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable
from dataclasses import replace
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.design.study import StudyRow, pareto_front
from formfind.model.case import Case
from formfind.output import files, numbers, plots, tables
from formfind.output.package import figure_bytes

FIGURES = ("fig-study-thrust", "fig-study-moment", "fig-study-buckling", "fig-study-material", "fig-study-pareto")


def study_names() -> list[str]:
    """Every file a study writes."""
    return ["study.csv", "study-axes.csv", "study.json", "manifest-study.json"] + [f"{s}.{e}" for s in FIGURES for e in ("png", "svg")]


def groups_of(case: Case) -> list[str]:
    """Combination (or case) names whose thrust the table reports."""
    return [c.name for c in case.combinations] or [c.name for c in case.cases]


def write_study(folder: Path, case: Case, rows: Iterable[StudyRow], overwrite: bool) -> tuple[list[Path], list[StudyRow]]:
    """Stream ``rows`` into study.csv (and each point's found axis into study-axes.csv), then write
    study.json, the plots and manifest-study.json."""
    files.prepare_folder(folder, study_names(), overwrite)
    groups = groups_of(case)
    kept: list[StudyRow] = []
    with files.StreamingFile(folder / "study.csv") as out, files.StreamingFile(folder / "study-axes.csv") as axes:
        out.write(tables.study_header(groups))
        axes.write("point,station,x_m,y_m\n")
        for row in rows:
            out.write(tables.study_line(row, groups))
            axes.write("".join(f"{row.index},{i},{numbers.length(x)},{numbers.length(y)}\n"
                               for i, (x, y) in enumerate(zip(row.axis_x_m, row.axis_y_m, strict=True))))
            kept.append(replace(row, axis_x_m=(), axis_y_m=()))  # the axis is on disk: let it go
        csv_path = out.commit()
        axes_path = axes.commit()
    contents: dict[str, bytes] = {"study.json": tables.study_json(kept, groups, case.name).encode()}
    own = case.geometry.rise_m / case.geometry.span_m
    for stem, quantity in zip(FIGURES[:4], plots.STUDY_QUANTITIES, strict=True):
        for fmt, data in figure_bytes(plots.plot_study(kept, quantity, own)).items():
            contents[f"{stem}.{fmt}"] = data
    thrust = np.array([r.max_thrust_kN if r.status == "ok" else np.nan for r in kept])
    moment = np.array([r.peak_M_all_kNm if r.status == "ok" else np.nan for r in kept])
    ratios = np.array([r.rise_over_span for r in kept])
    ax = plots.plot_pareto(thrust, moment, pareto_front(thrust, moment), ratios)
    for fmt, data in figure_bytes(ax).items():
        contents[f"{FIGURES[4]}.{fmt}"] = data
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
