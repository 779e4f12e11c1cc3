"""The arch as a DXF drawing for CAD, at true size, written with ezdxf.

Contents: the axis as an LWPOLYLINE through the stations and as a SPLINE defined by control points
(a cubic B-spline interpolating the stations, so CAD programs need not re-fit it); intrados and
extrados as polylines offset by the rib depth normal to the axis; springing and hinge markers; station
ticks with labels at a chosen interval; the thrust lines of given load states; the clearance and site
lines where the case has them; span and rise as rendered dimensions; and a note with the case,
units, date and formfind version. The drawing unit (mm or m) is written to $INSUNITS and
$MEASUREMENT and stated in the note. Coordinates: x to the right from the left springing, y up.
"""

from __future__ import annotations

import datetime as _dt
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from formfind import __version__
from formfind.enums import DrawingUnit
from formfind.model.geometry import Axis
from formfind.output.files import write_bytes

SCALE = {DrawingUnit.MM: 1000.0, DrawingUnit.M: 1.0}
INSUNITS = {DrawingUnit.MM: 4, DrawingUnit.M: 6}


@dataclass(frozen=True)
class Layer:
    """A drawing layer: name, ACI colour, line type and what it holds."""

    name: str
    color: int
    linetype: str
    holds: str


LAYERS = (
    Layer("FF_AXIS", 1, "CONTINUOUS", "the arch axis: polyline through the stations and control-point spline"),
    Layer("FF_RIB", 7, "CONTINUOUS", "intrados and extrados of the rib"),
    Layer("FF_THRUST", 3, "DASHED", "thrust lines of the governing load states"),
    Layer("FF_LIMITS", 6, "DASHDOT", "clearance line and site envelope"),
    Layer("FF_STATIONS", 8, "CONTINUOUS", "station ticks and labels"),
    Layer("FF_SUPPORTS", 5, "CONTINUOUS", "springing and hinge markers"),
    Layer("FF_DIMENSIONS", 2, "CONTINUOUS", "span and rise"),
    Layer("FF_NOTES", 7, "CONTINUOUS", "title note: case, units, date, version"),
)
CHORD_TOLERANCE_OF_SPAN = 1e-6  # the spline passes through every station; between them it stays this close


@dataclass(frozen=True, eq=False)
class DrawingContent:
    """What the drawing shows, in metres (the writer scales to the drawing unit).

    Attributes:
        case_name, title: for the note.
        axis: the axis; depth_m (stations,) the rib depth.
        hinge_station: station of a crown hinge, or None.
        thrust_lines: (label, points (stations, 2)) of the states to draw.
        clearance, envelope: polylines ((x, y), ...) or empty.
    """

    case_name: str
    title: str
    axis: Axis
    depth_m: np.ndarray
    hinge_station: int | None
    thrust_lines: tuple[tuple[str, np.ndarray], ...] = ()
    clearance: tuple[tuple[float, float], ...] = ()
    envelope: tuple[tuple[float, float], ...] = ()


