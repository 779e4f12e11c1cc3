"""The arch axis: curve families, station placement and the sampled `Axis`.

Coordinates: x in metres to the right from the left springing, y in metres upwards. The tangent angle
``theta`` (radians) is measured anticlockwise from the +x direction, so it is positive on the rising
(left) half of an arch and negative on the falling half. The unit normal ``n = (-sin theta, cos theta)``
points from the intrados towards the extrados.

Curve families (`Parabola`, `CircularSegment`, `MCurve`, `PointSpline`) are measured from the chord
joining the springings: ``y(x) = y_left + (y_right - y_left) x / L + rise * phi(x / L)``, with
``phi(1/2) = 1``. With unequal springing levels the shape is thus sheared vertically; that keeps a
curve funicular for the same vertical loads (a linear term in y changes only the support reactions).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from formfind.enums import StationSpacing

_GAUSS_T, _GAUSS_W = np.polynomial.legendre.leggauss(4)


@dataclass(frozen=True)
class Chord:
    """Span and springing levels shared by every curve family (metres)."""

    span_m: float
    y_left_m: float = 0.0
    y_right_m: float = 0.0

    @property
    def chord_slope(self) -> float:
        """Slope of the line joining the springings (dimensionless)."""
        return (self.y_right_m - self.y_left_m) / self.span_m

    def line(self, x: np.ndarray) -> np.ndarray:
        """Ordinates of the springing chord at ``x`` (m)."""
        return self.y_left_m + self.chord_slope * x


class Curve(ABC):
    """A smooth arch axis y(x) over 0 <= x <= span. Subclasses give ordinate and tangent angle."""

    chord: Chord

    @property
    def span_m(self) -> float:
        """Horizontal distance between the springings (m)."""
        return self.chord.span_m

    @abstractmethod
    def ordinate(self, x: np.ndarray) -> np.ndarray:
        """Axis ordinate y (m) at abscissae x (m)."""

    @abstractmethod
    def angle(self, x: np.ndarray) -> np.ndarray:
        """Tangent angle theta (rad, anticlockwise from +x) at abscissae x (m)."""


@dataclass(frozen=True)
class _ChordCurve(Curve):
    """A curve written as springing chord plus ``rise * phi(xi)``."""

    chord: Chord
    rise_m: float

    @abstractmethod
    def _phi(self, xi: np.ndarray) -> np.ndarray:
        """Unit shape above the chord, phi(1/2) = 1."""

    @abstractmethod
    def _dphi(self, xi: np.ndarray) -> np.ndarray:
        """d(phi)/d(xi)."""

    def ordinate(self, x):
        x = np.asarray(x, dtype=float)
        return self.chord.line(x) + self.rise_m * self._phi(x / self.span_m)

    def angle(self, x):
        x = np.asarray(x, dtype=float)
        slope = self.chord.chord_slope + self.rise_m * self._dphi(x / self.span_m) / self.span_m
        return np.arctan(slope)


@dataclass(frozen=True)
class Parabola(_ChordCurve):
    """Quadratic parabola: phi = 4 xi (1 - xi). The funicular of a load uniform per horizontal length."""

    def _phi(self, xi):
        return 4.0 * xi * (1.0 - xi)

    def _dphi(self, xi):
        return 4.0 - 8.0 * xi


@dataclass(frozen=True)
class CircularSegment(_ChordCurve):
    """Circular arc through the springings with the given rise (rise <= span / 2).

    The funicular of a uniform pressure normal to the axis. Radius R = (L^2/4 + f^2) / (2 f).
    """

    def __post_init__(self) -> None:
        if self.rise_m > self.span_m / 2.0 * (1.0 + 1e-12):
            raise ValueError("a circular segment cannot rise more than half its span")

    @property
    def radius_m(self) -> float:
        """Radius of the circle (m) for equal springing levels."""
        half = self.span_m / 2.0
        return (half**2 + self.rise_m**2) / (2.0 * self.rise_m)

    def _phi(self, xi):
        radius = self.radius_m
        u = (xi - 0.5) * self.span_m
        root = np.sqrt(np.clip(radius**2 - u**2, 0.0, None))
        return (root - (radius - self.rise_m)) / self.rise_m

    def _dphi(self, xi):
        radius = self.radius_m
        u = (xi - 0.5) * self.span_m
        sin_theta = np.clip(-u / radius, -1.0, 1.0)
        # tan(theta) of the circle, finite except exactly at a semicircle's springing (1.6e16 there)
        slope = np.tan(np.arcsin(sin_theta))
        return slope * self.span_m / self.rise_m


@dataclass(frozen=True)
class MCurve(_ChordCurve):
    """Catenary family of filled-spandrel arches with load ratio m = w_springing / w_crown > 1.

    Depth below the crown: z = f (cosh(k s) - 1) / (m - 1), k = arccosh(m), s = (x - L/2)/(L/2).
    It is the funicular of a vertical load per horizontal length growing linearly with the depth
    below the crown. The plain catenary (load uniform per arc length) is the member with
    (cosh k - 1) / (2 k) = f / L; see `catenary`.
    """

    m: float = 2.0

    def __post_init__(self) -> None:
        if not self.m > 1.0:
            raise ValueError("the m-curve needs m > 1 (m = 1 is the parabola)")

    @property
    def k(self) -> float:
        """arccosh(m) (dimensionless)."""
        return float(np.arccosh(self.m))

    def _phi(self, xi):
        s = 2.0 * xi - 1.0
        return 1.0 - (np.cosh(self.k * s) - 1.0) / (self.m - 1.0)

    def _dphi(self, xi):
        s = 2.0 * xi - 1.0
        return -2.0 * self.k * np.sinh(self.k * s) / (self.m - 1.0)


def catenary(chord: Chord, rise_m: float) -> MCurve:
    """The hanging-chain curve y = f - a (cosh(u/a) - 1) through the springings and the crown.

    Solves (cosh k - 1)/(2 k) = f / L for k = L / (2 a) and returns it as the m-curve with m = cosh k.
    """
    from scipy.optimize import brentq  # imported here: scipy.optimize is slow to import

    ratio = rise_m / chord.span_m
    k = brentq(lambda kk: (np.cosh(kk) - 1.0) / (2.0 * kk) - ratio, 1e-9, 60.0, xtol=1e-15)
    return MCurve(chord=chord, rise_m=rise_m, m=float(np.cosh(k)))


@dataclass(frozen=True)
class PointSpline(Curve):
    """A smooth cubic spline (not-a-knot ends) through given points, absolute coordinates (m).

    The first point is the left springing (x = 0); the last is the right springing (x = span).
    """

    x_m: tuple[float, ...]
    y_m: tuple[float, ...]
    chord: Chord = field(init=False)

    def __post_init__(self) -> None:
        x = np.asarray(self.x_m, dtype=float)
        y = np.asarray(self.y_m, dtype=float)
        if x.size < 3 or x.size != y.size:
            raise ValueError("a point spline needs at least three (x, y) pairs of equal length")
        if not np.all(np.diff(x) > 0) or x[0] != 0.0:
            raise ValueError("point abscissae must start at 0 and increase strictly")
        object.__setattr__(self, "chord", Chord(float(x[-1]), float(y[0]), float(y[-1])))

    @cached_property
    def _spline(self):
        from scipy.interpolate import CubicSpline  # imported here: scipy.interpolate is slow to import

        bc = "not-a-knot" if len(self.x_m) > 3 else "natural"
        return CubicSpline(np.asarray(self.x_m), np.asarray(self.y_m), bc_type=bc)

    def ordinate(self, x):
        return self._spline(np.asarray(x, dtype=float))

    def angle(self, x):
        return np.arctan(self._spline(np.asarray(x, dtype=float), 1))


@dataclass(frozen=True, eq=False)
class Axis:
    """The arch axis sampled at stations: the single geometry every engine works on.

    Attributes:
        x: station abscissae (m), strictly increasing, x[0] = 0 (left springing), x[-1] = span.
        y: station ordinates (m).
        theta: tangent angle of the smooth axis at each station (rad, anticlockwise from +x).

    Between stations the engines treat the axis as the chord polygon through the stations; the
    smooth tangent ``theta`` is used to resolve forces into N and V at the stations.
    """

    x: np.ndarray
    y: np.ndarray
    theta: np.ndarray

    def __post_init__(self) -> None:
        for name in ("x", "y", "theta"):
            arr = np.array(getattr(self, name), dtype=float)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        if not (self.x.ndim == 1 and self.x.shape == self.y.shape == self.theta.shape):
            raise ValueError("x, y and theta must be 1-D arrays of one length")
        if self.x.size < 3:
            raise ValueError("an axis needs at least three stations")
        if not np.all(np.diff(self.x) > 0):
            raise ValueError("station abscissae must increase strictly")
        if not (np.all(np.isfinite(self.y)) and np.all(np.isfinite(self.theta))):
            raise ValueError("axis ordinates and angles must be finite")

    @classmethod
    def from_curve(cls, curve: Curve, x: np.ndarray) -> Axis:
        """Sample a smooth curve at the given abscissae (m)."""
        x = np.asarray(x, dtype=float)
        return cls(x=x, y=curve.ordinate(x), theta=curve.angle(x))

    @property
    def count(self) -> int:
        """Number of stations."""
        return int(self.x.size)

    @property
    def span_m(self) -> float:
        """Horizontal distance between the springings (m)."""
        return float(self.x[-1] - self.x[0])

    @property
    def rise_m(self) -> float:
        """Largest height of a station above the springing chord (m)."""
        chord = self.y[0] + (self.y[-1] - self.y[0]) * (self.x - self.x[0]) / self.span_m
        return float(np.max(self.y - chord))

    @property
    def slope(self) -> np.ndarray:
        """dy/dx at the stations (dimensionless); very large at a vertical tangent."""
        return np.tan(self.theta)

    @property
    def tangent(self) -> np.ndarray:
        """Unit tangents (stations, 2), pointing towards increasing x."""
        return np.stack([np.cos(self.theta), np.sin(self.theta)], axis=-1)

    @property
    def normal(self) -> np.ndarray:
        """Unit normals (stations, 2), pointing from the intrados towards the extrados."""
        return np.stack([-np.sin(self.theta), np.cos(self.theta)], axis=-1)

    @property
    def chord_lengths(self) -> np.ndarray:
        """Lengths of the straight elements between consecutive stations (m), shape (stations-1,)."""
        return np.hypot(np.diff(self.x), np.diff(self.y))

    @property
    def arc_length(self) -> np.ndarray:
        """Arc length from the left springing to each station (m).

        Integrates the cubic Hermite interpolant of (x, y, slope) with 4-point Gauss quadrature per
        segment; where the tangent is near vertical the chord length is used for that segment.
        """
        dx = np.diff(self.x)
        dy = np.diff(self.y)
        chords = np.hypot(dx, dy)
        steep = np.abs(np.cos(self.theta)) < 1e-6
        lengths = chords.copy()
        ok = ~(steep[:-1] | steep[1:])
        if np.any(ok):
            s0 = self.slope[:-1][ok]
            s1 = self.slope[1:][ok]
            h = dx[ok]
            delta = dy[ok] / h
            t = 0.5 * (_GAUSS_T[:, None] + 1.0)
            # derivative of the cubic Hermite segment, as a function of t in [0, 1]
            d = (
                (6 * t - 6 * t**2) * delta
                + (3 * t**2 - 4 * t + 1) * s0
                + (3 * t**2 - 2 * t) * s1
            )
            lengths[ok] = 0.5 * h * np.sum(_GAUSS_W[:, None] * np.sqrt(1.0 + d**2), axis=0)
        return np.concatenate([[0.0], np.cumsum(lengths)])

    @property
    def length_m(self) -> float:
        """Total length of the axis (m)."""
        return float(self.arc_length[-1])

    @property
    def curvature(self) -> np.ndarray:
        """Curvature d(theta)/ds at the stations (1/m), positive where the axis turns anticlockwise."""
        return np.gradient(self.theta, self.arc_length)

    def offset(self, distance_m: np.ndarray | float) -> np.ndarray:
        """Points offset along the normal by ``distance_m`` (m, + towards the extrados), (stations, 2)."""
        d = np.broadcast_to(np.asarray(distance_m, dtype=float), self.x.shape)
        return np.stack([self.x, self.y], axis=-1) + d[:, None] * self.normal

    def intrados(self, depth_m: np.ndarray | float) -> np.ndarray:
        """Intrados points (stations, 2) for a rib of the given depth (m), centred on the axis."""
        return self.offset(-0.5 * np.asarray(depth_m, dtype=float))

    def extrados(self, depth_m: np.ndarray | float) -> np.ndarray:
        """Extrados points (stations, 2) for a rib of the given depth (m), centred on the axis."""
        return self.offset(0.5 * np.asarray(depth_m, dtype=float))

    def ordinate_at(self, x: np.ndarray | float) -> np.ndarray:
        """Ordinates of the chord polygon at arbitrary abscissae (m)."""
        return np.interp(x, self.x, self.y)

    def _spline(self):
        """The cubic Hermite interpolant of (x, y, slope); a vertical tangent's slope is capped."""
        from scipy.interpolate import CubicHermiteSpline

        return CubicHermiteSpline(self.x, self.y, np.clip(self.slope, -1e6, 1e6))

    def smooth_ordinate(self, x: np.ndarray | float) -> np.ndarray:
        """Ordinates (m) at arbitrary abscissae (m) by cubic Hermite interpolation of (x, y, slope)."""
        return self._spline()(np.asarray(x, dtype=float))

    def resample(self, x_new: np.ndarray) -> Axis:
        """The axis at new abscissae, by cubic Hermite interpolation of (x, y, slope).

        Where a tangent is vertical (semicircle springing) the slope is capped for interpolation.
        """
        x_new = np.asarray(x_new, dtype=float)
        spline = self._spline()
        theta = np.arctan(spline(x_new, 1))
        exact = np.isin(x_new, self.x)
        theta[exact] = self.theta[np.searchsorted(self.x, x_new[exact])]
        return Axis(x=x_new, y=spline(x_new), theta=theta)


