"""The reference curve of the ``nearest`` objective: the architect's axis, which form finding keeps as
close to as the bending limit allows.

A reference is given as points in the case file (a smooth cubic spline passes through them), as a CSV of
x, y, or as a DXF holding one curve (a polyline, with arc segments where it has bulges, or a spline),
which is flattened to a polyline finer than a hundredth of a millimetre and read as straight pieces.
Coordinates are converted to metres from the drawing's unit (its ``$INSUNITS`` header, or the unit the
case file names); a drawing is moved so that the curve's left end lies on the left springing, since a
drawing's origin is rarely the arch's. The curve must run from one springing to the other.
"""

from __future__ import annotations

import csv
import hashlib
import io
from dataclasses import dataclass, replace
from functools import cached_property
from pathlib import Path

import numpy as np

from formfind.enums import ReferenceUnit

METRES = {ReferenceUnit.MM: 1e-3, ReferenceUnit.CM: 1e-2, ReferenceUnit.M: 1.0}
DXF_UNITS = {4: ReferenceUnit.MM, 5: ReferenceUnit.CM, 6: ReferenceUnit.M}  # $INSUNITS codes of the DXF standard
FLATTENING_M = 1e-5  # a drawn curve is flattened to straight pieces whose sagitta is below this (m)
MAX_REFERENCE_POINTS = 200_000
MAX_FILE_BYTES = 50_000_000


class ReferenceCurveError(ValueError):
    """A reference curve that cannot be read or does not fit the arch; the message says why (one line)."""


@dataclass(frozen=True, eq=False)
class ReferenceCurve:
    """A reference curve: points (m, case coordinates: x from the left springing, y on the datum of the
    springing levels) and how to pass between them: ``smooth`` (a not-a-knot cubic spline, for a few
    points typed in) or straight pieces (a polyline, for a drawn curve already flattened)."""

    x_m: np.ndarray
    y_m: np.ndarray
    smooth: bool
    source: str
    sha256: str = ""  # of the file it was read from ("" for points in the case file)
    path: str = ""  # the file's absolute path, its layer and unit as the case named them ("": points, or
    layer: str | None = None  # a curve changed since it was read); what a case file written back names
    unit: str | None = None

    @cached_property
    def _spline(self):
        from scipy.interpolate import CubicSpline

        bc = "not-a-knot" if self.x_m.size > 3 else "natural"
        return CubicSpline(self.x_m, self.y_m, bc_type=bc)

    def ordinate(self, x: np.ndarray | float) -> np.ndarray:
        """The reference's ordinates (m) at abscissae ``x`` (m)."""
        x = np.asarray(x, dtype=float)
        if self.smooth and self.x_m.size >= 3:
            return np.asarray(self._spline(x), dtype=float)
        return np.interp(x, self.x_m, self.y_m)


def curve_from_points(x_m, y_m, source: str = "points") -> ReferenceCurve:
    """A smooth reference through points given in metres, abscissae strictly increasing."""
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    if x.ndim != 1 or x.shape != y.shape or x.size < 2:
        raise ReferenceCurveError(f"expected as many ordinates as abscissae (at least two), got {y.size} and {x.size}")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise ReferenceCurveError("expected finite coordinates")
    if np.any(np.diff(x) <= 0):
        raise ReferenceCurveError("expected abscissae increasing strictly from one springing to the other")
    return ReferenceCurve(x, y, True, source)


def read_csv(path: Path, unit: ReferenceUnit | None) -> ReferenceCurve:
    """A reference from a CSV of x, y (one point per line; a first line of names is skipped)."""
    text = _read_text(path)
    scale = METRES[unit or ReferenceUnit.M]
    rows = []
    for number, row in enumerate(csv.reader(io.StringIO(text)), start=1):
        cells = [c.strip() for c in row if c.strip()]
        if not cells or cells[0].startswith("#"):
            continue
        if len(cells) < 2:
            raise ReferenceCurveError(f"line {number}: expected x, y, got {','.join(cells)!r}")
        try:
            rows.append((float(cells[0]), float(cells[1])))
        except ValueError:
            if rows:
                raise ReferenceCurveError(f"line {number}: expected two numbers, got {','.join(cells[:2])!r}") from None
            continue  # a header line
        if len(rows) > MAX_REFERENCE_POINTS:
            raise ReferenceCurveError(f"more than {MAX_REFERENCE_POINTS} points")
    if len(rows) < 2:
        raise ReferenceCurveError("expected at least two points (x, y per line)")
    points = np.array(rows) * scale
    order = np.argsort(points[:, 0], kind="stable")
    curve = curve_from_points(points[order, 0], points[order, 1], f"{path.name}")
    return ReferenceCurve(curve.x_m, curve.y_m, True, curve.source)


