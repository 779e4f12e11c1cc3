"""Everything a run writes, in one place: tables, the drawing, the diagrams and a manifest.

All files are first produced in memory; the output folder is then checked once (nothing is
overwritten without permission), every file is written to a temporary name and renamed into place,
and ``manifest.json`` lists each file with its size and SHA-256 last. Nothing here computes mechanics:
it reads `ShapeResult` and `CaseAnalysis` (thrust lines come from `formfind.analysis.response`).
"""

from __future__ import annotations

import hashlib
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import envelopes, extreme, thrust_line
from formfind.design.shape import ShapeResult, governing_groups
from formfind.enums import SupportKind
from formfind.model.arcs import fit_arcs
from formfind.model.case import Case
from formfind.output import files, numbers, plots, report, tables
from formfind.output.dxf import DrawingContent, build_drawing, drawing_text

MAX_THRUST_LINES = 4


def figure_bytes(ax) -> dict[str, bytes]:
    """A figure as PNG and SVG bytes, each rendered once. The SVG has no date and its element ids come
    from a fixed salt, so reruns give the same bytes."""
    import matplotlib

    fig = ax.figure
    out = {}
    # SVG text as text (not glyph outlines): a third smaller, faster to write, selectable in the report
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "formfind"}):
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
    """The DXF drawing of the analysed axis, with its sheet (title block from [case], setting-out table)."""
    axis = analysis.axis
    hinge = case.hinge_station(axis) if case.supports.kind is SupportKind.THREE_HINGED else None
    d = case.document
    sheet = (("project", d.project), ("job number", d.job_number), ("revision", d.revision),
             ("drawn by", d.drawn_by), ("checked by", d.checked_by), ("date of issue", d.issue_date),
             ("case", case.name))
    rows = tables.setting_out_rows(axis, analysis.section, case.outputs.setting_out_interval_m)
    content = DrawingContent(case.name, case.title, axis, analysis.section.depth_m, hinge,
                             _thrust_lines(case, analysis), case.find.clearance, case.find.envelope, sheet,
                             rows[:, :5], d.issue_date, fit_arcs(axis, 1e-3 * case.outputs.arc_tolerance_mm))
    doc = build_drawing(content, case.outputs.drawing_unit, case.outputs.dxf_version.value,
                        case.outputs.station_label_interval_m)
    return drawing_text(doc, d.issue_date).encode("utf-8")


@dataclass(frozen=True, eq=False)
class Diagram:
    """One figure of a run: its file stem, a caption in words, and the matplotlib Axes."""

    stem: str
    caption: str
    ax: object


