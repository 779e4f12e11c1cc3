"""The arch as a DXF drawing for CAD, at true size, written with ezdxf.

Model space, at true size in the drawing unit (mm or m, written to $INSUNITS): the axis as an
LWPOLYLINE through the stations and as a SPLINE defined by control points (a cubic B-spline
interpolating the stations, so CAD programs need not re-fit it); intrados and extrados; springing and
hinge markers; station ticks with labels at whole multiples of a chosen interval; the thrust lines of
given load states; the clearance and site lines where the case has them; span and rise as dimensions
of the drawing's own style (measurement scale 1, so the text of every dimension is its measurement in
the drawing unit); and a note with the case, units, version and caution. Labels are placed where
asked and left out where their boxes would overlap another's.

Paper space ("Sheet", A3 landscape, mm): a viewport on the arch at a standard scale, the title block
filled from the case file's `[case]` keys (project, job number, revision, drawn and checked by, date
of issue, scale) and the setting-out table.

The file holds only what it uses (one text style, three line types, one dimension style), carries
its extents, gives every layer a lineweight, and is the same bytes for the same input: the header's
dates are the case's issue date (or a fixed date) and its GUIDs derive from the drawing's content.
Coordinates: x to the right from the left springing, y up.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import math
import re
import uuid
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.enums import DrawingUnit
from formfind.model.arcs import Arc
from formfind.model.geometry import Axis
from formfind.output import numbers
from formfind.output.files import write_bytes

SCALE = {DrawingUnit.MM: 1000.0, DrawingUnit.M: 1.0}
INSUNITS = {DrawingUnit.MM: 4, DrawingUnit.M: 6}
DIM_DECIMALS = {DrawingUnit.MM: 0, DrawingUnit.M: 3}  # a dimension reads to the millimetre either way
DIMSTYLE = "FF_DIM"
SHEET = "Sheet"
SHEET_SIZE_MM = (420.0, 297.0)  # A3 landscape
STANDARD_SCALES = (10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 2500, 5000)  # 1:n
TEXT_WIDTH_FACTOR = 0.62  # a character's advance over the text height, for the label boxes (Standard font)


@dataclass(frozen=True)
class Layer:
    """A drawing layer: name, ACI colour, line type, lineweight (1/100 mm) and what it holds."""

    name: str
    color: int
    linetype: str
    lineweight: int
    holds: str


LAYERS = (
    Layer("FF_AXIS", 1, "CONTINUOUS", 50, "the arch axis: polyline through the stations and control-point spline"),
    Layer("FF_ARCS", 4, "CONTINUOUS", 35, "the axis as tangent-continuous circular arcs for fabrication (arcs.csv)"),
    Layer("FF_RIB", 7, "CONTINUOUS", 35, "intrados and extrados of the rib"),
    Layer("FF_THRUST", 3, "DASHED", 25, "thrust lines of the governing load states"),
    Layer("FF_LIMITS", 6, "DASHDOT", 25, "clearance line and site envelope"),
    Layer("FF_STATIONS", 8, "CONTINUOUS", 18, "station ticks and labels"),
    Layer("FF_SUPPORTS", 5, "CONTINUOUS", 35, "springing and hinge markers"),
    Layer("FF_DIMENSIONS", 2, "CONTINUOUS", 18, "span and rise"),
    Layer("FF_NOTES", 7, "CONTINUOUS", 18, "title note: case, units, version, caution"),
    Layer("FF_SHEET", 7, "CONTINUOUS", 25, "sheet border, title block and setting-out table (paper space)"),
)
LINETYPES = {  # name: (description, pattern in paper millimetres: dash > 0, gap < 0)
    "DASHED": ("Dashed __ __ __", [6.0, -3.0]),
    "DASHDOT": ("Dash dot __ . __ .", [6.0, -2.0, 0.0, -2.0]),
}
CHORD_TOLERANCE_OF_SPAN = 1e-6  # the spline passes through every station; between them it stays this close


@dataclass(frozen=True, eq=False)
class DrawingContent:
    """What the drawing shows, in metres (the writer scales to the drawing unit).

    Attributes:
        case_name, title: for the note and the title block.
        axis: the axis; depth_m (stations,) the rib depth.
        hinge_station: station of a crown hinge, or None.
        thrust_lines: (label, points (stations, 2)) of the states to draw.
        clearance, envelope: polylines ((x, y), ...) or empty.
        sheet: title-block fields (label, value), in order.
        setting_out: rows of the setting-out table (point, x, y, theta deg, arc length), m and deg.
        arcs: the axis as circular arcs (`formfind.model.arcs`), drawn on FF_ARCS.
        issue_date: ISO date for the header's dates ("" for a fixed date).
    """

    case_name: str
    title: str
    axis: Axis
    depth_m: np.ndarray
    hinge_station: int | None
    thrust_lines: tuple[tuple[str, np.ndarray], ...] = ()
    clearance: tuple[tuple[float, float], ...] = ()
    envelope: tuple[tuple[float, float], ...] = ()
    sheet: tuple[tuple[str, str], ...] = ()
    setting_out: np.ndarray = field(default_factory=lambda: np.zeros((0, 5)))
    issue_date: str = ""
    arcs: tuple[Arc, ...] = ()


# -------------------------------------------------------------------------- label boxes, no CAD
@dataclass(frozen=True)
class Box:
    """A text's box: insertion point (lower left), height, width along the baseline, rotation (deg)."""

    x: float
    y: float
    height: float
    width: float
    rotation: float

    def corners(self) -> np.ndarray:
        c, s = math.cos(math.radians(self.rotation)), math.sin(math.radians(self.rotation))
        local = np.array([[0, 0], [self.width, 0], [self.width, self.height], [0, self.height]])
        return np.array([self.x, self.y]) + local @ np.array([[c, s], [-s, c]])