def read_dxf(path: Path, unit: ReferenceUnit | None, layer: str | None = None) -> ReferenceCurve:
    """A reference from a DXF holding one curve in model space (LWPOLYLINE, POLYLINE, SPLINE or ARC),
    or on ``layer`` (where a layer holds a polyline and a spline of one axis, as formfind's own drawing
    does, the polyline), flattened to straight pieces and converted to metres."""
    import ezdxf
    from ezdxf import path as dxf_path

    if path.stat().st_size > MAX_FILE_BYTES:
        raise ReferenceCurveError(f"larger than {MAX_FILE_BYTES // 1_000_000} MB")
    try:
        doc = ezdxf.readfile(str(path))
    except (OSError, ezdxf.DXFError) as exc:  # DXFStructureError and friends
        raise ReferenceCurveError(f"not a readable DXF ({type(exc).__name__}: {str(exc)[:120]})") from None
    if unit is None:
        code = int(doc.header.get("$INSUNITS", 0))
        if code not in DXF_UNITS:
            raise ReferenceCurveError(f"the drawing's unit ($INSUNITS = {code}) is not mm, cm or m; name it with "
                                 "[find] reference_unit")
        unit = DXF_UNITS[code]
    scale = METRES[unit]
    curves = [e for e in doc.modelspace() if e.dxftype() in ("LWPOLYLINE", "POLYLINE", "SPLINE", "ARC")
              and (layer is None or e.dxf.layer.casefold() == layer.casefold())]
    polylines = [e for e in curves if e.dxftype() in ("LWPOLYLINE", "POLYLINE")]
    if layer is not None and len(curves) > 1 and len(polylines) == 1:
        curves = polylines
    if len(curves) != 1:
        where = f"on layer {layer!r}" if layer is not None else "in model space"
        layers = sorted({e.dxf.layer for e in doc.modelspace() if e.dxftype() in ("LWPOLYLINE", "POLYLINE", "SPLINE",
                                                                                   "ARC")})
        raise ReferenceCurveError(f"expected exactly one polyline, spline or arc {where}, found {len(curves)} (curves "
                                  f"on layers: {', '.join(layers) or 'none'}; name one with [find] reference_layer)")
    try:
        points = np.array([(v.x, v.y) for v in dxf_path.make_path(curves[0]).flattening(FLATTENING_M / scale)])
    except Exception as exc:  # ezdxf raises several kinds on a malformed entity
        raise ReferenceCurveError(f"its {curves[0].dxftype()} cannot be read ({type(exc).__name__})") from None
    if points.shape[0] < 2:
        raise ReferenceCurveError(f"its {curves[0].dxftype()} has fewer than two points")
    if points[0, 0] > points[-1, 0]:
        points = points[::-1]
    points = (points - points[0]) * scale
    keep = np.concatenate([[True], np.diff(points[:, 0]) > 1e-12])  # flattening repeats joints
    points = points[keep]
    if np.any(np.diff(points[:, 0]) <= 0):
        raise ReferenceCurveError(f"its {curves[0].dxftype()} turns back on itself in x: an arch axis is a function of x")
    return ReferenceCurve(points[:, 0], points[:, 1], False, path.name)


def read_reference(path: Path, unit: ReferenceUnit | None, layer: str | None = None) -> ReferenceCurve:
    """A reference from a CSV or DXF file (by its suffix), with the file's SHA-256."""
    suffix = path.suffix.lower()
    if suffix not in (".dxf", ".csv", ".txt"):
        raise ReferenceCurveError(f"expected a .csv or .dxf file, got {path.suffix or 'no suffix'!r}")
    curve = read_dxf(path, unit, layer) if suffix == ".dxf" else read_csv(path, unit)
    return replace(curve, sha256=hashlib.sha256(path.read_bytes()).hexdigest())


def _read_text(path: Path) -> str:
    if path.stat().st_size > MAX_FILE_BYTES:
        raise ReferenceCurveError(f"larger than {MAX_FILE_BYTES // 1_000_000} MB")
    try:
        return path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise ReferenceCurveError("not UTF-8 text") from None


def fit_to_span(curve: ReferenceCurve, span_m: float, left_m: float, right_m: float, placed: bool) -> ReferenceCurve:
    """The curve checked against the arch: from x = 0 to the span (to 1e-6 of it) with its ends on the
    springings (to a millimetre). A drawn curve (``placed``) is first moved so that its left end lies on
    the left springing."""
    x, y = curve.x_m, curve.y_m
    if placed:
        x = x - x[0]
        y = y - y[0] + left_m
    tolerance = 1e-6 * span_m
    if abs(x[0]) > tolerance or abs(x[-1] - span_m) > tolerance:
        raise ReferenceCurveError(f"the curve runs from x = {x[0]:.4f} m to {x[-1]:.4f} m; the span is 0 to {span_m:g} m"
                             " (check the unit)")
    x = x.copy()
    x[0], x[-1] = 0.0, span_m
    fitted = ReferenceCurve(x, y, curve.smooth, curve.source, curve.sha256)
    for end, level, name in ((0.0, left_m, "left"), (span_m, right_m, "right")):
        at = float(fitted.ordinate(end))
        if abs(at - level) > 1e-3:
            raise ReferenceCurveError(f"the curve's {name} end is at y = {at:.4f} m; the {name} springing is at "
                                 f"{level:g} m")
    return fitted
