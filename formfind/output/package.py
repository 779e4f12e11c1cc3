"""Everything a run writes, in one place: tables, the drawing, the diagrams and a manifest.

All files are first produced in memory; the output folder is then checked once (nothing is
overwritten without permission), every file is written to a temporary name and renamed into place,
and ``manifest.json`` lists each file with its size and SHA-256 last. Nothing here computes mechanics:
it reads `ShapeResult` and `CaseAnalysis` (thrust lines come from `formfind.analysis.response`).
"""

from __future__ import annotations

import datetime
import hashlib
import io
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import envelopes, thrust_line
from formfind.design.shape import ShapeResult, governing_groups
from formfind.enums import SupportKind
from formfind.model.case import Case
from formfind.output import files, plots, report, tables
from formfind.output.dxf import DrawingContent, build_drawing

MAX_THRUST_LINES = 4


def figure_bytes(ax) -> dict[str, bytes]:
    """A figure as PNG and SVG bytes (SVG without a date, so reruns give the same bytes)."""
    fig = ax.figure
    fig.tight_layout()
    out = {}
    for fmt in ("png", "svg"):
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, metadata={"Date": None} if fmt == "svg" else None)
        out[fmt] = buf.getvalue()
    return out


def _thrust_lines(case: Case, analysis: CaseAnalysis) -> tuple[tuple[str, np.ndarray], ...]:
    """Thrust lines of the governing combinations (their first state), at most four."""
    axis = analysis.axis
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    wanted = set(governing_groups(case))
    lines = []
    for group in dict.fromkeys(response.groups):
        if wanted and group not in wanted:
            continue
        k = response.groups.index(group)
        line = thrust_line(axis.x, axis.y, axis.theta, response.M[k], response.N[k])
        # far outside the rib the offset says only "no compression here"; leave a gap in the drawing
        offset = np.hypot(*(line - np.stack([axis.x, axis.y], axis=-1)).T)
        line[offset > max(3.0 * float(analysis.section.depth_m.max()), 0.1 * axis.span_m)] = np.nan
        lines.append((group, line))
    return tuple(lines[:MAX_THRUST_LINES])


def drawing_bytes(case: Case, analysis: CaseAnalysis) -> bytes:
    """The DXF drawing of the analysed axis."""
    axis = analysis.axis
    hinge = case.hinge_station(axis) if case.supports.kind is SupportKind.THREE_HINGED else None
    content = DrawingContent(case.name, case.title, axis, analysis.section.depth_m, hinge,
                             _thrust_lines(case, analysis), case.find.clearance, case.find.envelope)
    doc = build_drawing(content, case.outputs.drawing_unit, case.outputs.dxf_version.value,
                        case.outputs.station_label_interval_m)
    stream = io.StringIO()
    doc.write(stream)
    return stream.getvalue().encode("utf-8")


def figure_axes(case: Case, analysis: CaseAnalysis, checks=None) -> dict[str, object]:
    """The diagrams as matplotlib Axes, by file stem (with a patterned load: its influence line of M
    at the station where the pattern's moment is largest)."""
    axis = analysis.axis
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    out: dict[str, object] = {}
    out["fig-axis"] = plots.plot_axis(axis, analysis.section.depth_m, _thrust_lines(case, analysis),
                                      case.find.clearance, case.find.envelope)
    envs = envelopes(response)
    worst = max(envs, key=lambda e: float(np.abs(np.concatenate([e.maximum[2], e.minimum[2]])).max()))
    k = response.groups.index(worst.group)
    out["fig-moment-along"] = plots.plot_along_arch(axis, response.M[k], "M", worst.group)
    for stem, effect, arr in (("fig-axial-along", "N", response.N), ("fig-shear-along", "V", response.V)):
        out[stem] = plots.plot_along_arch(axis, arr[k], effect, worst.group)
    if checks is not None and checks.pattern is not None:
        i = int(np.argmax(checks.pattern.maximum[2]))
        out["fig-influence-M"] = plots.plot_influence_line(
            axis.x, checks.pattern.influence_M[:, i], f"M at x = {axis.x[i]:.2f} m", "kNm")
    for e, effect in enumerate(("N", "V", "M")):
        ax = plots.new_axes()
        for env in envs[:6]:
            plots.plot_envelope(axis.x, env.maximum[e], env.minimum[e], effect, env.group, ax=ax)
        out[f"fig-envelope-{effect}"] = ax
    if analysis.buckling:
        critical = min(analysis.buckling, key=lambda b: b.critical_factor)
        if critical.factors.size:
            out["fig-buckling"] = plots.plot_buckling_mode(axis, critical.modes[0], critical.critical_factor,
                                                           critical.symmetry[0])
    return out