def axis_through(x: np.ndarray, y: np.ndarray, breaks: tuple[int, ...] = ()) -> Axis:
    """The axis through station ordinates ``y`` at abscissae ``x``, its tangents from cubic splines
    (not-a-knot ends; natural ends for a stretch of three stations, as `PointSpline`), one per stretch
    between ``breaks``.

    A break is a station where the axis may kink (a funicular polygon turns at a point load): the
    splines end there, so a kink does not make the spline overshoot at its neighbours, and the tangent
    at the break bisects the two one-sided tangents. A stretch of two stations is straight.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    ends = sorted({0, x.size - 1, *(int(b) for b in breaks if 0 < b < x.size - 1)})
    theta = np.zeros(x.size)
    seen = np.zeros(x.size, dtype=int)
    for (a, b), slope in zip(zip(ends[:-1], ends[1:], strict=True), spline_slopes(x, y, ends), strict=True):
        theta[a:b + 1] += np.arctan(slope)
        seen[a:b + 1] += 1
    return Axis(x=x, y=y, theta=theta / seen)


def spline_slopes(x: np.ndarray, y: np.ndarray, ends: list[int]) -> list[np.ndarray]:
    """dy/dx at the stations of each stretch ``ends[j]..ends[j+1]`` of the interpolating cubic spline of
    that stretch: not-a-knot ends for four stations or more, natural ends for three, the chord for two.

    One banded solve for every stretch at once (the stretches' tridiagonal systems side by side); the
    same slopes as scipy's CubicSpline (the tests compare them), without building a spline object per
    stretch.
    """
    from scipy.linalg import solve_banded

    pieces = [(a, b) for a, b in zip(ends[:-1], ends[1:], strict=True)]
    total = sum(b - a + 1 for a, b in pieces)
    band = np.zeros((3, total))  # rows: upper, diagonal, lower (solve_banded's layout)
    rhs = np.zeros(total)
    starts = []
    at = 0
    for a, b in pieces:
        starts.append(at)
        xs, ys = x[a:b + 1], y[a:b + 1]
        m = xs.size
        h = np.diff(xs)
        d = np.diff(ys) / h
        s = slice(at, at + m)
        diag, upper, lower, r = band[1, s], band[0, s], band[2, s], rhs[s]
        if m == 2:
            diag[:] = 1.0
            r[:] = d[0]
        else:
            diag[1:-1] = 2.0 * (h[:-1] + h[1:])
            upper[2:] = h[:-1]  # upper[j] multiplies the unknown j (solve_banded: ab[0, j] = A[j-1, j])
            lower[:-2] = h[1:]  # ab[2, j] = A[j+1, j]
            r[1:-1] = 3.0 * (h[1:] * d[:-1] + h[:-1] * d[1:])
            if m == 3:  # natural ends: zero curvature at both ends
                diag[0], upper[1], r[0] = 2.0, 1.0, 3.0 * d[0]
                diag[-1], lower[-2], r[-1] = 2.0, 1.0, 3.0 * d[-1]
            else:  # not-a-knot: the third derivative is continuous at the second and last-but-one stations
                span0 = xs[2] - xs[0]
                diag[0], upper[1] = h[1], span0
                r[0] = ((h[0] + 2.0 * span0) * h[1] * d[0] + h[0] ** 2 * d[1]) / span0
                span1 = xs[-1] - xs[-3]
                diag[-1], lower[-2] = h[-2], span1
                r[-1] = (h[-1] ** 2 * d[-2] + (2.0 * span1 + h[-1]) * h[-2] * d[-1]) / span1
        at += m
    slopes = solve_banded((1, 1), band, rhs, check_finite=False)
    return [slopes[start:start + b - a + 1] for start, (a, b) in zip(starts, pieces, strict=True)]


def place_stations(
    curve: Curve,
    count: int,
    spacing: StationSpacing = StationSpacing.X,
    required_x: tuple[float, ...] = (),
) -> np.ndarray:
    """Station abscissae (m) for a curve: ``count`` stations, plus exact stations at ``required_x``.

    Required abscissae (a hinge, the ends of line loads) are honoured exactly: the nearest free
    station within half a step is moved onto each one, or a station is inserted when none is free.
    """
    span = curve.span_m
    if spacing is StationSpacing.ARC:
        # clustered towards the springings, where a high arch's tangent turns vertical
        dense = 0.5 * span * (1.0 - np.cos(np.linspace(0.0, np.pi, max(40 * count, 4001))))
        pts = np.stack([dense, curve.ordinate(dense)], axis=-1)
        s = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(pts, axis=0), axis=1))])
        x = np.interp(np.linspace(0.0, s[-1], count), s, dense)
    else:
        x = np.linspace(0.0, span, count)
    x[0], x[-1] = 0.0, span
    step = span / (count - 1)
    claimed = np.zeros(x.size, dtype=bool)
    claimed[[0, -1]] = True
    extra: list[float] = []
    tol = 1e-9 * span
    for xr in sorted(set(required_x)):
        if xr <= tol or xr >= span - tol:
            continue
        j = int(np.argmin(np.abs(x - xr)))
        if abs(x[j] - xr) <= tol:
            claimed[j] = True
        elif not claimed[j] and abs(x[j] - xr) < 0.5 * step:
            x[j] = xr
            claimed[j] = True
        else:
            extra.append(xr)
    x = np.unique(np.concatenate([x, extra]))
    return x