def build_drawing(content: DrawingContent, unit: DrawingUnit = DrawingUnit.MM, version: str = "R2010",
                  label_interval_m: float = 5.0, date: _dt.date | None = None):
    """The ezdxf document of the drawing (not yet written)."""
    import ezdxf
    from ezdxf.math import global_bspline_interpolation

    scale = SCALE[unit]
    doc = ezdxf.new(version, setup=True)
    doc.header["$INSUNITS"] = INSUNITS[unit]
    doc.header["$MEASUREMENT"] = 1  # metric
    for layer in LAYERS:
        doc.layers.add(layer.name, color=layer.color, linetype=layer.linetype)
    msp = doc.modelspace()
    axis = content.axis
    span = axis.span_m
    pts = np.stack([axis.x, axis.y], axis=-1) * scale
    text_height = 0.012 * span * scale

    msp.add_lwpolyline([tuple(p) for p in pts], dxfattribs={"layer": "FF_AXIS"})
    bspline = global_bspline_interpolation([(float(px), float(py), 0.0) for px, py in pts], degree=3)
    msp.add_spline(dxfattribs={"layer": "FF_AXIS"}).apply_construction_tool(bspline)

    for face in (axis.intrados(content.depth_m), axis.extrados(content.depth_m)):
        msp.add_lwpolyline([tuple(p) for p in face * scale], dxfattribs={"layer": "FF_RIB"})
    for label, line in content.thrust_lines:
        good = np.all(np.isfinite(line), axis=1)
        if good.sum() >= 2:
            msp.add_lwpolyline([tuple(p) for p in line[good] * scale], dxfattribs={"layer": "FF_THRUST"})
            tip = line[good][len(line[good]) // 3] * scale
            msp.add_text(label, height=0.6 * text_height, dxfattribs={"layer": "FF_THRUST"}).set_placement(tuple(tip))
    for polyline, name in ((content.clearance, "clearance"), (content.envelope, "site envelope")):
        if polyline:
            p = np.array(polyline) * scale
            msp.add_lwpolyline([tuple(q) for q in p], dxfattribs={"layer": "FF_LIMITS"})
            msp.add_text(name, height=0.6 * text_height, dxfattribs={"layer": "FF_LIMITS"}).set_placement(tuple(p[0]))

    marker = 0.01 * span * scale
    for i, name in ((0, "left springing"), (axis.count - 1, "right springing")):
        msp.add_circle(tuple(pts[i]), marker, dxfattribs={"layer": "FF_SUPPORTS"})
        msp.add_text(name, height=0.6 * text_height, dxfattribs={"layer": "FF_SUPPORTS"}).set_placement(
            (pts[i][0], pts[i][1] - 3 * marker))
    if content.hinge_station is not None:
        msp.add_circle(tuple(pts[content.hinge_station]), 0.6 * marker, dxfattribs={"layer": "FF_SUPPORTS"})
        msp.add_text("hinge", height=0.6 * text_height, dxfattribs={"layer": "FF_SUPPORTS"}).set_placement(
            (pts[content.hinge_station][0], pts[content.hinge_station][1] + 2 * marker))

    normal = axis.normal
    tick = 0.5 * np.asarray(content.depth_m) * scale
    labelled = np.arange(0.0, span + 1e-9, label_interval_m)
    for xl in labelled:
        i = int(np.argmin(np.abs(axis.x - xl)))
        a = pts[i] - normal[i] * tick[i] * 1.6
        b = pts[i] - normal[i] * tick[i] * 1.1
        msp.add_line(tuple(a), tuple(b), dxfattribs={"layer": "FF_STATIONS"})
        msp.add_text(f"x = {axis.x[i]:.2f} m", height=0.5 * text_height,
                     dxfattribs={"layer": "FF_STATIONS", "rotation": float(np.degrees(axis.theta[i])) - 90.0}
                     ).set_placement(tuple(a))

    base_y = (min(axis.y.min(), 0.0) - 0.08 * span) * scale
    span_dim = msp.add_linear_dim(base=(0.0, base_y), p1=tuple(pts[0]), p2=tuple(pts[-1]), dimstyle="EZDXF",
                                  dxfattribs={"layer": "FF_DIMENSIONS"}, override={"dimtxt": text_height})
    span_dim.render()
    crown = int(np.argmax(axis.y - np.interp(axis.x, axis.x[[0, -1]], axis.y[[0, -1]])))
    chord_y = float(np.interp(axis.x[crown], axis.x[[0, -1]], axis.y[[0, -1]])) * scale
    rise_dim = msp.add_linear_dim(base=(pts[crown][0] + 0.05 * span * scale, 0.0), p1=(pts[crown][0], chord_y),
                                  p2=tuple(pts[crown]), angle=90, dimstyle="EZDXF",
                                  dxfattribs={"layer": "FF_DIMENSIONS"}, override={"dimtxt": text_height})
    rise_dim.render()

    when = (date or _dt.date.today()).isoformat()
    note = (f"{content.case_name}: {content.title}\\P"
            f"units: {unit.value} (1 drawing unit = 1 {unit.value}); x right from the left springing, y up\\P"
            f"span {span:.3f} m, rise {axis.rise_m:.3f} m, {axis.count} stations\\P"
            f"formfind {__version__}, {when}\\P"
            "An aid to a qualified engineer; local codes and licensed practice govern.")
    msp.add_mtext(note, dxfattribs={"layer": "FF_NOTES", "char_height": 0.7 * text_height}).set_location(
        (0.0, base_y - 4 * text_height))
    return doc


def write_drawing(path: Path, content: DrawingContent, unit: DrawingUnit = DrawingUnit.MM, version: str = "R2010",
                  label_interval_m: float = 5.0) -> Path:
    """Build the drawing and write it atomically to ``path``."""
    doc = build_drawing(content, unit, version, label_interval_m)
    stream = io.StringIO()
    doc.write(stream)
    return write_bytes(path, stream.getvalue().encode("utf-8"))