def figure_files(case: Case, analysis: CaseAnalysis, axes: dict[str, object] | None = None) -> dict[str, bytes]:
    """The diagrams as PNG and SVG bytes, by file name."""
    out: dict[str, bytes] = {}
    for stem, ax in (axes or figure_axes(case, analysis)).items():
        for fmt, data in figure_bytes(ax).items():
            out[f"{stem}.{fmt}"] = data
    return out


def build_files(case: Case, shape: ShapeResult | None, analysis: CaseAnalysis | None,
                all_states: bool = False, checks=None, drawings: bool = True) -> dict[str, bytes]:
    """Every output file's bytes, by name (the manifest is added when writing). ``drawings`` adds the
    DXF and the diagrams (they need an analysis)."""
    out: dict[str, bytes] = {}
    if checks is not None:
        out["checks.csv"] = tables.checks_csv(checks).encode()
        out["checks.json"] = tables.checks_json(checks, case.name).encode()
        if checks.pattern is not None:
            out["patterned.csv"] = tables.patterned_csv(checks).encode()
        if checks.thrust_lines:
            out["thrust-lines.csv"] = tables.thrust_lines_csv(checks).encode()
    if shape is not None:
        section = case.section.at(shape.axis)
        out["shape.json"] = tables.shape_json(shape, case.name).encode()
        out["axis.csv"] = tables.axis_csv(shape.axis, section).encode()
        out["setting-out.csv"] = tables.setting_out_csv(shape.axis, section,
                                                        case.outputs.setting_out_interval_m).encode()
    if analysis is not None:
        out["analysis.json"] = tables.analysis_json(analysis).encode()
        out["forces.csv"] = tables.forces_csv(analysis).encode()
        out["reactions.csv"] = tables.reactions_csv(analysis).encode()
        out["summary.csv"] = tables.summary_csv(analysis).encode()
        out["buckling.csv"] = tables.buckling_csv(analysis).encode()
        if all_states:
            out["states.csv"] = tables.states_csv(analysis).encode()
        if shape is None:
            out["setting-out.csv"] = tables.setting_out_csv(analysis.axis, analysis.section,
                                                            case.outputs.setting_out_interval_m).encode()
        if drawings:
            out["axis.dxf"] = drawing_bytes(case, analysis)
            axes = figure_axes(case, analysis, checks)
            figures = figure_files(case, analysis, axes)
            out.update(figures)
            svgs = {name: data for name, data in figures.items() if name.endswith(".svg")}
            today = datetime.date.today().isoformat()
            out["report.html"] = report.report_html(case, shape, analysis, checks, svgs, today).encode("utf-8")
            out["report.pdf"] = report.report_pdf(case, shape, analysis, checks, list(axes.values()), today)
    return out


def write_package(folder: Path, contents: dict[str, bytes], overwrite: bool) -> list[Path]:
    """Write every file atomically, then ``manifest.json``; refuse to overwrite unless asked."""
    names = sorted(contents) + ["manifest.json"]
    files.prepare_folder(folder, names, overwrite)
    written = []
    manifest = {"formfind_version": __version__, "files": []}
    for name in sorted(contents):
        data = contents[name]
        written.append(files.write_bytes(folder / name, data))
        manifest["files"].append({"name": name, "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()})
    written.append(files.write_text(folder / "manifest.json", tables.dumps(manifest, indent=2)))
    return written
