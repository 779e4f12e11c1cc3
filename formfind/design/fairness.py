"""How fair an axis is: kinks, flat runs and reversals of curvature, with warnings in words.

The measure is the turn between neighbouring chords of the station polygon (the change of direction
at each interior station, degrees). A fair arch turns by a similar amount at every station (for a
parabola of rise/span 0.2 at equal steps in x the largest turn is about 1.3 times the mean); a kink
is a station whose turn exceeds ``KINK_RATIO`` times the mean, a flat run a stretch of at least
``FLAT_LENGTH`` of the span turning by less than ``FLAT_RATIO`` of the mean between curved stretches,
and a reversal a change of the turn's sign (the axis changes from concave to convex). Where a point
load acts, a funicular polygon kinks by nature; the warning then says what the kink costs to remove
(the fairness tolerance of `[find]`). Common practice, no source: these thresholds are ours.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.model.geometry import Axis

KINK_RATIO = 3.0  # a turn above this many times the mean turn is a kink
FLAT_RATIO = 0.05  # a turn below this fraction of the mean is straight ...
FLAT_LENGTH = 0.05  # ... and a straight stretch this long (fraction of the span) between curves is a flat run


@dataclass(frozen=True)
class Kink:
    """A station where the axis turns much more than on average: station, x (m), turn (deg), ratio."""

    station: int
    x_m: float
    turn_deg: float
    ratio: float


@dataclass(frozen=True)
class FairnessReport:
    """The fairness of an axis (module docstring). Angles in degrees, abscissae in m."""

    mean_turn_deg: float
    largest_turn_deg: float
    largest_at_x_m: float
    ratio: float
    kinks: tuple[Kink, ...]
    flat_runs: tuple[tuple[float, float], ...]
    reversals: tuple[float, ...]

    @property
    def fair(self) -> bool:
        """No kink, no flat run, no reversal."""
        return not (self.kinks or self.flat_runs or self.reversals)

    def warnings(self, concave: bool = False) -> tuple[str, ...]:
        """The findings as sentences for the terminal, the JSON and the report; ``concave``: the axis
        was held concave, so a straight run is where that limit binds."""
        out = []
        for k in self.kinks[:5]:
            out.append(f"the axis kinks at x = {k.x_m:.3f} m (station {k.station}): it turns {k.turn_deg:.3f} deg "
                       f"there, {k.ratio:.1f} x the mean turn between chords")
        if len(self.kinks) > 5:
            out.append(f"... and at {len(self.kinks) - 5} more stations")
        for a, b in self.flat_runs:
            why = (": the concavity limit ([find] concave) holds it there, where the governing loads would reverse "
                   "its curvature") if concave else ""
            out.append(f"the axis runs straight from x = {a:.3f} m to {b:.3f} m between curved stretches{why}")
        if self.reversals:
            listed = ", ".join(f"{x:.3f}" for x in self.reversals[:5])
            out.append(f"the axis reverses its curvature at x = {listed} m")
        return tuple(out)


def turns_deg(axis: Axis) -> np.ndarray:
    """The turn (deg, anticlockwise positive) between neighbouring chords at every interior station."""
    angles = np.arctan2(np.diff(axis.y), np.diff(axis.x))
    return np.degrees(np.diff(angles))


def assess(axis: Axis) -> FairnessReport:
    """The fairness report of ``axis``."""
    turn = turns_deg(axis)
    size = np.abs(turn)
    mean = float(size.mean()) if size.size else 0.0
    x = axis.x[1:-1]
    if mean <= 1e-12:  # a straight line: nothing to say
        return FairnessReport(0.0, 0.0, float(x[0]) if x.size else 0.0, 0.0, (), (), ())
    k = int(np.argmax(size))
    kinks = tuple(Kink(int(i) + 1, float(x[i]), float(turn[i]), float(size[i] / mean))
                  for i in np.flatnonzero(size > KINK_RATIO * mean))
    flat = size < FLAT_RATIO * mean
    runs = []
    i = 0
    while i < flat.size:
        if flat[i]:
            j = i
            while j + 1 < flat.size and flat[j + 1]:
                j += 1
            a, b = float(axis.x[i]), float(axis.x[j + 2])  # the chords on either side of the straight stations
            curved_both_sides = i > 0 and j + 1 < flat.size
            if curved_both_sides and b - a >= FLAT_LENGTH * axis.span_m:
                runs.append((a, b))
            i = j + 1
        else:
            i += 1
    significant = size > FLAT_RATIO * mean
    signs = np.sign(turn[significant])
    xs = x[significant]
    reversals = tuple(float(0.5 * (xs[i] + xs[i + 1])) for i in np.flatnonzero(np.diff(signs) != 0))
    return FairnessReport(mean, float(size[k]), float(x[k]), float(size[k] / mean), kinks, tuple(runs), reversals)
