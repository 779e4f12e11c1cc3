"""Which simple curve is near a found axis: the parabola, the circle and the catenary through the same
springings with the same rise, each with its largest vertical deviation from the axis.

A designer may prefer to build a simple curve (a rolled circle, a parabola set out from a formula) and
check it: these numbers say what that costs in geometry before it is checked for bending. The rise is
measured as everywhere in formfind, at midspan above the springing chord.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.model.geometry import Axis, Chord, CircularSegment, Curve, Parabola, catenary


@dataclass(frozen=True)
class CurveDeviation:
    """A simple curve through the axis's springings and rise: its name, the largest vertical deviation
    from the axis at the stations (m; positive: the curve lies above the axis) and where (m)."""

    name: str
    deviation_m: float
    at_x_m: float


def nearby_curves(axis: Axis) -> tuple[CurveDeviation, ...]:
    """The parabola, the circle (where the rise is at most half the span) and the catenary through the
    springings of ``axis`` with its rise at midspan, each with its largest deviation."""
    span = axis.span_m
    middle = axis.x[0] + 0.5 * span
    y_mid = float(axis.smooth_ordinate(middle))
    chord = Chord(span, float(axis.y[0]), float(axis.y[-1]))
    rise = y_mid - float(chord.line(np.array([0.5 * span]))[0])
    if not rise > 0:
        return ()
    curves: list[tuple[str, Curve]] = [("parabola", Parabola(chord, rise))]
    if rise <= 0.5 * span:
        curves.append(("circle", CircularSegment(chord, rise)))
    curves.append(("catenary", catenary(chord, rise)))
    out = []
    local = axis.x - axis.x[0]
    for name, curve in curves:
        difference = curve.ordinate(local) - axis.y
        i = int(np.argmax(np.abs(difference)))
        out.append(CurveDeviation(name, float(difference[i]), float(axis.x[i])))
    return tuple(out)