def text_box(text: str, x: float, y: float, height: float, rotation: float = 0.0) -> Box:
    """The box a one-line text of ``height`` takes (width from an average character advance)."""
    return Box(x, y, height, TEXT_WIDTH_FACTOR * height * max(len(text), 1), rotation)


def overlap(a: Box, b: Box) -> bool:
    """True if two (rotated) boxes overlap: no separating axis among their edges."""
    pa, pb = a.corners(), b.corners()
    for poly in (pa, pb):
        for k in range(4):
            edge = poly[(k + 1) % 4] - poly[k]
            normal = np.array([-edge[1], edge[0]])
            ra, rb = pa @ normal, pb @ normal
            if ra.max() <= rb.min() or rb.max() <= ra.min():
                return False
    return True


def plot_scale(extent_w: float, extent_h: float, area_w_mm: float, area_h_mm: float, unit: DrawingUnit) -> int:
    """The smallest standard 1:n at which a model extent (drawing units) fits a paper area (mm)."""
    to_mm = 1.0 if unit is DrawingUnit.MM else 1000.0
    for n in STANDARD_SCALES:
        if extent_w * to_mm / n <= area_w_mm and extent_h * to_mm / n <= area_h_mm:
            return n
    return STANDARD_SCALES[-1]


# --------------------------------------------------------------------------------- the drawing
def build_drawing(content: DrawingContent, unit: DrawingUnit = DrawingUnit.MM, version: str = "R2010",
                  label_interval_m: float = 5.0):
    """The ezdxf document of the drawing (not yet written; `drawing_text` writes it reproducibly)."""
    import ezdxf
    from ezdxf import appsettings, bbox, zoom
    from ezdxf.math import global_bspline_interpolation

    scale = SCALE[unit]
    with _fixed_metadata():  # the library stamps the document with the time it was created
        doc = ezdxf.new(version, setup=False, units=INSUNITS[unit])
    doc.header["$MEASUREMENT"] = 1  # metric
    for name, (description, pattern) in LINETYPES.items():
        doc.linetypes.add(name, pattern=[sum(abs(v) for v in pattern), *pattern], description=description)
    for layer in LAYERS:
        doc.layers.add(layer.name, color=layer.color, linetype=layer.linetype, lineweight=layer.lineweight)
    msp = doc.modelspace()
    axis = content.axis
    span = axis.span_m
    pts = np.stack([axis.x, axis.y], axis=-1) * scale
    text_height = 0.012 * span * scale
    labels: list[Box] = []

    def label(text: str, at, layer: str, height: float, rotation: float = 0.0, force: bool = False) -> bool:
        box = text_box(text, float(at[0]), float(at[1]), height, rotation)
        if not force and any(overlap(box, other) for other in labels):
            return False
        labels.append(box)
        msp.add_text(text, height=height, rotation=rotation, dxfattribs={"layer": layer}).set_placement(
            (float(at[0]), float(at[1])))
        return True

    msp.add_lwpolyline([tuple(p) for p in pts], dxfattribs={"layer": "FF_AXIS"})
    bspline = global_bspline_interpolation([(float(px), float(py), 0.0) for px, py in pts], degree=3)
    msp.add_spline(dxfattribs={"layer": "FF_AXIS"}).apply_construction_tool(bspline)
    for arc in content.arcs:  # counter-clockwise from start_angle to end_angle, as DXF draws arcs
        if arc.centre is None:
            msp.add_line(tuple(np.array(arc.start) * scale), tuple(np.array(arc.end) * scale),
                         dxfattribs={"layer": "FF_ARCS"})
            continue
        c = np.array(arc.centre)
        a0 = math.degrees(math.atan2(arc.start[1] - c[1], arc.start[0] - c[0]))
        a1 = math.degrees(math.atan2(arc.end[1] - c[1], arc.end[0] - c[0]))
        start_angle, end_angle = (a0, a1) if arc.turn_deg > 0 else (a1, a0)
        msp.add_arc(tuple(c * scale), arc.radius_m * scale, start_angle, end_angle, dxfattribs={"layer": "FF_ARCS"})
    for face in (axis.intrados(content.depth_m), axis.extrados(content.depth_m)):
        msp.add_lwpolyline([tuple(p) for p in face * scale], dxfattribs={"layer": "FF_RIB"})

    marker = 0.01 * span * scale
    small = 0.6 * text_height
    for i, name in ((0, "left springing"), (axis.count - 1, "right springing")):
        msp.add_circle(tuple(pts[i]), marker, dxfattribs={"layer": "FF_SUPPORTS"})
        width = text_box(name, 0, 0, small).width
        x0 = pts[i][0] - (0.0 if i == 0 else width)
        label(name, (x0, pts[i][1] - 3 * marker - small), "FF_SUPPORTS", small, force=True)
    if content.hinge_station is not None:
        c = pts[content.hinge_station]
        msp.add_circle(tuple(c), 0.6 * marker, dxfattribs={"layer": "FF_SUPPORTS"})
        label("hinge", (c[0] - 0.5 * text_box("hinge", 0, 0, small).width, c[1] + 2 * marker), "FF_SUPPORTS", small,
              force=True)

    # station ticks and labels at whole multiples of the interval, springings excluded (they have theirs)
    count = int(math.floor(span / label_interval_m * (1 + 1e-12)))
    xs = axis.x[0] + label_interval_m * np.arange(1, count + 1)
    xs = xs[xs < axis.x[-1] - 1e-9 * span]
    if xs.size:
        at = axis.resample(np.concatenate([[axis.x[0]], xs, [axis.x[-1]]]))
        depth = np.interp(at.x, axis.x, content.depth_m)
        for k in range(1, at.count - 1):
            p = np.array([at.x[k], at.y[k]]) * scale
            n = at.normal[k]
            half = 0.5 * depth[k] * scale
            a, b = p - n * half * 1.15, p - n * (half * 1.15 + 0.8 * text_height)
            msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": "FF_STATIONS"})
            text = f"x = {numbers.length(at.x[k])} m"
            rotation = float(np.degrees(at.theta[k])) - 90.0
            start = b - n * 0.3 * text_height
            direction = np.array([math.cos(math.radians(rotation)), math.sin(math.radians(rotation))])
            perp = np.array([-direction[1], direction[0]])
            label(text, start - perp * 0.25 * text_height, "FF_STATIONS", 0.5 * text_height, rotation)

    for k, (name, line) in enumerate(content.thrust_lines):
        good = np.all(np.isfinite(line), axis=1)
        if good.sum() < 2:
            continue
        seg = line[good] * scale
        msp.add_lwpolyline([tuple(p) for p in seg], dxfattribs={"layer": "FF_THRUST"})
        # one label per line, each starting at its own place along it, moved on until it overlaps nothing
        places = np.roll(np.linspace(0.15, 0.85, 15), -k * 15 // max(len(content.thrust_lines), 1))
        for fraction in places:
            tip = seg[int(fraction * (len(seg) - 1))]
            if label(f"thrust line {name}", (tip[0], tip[1] + 0.4 * text_height), "FF_THRUST", small):
                break
    for polyline, name in ((content.clearance, "clearance line"), (content.envelope, "site line")):
        if polyline:
            p = np.array(polyline) * scale
            msp.add_lwpolyline([tuple(q) for q in p], dxfattribs={"layer": "FF_LIMITS"})
            label(name, (p[0][0], p[0][1] + 0.3 * text_height), "FF_LIMITS", small)

    _dimension_style(doc, unit, text_height)
    base_y = (min(axis.y.min(), 0.0) - 0.08 * span) * scale
    msp.add_linear_dim(base=(0.0, base_y), p1=tuple(pts[0]), p2=tuple(pts[-1]), dimstyle=DIMSTYLE,
                       dxfattribs={"layer": "FF_DIMENSIONS"}).render()
    chord = np.interp(axis.x, axis.x[[0, -1]], axis.y[[0, -1]])
    crown = int(np.argmax(axis.y - chord))
    chord_y = float(chord[crown]) * scale
    msp.add_linear_dim(base=(pts[crown][0], 0.0), p1=(pts[crown][0], chord_y),
                       p2=tuple(pts[crown]), angle=90, dimstyle=DIMSTYLE,
                       dxfattribs={"layer": "FF_DIMENSIONS"}).render()

    note = (f"{content.case_name}: {content.title}\\P"
            f"units: {unit.value} (1 drawing unit = 1 {unit.value}); x right from the left springing, y up\\P"
            f"span {numbers.length(span)} m, rise {numbers.length(axis.rise_m)} m, {axis.count} stations\\P"
            f"formfind {__version__}\\P"
            "An aid to a qualified engineer; local codes and licensed practice govern.")
    note_height = 0.7 * text_height
    note_top = base_y - 4 * text_height
    msp.add_mtext(note, dxfattribs={"layer": "FF_NOTES", "char_height": note_height,
                                    "width": 0.75 * span * scale}).set_location((0.0, note_top))

    # extents of everything but the note, whose box the library's estimate overstates; then the note's
    # five lines at the usual 5/3 line spacing
    extents = bbox.extents((e for e in msp if e.dxftype() != "MTEXT"), fast=True)
    extents.extend([(0.0, note_top - 5 * note_height * 5.0 / 3.0, 0.0)])
    doc.header["$EXTMIN"], doc.header["$EXTMAX"] = extents.extmin, extents.extmax
    msp.dxf.extmin, msp.dxf.extmax = extents.extmin, extents.extmax
    zoom.center(msp, extents.center, extents.size * 1.05)
    msp.dxf.limmin, msp.dxf.limmax = extents.extmin, extents.extmax
    appsettings.show_lineweight(doc)
    n = _sheet(doc, content, unit, extents)
    doc.header["$LTSCALE"] = n / (1.0 if unit is DrawingUnit.MM else 1000.0)  # paper mm per model unit
    doc.header["$PSLTSCALE"] = 1
    return doc


def _dimension_style(doc, unit: DrawingUnit, text_height: float) -> None:
    """Our dimension style: measurement scale 1 (the text is the measurement in the drawing unit),
    text, arrows and gaps sized to the drawing, whole millimetres."""
    doc.dimstyles.new(DIMSTYLE, dxfattribs={
        "dimscale": 1.0, "dimlfac": 1.0, "dimtxt": text_height, "dimasz": 0.8 * text_height,
        "dimexo": 0.5 * text_height, "dimexe": 0.5 * text_height, "dimgap": 0.3 * text_height,
        "dimdec": DIM_DECIMALS[unit], "dimzin": 0, "dimtad": 1, "dimtih": 0, "dimtoh": 0, "dimtxsty": "Standard",
        "dimclrd": 0, "dimclre": 0, "dimclrt": 0, "dimdsep": ord("."),  # no dimrnd: ezdxf reads 0 as "to units"
    })


def _sheet(doc, content: DrawingContent, unit: DrawingUnit, extents) -> int:
    """Paper space: border, a viewport on the arch at a standard scale, the title block and the
    setting-out table. Returns the scale's n (1:n)."""
    width, height = SHEET_SIZE_MM
    doc.layouts.rename("Layout1", SHEET)
    sheet = doc.layouts.get(SHEET)
    sheet.page_setup(size=(width, height), margins=(0, 0, 0, 0), units="mm")
    sheet.dxf.extmin, sheet.dxf.extmax = (0.0, 0.0, 0.0), (width, height, 0.0)
    sheet.dxf.limmin, sheet.dxf.limmax = (0.0, 0.0), (width, height)
    attribs = {"layer": "FF_SHEET"}
    sheet.add_lwpolyline([(10, 10), (width - 10, 10), (width - 10, height - 10), (10, height - 10)], close=True,
                         dxfattribs=attribs)
    view_w, view_h = width - 20, height - 20 - 75  # the lower band holds the table and the title block
    ext_w = extents.extmax.x - extents.extmin.x
    ext_h = extents.extmax.y - extents.extmin.y
    n = plot_scale(ext_w, ext_h, view_w - 10, view_h - 10, unit)
    to_mm = 1.0 if unit is DrawingUnit.MM else 1000.0
    centre = ((extents.extmin.x + extents.extmax.x) / 2, (extents.extmin.y + extents.extmax.y) / 2)
    sheet.add_viewport(center=(10 + view_w / 2, 85 + view_h / 2), size=(view_w, view_h), view_center_point=centre,
                       view_height=view_h * n / to_mm, dxfattribs=attribs)
    sheet.add_line((10, 85), (width - 10, 85), dxfattribs=attribs)
    # title block, lower right: label / value rows
    fields = list(content.sheet) + [("scale", f"1:{n} (A3)"), ("drawing unit", unit.value)]
    x0, x1, x2 = width - 10 - 150, width - 10 - 150 + 38, width - 10
    row_h = 75.0 / (len(fields) + 1)
    y = 85.0
    sheet.add_text((content.title or content.case_name)[:70], height=3.5, dxfattribs=attribs).set_placement(
        (x0 + 2, y - row_h + 0.3 * row_h))
    y -= row_h
    for label, value in fields:
        sheet.add_line((x0, y), (x2, y), dxfattribs=attribs)
        sheet.add_text(label, height=2.2, dxfattribs=attribs).set_placement((x0 + 2, y - row_h + 0.3 * row_h))
        sheet.add_text(str(value)[:60], height=2.5, dxfattribs=attribs).set_placement((x1 + 2, y - row_h + 0.3 * row_h))
        y -= row_h
    sheet.add_line((x0, 85), (x0, 10), dxfattribs=attribs)
    sheet.add_line((x1, 85 - row_h), (x1, 10), dxfattribs=attribs)
    _setting_out_table(sheet, content.setting_out, 12.0, x0 - 4.0, attribs)
    return n


def _setting_out_table(sheet, rows: np.ndarray, left: float, right: float, attribs) -> None:
    """The setting-out table in the lower band, in as many column groups as fit, and a note where the
    rest is (setting-out.csv)."""
    header = ("point", "x m", "y m", "theta deg", "arc m")
    widths = (9.0, 15.0, 15.0, 15.0, 15.0)
    group_w = sum(widths) + 3.0
    row_h, top, bottom = 3.0, 81.0, 14.0
    per_column = int((top - bottom) / row_h) - 1
    groups = max(int((right - left) / group_w), 1)
    shown = min(len(rows), per_column * groups)
    sheet.add_text("Setting-out points (m, deg; every point in setting-out.csv)", height=2.2,
                   dxfattribs=attribs).set_placement((left, top + 0.8))
    for g in range(groups):
        part = rows[g * per_column: min((g + 1) * per_column, shown)]
        if not len(part):
            break
        x = left + g * group_w
        y = top - row_h
        cells = [header] + [(str(int(r[0])), numbers.length(r[1]), numbers.length(r[2]), numbers.angle(r[3]),
                             numbers.length(r[4])) for r in part]
        for k, cells_row in enumerate(cells):
            cx = x
            for text, w in zip(cells_row, widths, strict=True):
                sheet.add_text(text, height=1.8 if k else 1.9, dxfattribs=attribs).set_placement((cx + w - 1.0, y + 0.7),
                                                                                                 align=_right())
                cx += w
            y -= row_h
        sheet.add_line((x, top - row_h + 0.2 * row_h - 0.4), (x + sum(widths), top - row_h + 0.2 * row_h - 0.4),
                       dxfattribs=attribs)
    if shown < len(rows):
        sheet.add_text(f"{len(rows) - shown} more points in setting-out.csv", height=2.0,
                       dxfattribs=attribs).set_placement((left, bottom - 2.5))


def _right():
    from ezdxf.enums import TextEntityAlignment

    return TextEntityAlignment.BOTTOM_RIGHT


# ---------------------------------------------------------------------------------------- writing
FIXED_DATE = "2000-01-01"


@contextlib.contextmanager
def _fixed_metadata():
    """ezdxf's switch for fixed time stamps and GUIDs in what it writes (restored afterwards)."""
    import ezdxf

    previous = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        yield
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous


def drawing_text(doc, issue_date: str = "") -> str:
    """The document as DXF text that is the same for the same drawing: the header's creation and
    update dates are ``issue_date`` (or a fixed date), its GUIDs derive from the content, and the
    library's own time stamp is its fixed marker."""
    import datetime

    from ezdxf.tools.juliandate import juliandate

    # the library gathers some CLASS definitions through a set, whose order changes from process to
    # process: complete them first, then write them sorted
    doc.classes.add_required_classes(doc.dxfversion)
    doc.classes.classes = dict(sorted(doc.classes.classes.items()))
    with _fixed_metadata():
        stream = io.StringIO()
        doc.write(stream)
        text = stream.getvalue()

    date = datetime.datetime.fromisoformat(issue_date or FIXED_DATE)
    julian = f"{juliandate(date)}"
    for var in ("$TDCREATE", "$TDUCREATE", "$TDUPDATE", "$TDUUPDATE"):
        text = re.sub(rf"(\n{re.escape(var)}\n 40\n)[^\n]*", lambda m: m.group(1) + julian, text)
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    for var, salt in (("$FINGERPRINTGUID", "fingerprint"), ("$VERSIONGUID", "version")):
        guid = "{" + str(uuid.uuid5(uuid.NAMESPACE_URL, f"formfind:{salt}:{digest}")).upper() + "}"
        text = re.sub(rf"(\n{re.escape(var)}\n  2\n)[^\n]*", lambda m, g=guid: m.group(1) + g, text)
    return text


def write_drawing(path: Path, content: DrawingContent, unit: DrawingUnit = DrawingUnit.MM, version: str = "R2010",
                  label_interval_m: float = 5.0) -> Path:
    """Build the drawing and write it atomically to ``path``."""
    doc = build_drawing(content, unit, version, label_interval_m)
    return write_bytes(path, drawing_text(doc, content.issue_date).encode("utf-8"))