def diagrams(case: Case, analysis: CaseAnalysis, checks=None) -> list[Diagram]:
    """The run's figures, in the order the report shows them, each with its caption.

    Force diagrams along the arch show the state where the summary finds the largest value of their
    effect, and label that value and place from the same numbers. With a patterned load, its influence
    line of M at the station where the pattern bends most; for a no-tension ring, the ring at collapse.
    """
    axis = analysis.axis
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    colour_of = plots.colours(response.groups)
    hinge = case.hinge_station(axis) if case.supports.kind is SupportKind.THREE_HINGED else None
    out: list[Diagram] = []
    lines = _thrust_lines(case, analysis)
    reference = None
    if case.find.reference is not None:
        dense = np.linspace(0.0, axis.span_m, 401)
        reference = np.column_stack([dense, case.find.reference.ordinate(dense)])
    out.append(Diagram("fig-axis", "The axis, the rib and the thrust lines of the governing combinations "
                       f"({', '.join(label for label, _ in lines) or 'none'})"
                       + ("; dashed brown: the reference curve form finding kept near" if reference is not None else "")
                       + "; equal scales.",
                       plots.plot_axis(axis, analysis.section.depth_m, lines, case.find.clearance, case.find.envelope,
                                       hinge, colour_of, reference=reference)))
    for stem, effect in (("fig-moment-along", "M"), ("fig-axial-along", "N"), ("fig-shear-along", "V")):
        peak = extreme(response, effect)
        k = response.names.index(peak.state)
        left = None if effect == "M" else getattr(response, f"{effect}_left")[k]
        ax = plots.plot_along_arch(axis, getattr(response, effect)[k], left, effect, peak.state,
                                   (peak.value, peak.x_m), colour_of[peak.group])
        out.append(Diagram(stem, f"{plots.NAMES[effect][:1].upper()}{plots.NAMES[effect][1:]} along the arch in "
                           f"{peak.state}, the state of its largest value ({numbers.for_reading(peak.value)} "
                           f"{plots.UNITS[effect]} at x = {numbers.length(peak.x_m)} m); drawn normal to the axis, "
                           "positive on the intrados side, to the scale of the bar.", ax))
    shown = [e.group for e in _governing_envelopes(envelopes(response))]
    for effect in ("M", "N", "V"):
        out.append(Diagram(f"fig-envelope-{effect}", f"Envelopes of {plots.NAMES[effect]} against x: for each "
                           "combination the largest (full line) and least (dashed) over its states, with a step "
                           "at each point load" + (f"; the {len(shown)} combinations with the largest moments"
                                                   if len(shown) < len(set(response.groups)) else "") + ".",
                           plots.plot_envelopes(axis.x, response, shown, effect, colour_of)))
    if checks is not None and checks.pattern is not None:
        i = int(np.argmax(checks.pattern.maximum[2]))
        out.append(Diagram("fig-influence-M", f"Influence line of M at x = {numbers.length(axis.x[i])} m, where the "
                           "patterned load bends the arch most: the load is placed where the line is adverse.",
                           plots.plot_influence_line(axis.x, checks.pattern.influence_M[:, i],
                                                     f"M at x = {axis.x[i]:.2f} m", "kNm")))
    if analysis.buckling:
        critical = min(analysis.buckling, key=lambda b: b.critical_factor)
        if critical.factors.size:
            out.append(Diagram("fig-buckling", f"First in-plane buckling mode of {critical.group} (load factor "
                               f"{numbers.for_reading(critical.critical_factor, 3)}, {critical.symmetry[0]}); the "
                               "amplitude of a linear mode is arbitrary.",
                               plots.plot_buckling_mode(axis, critical.modes[0], critical.critical_factor,
                                                        critical.symmetry[0], critical.group)))
    if checks is not None and checks.lateral:
        buckled = [b for b in checks.lateral if b.factors.size]
        if buckled:
            worst = min(buckled, key=lambda b: b.critical_factor)
            out.append(Diagram("fig-lateral-mode", f"Out-of-plane buckling of {worst.group} (load factor "
                               f"{numbers.for_reading(worst.critical_factor, 3)}): the sideways movement of the rib's "
                               f"axis and faces along the span, in plan (twist shows as the faces parting); "
                               f"{worst.restraint}. The amplitude of a linear mode is arbitrary.",
                               plots.plot_lateral_mode(axis, worst.modes[0], worst.critical_factor, worst.group,
                                                       analysis.section.depth_m, case.lateral.brace_x_m)))
    if analysis.modes is not None:
        m = analysis.modes
        for j in range(min(2, m.frequency_hz.size)):
            out.append(Diagram(f"fig-mode-{j + 1}", f"Natural mode {j + 1} in the plane: "
                               f"{numbers.for_reading(m.frequency_hz[j], 3)} Hz, {m.symmetry[j]}, {m.direction[j]}, "
                               f"modal mass {numbers.for_reading(m.modal_mass_t[j], 4)} t (mass from the permanent "
                               "cases and the rib); the amplitude of a mode is arbitrary.",
                               plots.plot_mode(axis, m.shapes[j], j + 1, float(m.frequency_hz[j]), m.symmetry[j],
                                               m.direction[j])))
    if checks is not None and checks.deflections is not None and checks.deflections.names:
        row = next((r for r in checks.rows if r.name == "vertical deflection"), None)
        if row is not None:
            d = checks.deflections
            k = d.names.index(row.state)
            out.append(Diagram("fig-deflection", f"Deflected shape under {row.state}, the state of the largest "
                               f"vertical deflection ({numbers.for_reading(row.value)} mm at x = "
                               f"{numbers.length(row.x_m)} m); displacements magnified by the factor shown.",
                               plots.plot_deflected(axis, d.ux[k], d.uy[k], row.state, row.x_m)))
    if checks is not None and checks.collapse:
        worst = min(checks.collapse, key=lambda c: c.factor)
        if worst.moment_kNm is not None:
            line = thrust_line(axis.x, axis.y, axis.theta, worst.moment_kNm, worst.axial_kN)
            hinges = [(h.x_m, h.face, h.crushed_depth_m) for h in worst.hinges]
            where = ("passes through the middle of the crushed zone at each of the" if any(h[2] for h in hinges)
                     else "touches the faces at the")
            out.append(Diagram("fig-collapse", f"The ring at collapse under {worst.state}: the line of thrust at "
                               f"the collapse factor {numbers.for_reading(worst.factor, 3)} {where} "
                               f"{len(hinges)} hinges of the mechanism.",
                               plots.plot_collapse(axis, analysis.section.depth_m, line, hinges, worst.factor,
                                                   worst.state)))
    return out


def figures(analysis: CaseAnalysis, checks=None) -> dict[str, object]:
    """The run's diagrams as matplotlib Figures, by name (``"fig-axis"``, ``"fig-moment-along"``, ...), for a
    notebook or a script: never shown, never written (``fig.savefig`` writes one; `diagrams` gives them
    with their captions). ``checks`` (from `formfind.check`) adds the diagrams that need it (deflected
    shape, influence line, collapse)."""
    from formfind import arguments

    arguments.instance(analysis, CaseAnalysis, "figures", "analysis")
    return {diagram.stem: diagram.ax.figure for diagram in diagrams(analysis.case, analysis, checks)}


MAX_ENVELOPES = 6  # combinations drawn in one envelope figure: beyond it a figure is unreadable


def _governing_envelopes(all_envelopes: list) -> list:
    """At most ``MAX_ENVELOPES`` envelopes: those with the largest |M|, in their original order."""
    if len(all_envelopes) <= MAX_ENVELOPES:
        return all_envelopes
    size = [float(np.abs(np.concatenate([e.maximum[2], e.minimum[2]])).max()) for e in all_envelopes]
    keep = sorted(np.argsort(size)[::-1][:MAX_ENVELOPES])
    return [all_envelopes[k] for k in keep]


def figure_files(figures: list[Diagram]) -> dict[str, bytes]:
    """The diagrams as PNG and SVG bytes, by file name."""
    out: dict[str, bytes] = {}
    for figure in figures:
        for fmt, data in figure_bytes(figure.ax).items():
            out[f"{figure.stem}.{fmt}"] = data
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
        if checks.deflections is not None and checks.deflections.names:
            out["deflections.csv"] = tables.deflections_csv(checks.deflections).encode()
        if checks.thrust_lines:
            out["thrust-lines.csv"] = tables.thrust_lines_csv(checks).encode()
    if shape is not None:
        section = case.section.at(shape.axis)
        out["shape.json"] = tables.shape_json(shape, case.name).encode()
        out["axis.csv"] = tables.axis_csv(shape.axis, section).encode()
        out["setting-out.csv"] = tables.setting_out_csv(shape.axis, section,
                                                        case.outputs.setting_out_interval_m).encode()
        out["arcs.csv"] = tables.arcs_csv(fit_arcs(shape.axis, 1e-3 * case.outputs.arc_tolerance_mm)).encode()
    if analysis is not None:
        out["analysis.json"] = tables.analysis_json(analysis).encode()
        out["forces.csv"] = tables.forces_csv(analysis).encode()
        out["reactions.csv"] = tables.reactions_csv(analysis).encode()
        out["summary.csv"] = tables.summary_csv(analysis).encode()
        out["buckling.csv"] = tables.buckling_csv(analysis).encode()
        if analysis.modes is not None:
            out["modes.csv"] = tables.modes_csv(analysis.modes).encode()
        if all_states:
            out["states.csv"] = tables.states_csv(analysis).encode()
        if shape is None:
            out["setting-out.csv"] = tables.setting_out_csv(analysis.axis, analysis.section,
                                                            case.outputs.setting_out_interval_m).encode()
            out["arcs.csv"] = tables.arcs_csv(fit_arcs(analysis.axis, 1e-3 * case.outputs.arc_tolerance_mm)).encode()
        if drawings:
            out["axis.dxf"] = drawing_bytes(case, analysis)
            figures = diagrams(case, analysis, checks)
            rendered = figure_files(figures)
            out.update(rendered)
            captioned = [(f.stem, f.caption, rendered[f"{f.stem}.svg"], rendered[f"{f.stem}.png"]) for f in figures]
            out["report.html"] = report.report_html(case, shape, analysis, checks, captioned).encode("utf-8")
            out["report.pdf"] = report.report_pdf(case, shape, analysis, checks, captioned)
    return out


def write_package(folder: Path, contents: dict[str, bytes], overwrite: bool) -> list[Path]:
    """Write every file and ``manifest.json`` (each file with its size and SHA-256) as one set that
    replaces an earlier run's set in one step (`files.write_set`); refuse to overwrite unless asked.
    Files of an earlier run that this run does not write (its manifest names them) are dropped; other
    files in the folder (a study's) stay.

    Raises:
        OutputError: if the folder cannot take the files or writing them fails.
    """
    manifest = {"formfind_version": __version__, "files": [
        {"name": name, "bytes": len(data), "sha256": hashlib.sha256(data).hexdigest()}
        for name, data in sorted(contents.items())]}
    full = dict(contents)
    full["manifest.json"] = tables.dumps(manifest, indent=2).encode("utf-8")
    return files.write_set(folder, full, overwrite, _earlier_outputs(folder))


def _earlier_outputs(folder: Path) -> set[str]:
    """The names an earlier run's manifest lists (it and the manifest are ours to replace)."""
    import json

    try:
        data = json.loads((Path(folder) / "manifest.json").read_text(encoding="utf-8"))
        return {str(entry["name"]) for entry in data["files"]} | {"manifest.json"}
    except (OSError, ValueError, KeyError, TypeError):
        return {"manifest.json"}
