"""The axis as a chain of circular arcs for fabrication: steel members are rolled to constant radii and
glulam is laminated on them, so a builder wants the fewest arcs, tangent to each other, that stay within
a tolerance of the axis.

The chain starts at the left springing on the axis's tangent there. Each arc starts where the last one
ended, on its end tangent (so the chain is tangent-continuous), and reaches as many stations as it can:
an arc through a point with a given tangent is fixed by its curvature k, and a point Q of the axis lies
within ``tol`` of it exactly when

    2 (a - tol) / (b - tol^2) <= k <= 2 (a + tol) / (b - tol^2),     a = (Q - P) . n,  b = |Q - P|^2

(P the start, n the unit normal to the left of the start tangent; from |Q - C| = 1/k +- tol with the
centre C = P + n / k). The axis is sampled densely between stations (the cubic Hermite curve through
the stations' ordinates and tangents); an arc reaches a station while the intervals of every sample up
to it overlap, and the last arc must end on the right springing itself. Greedy reach gives the fewest
arcs for this start and tangent rule. A curvature below ``STRAIGHT`` (1/m) is a straight line.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.model.geometry import Axis

SAMPLES_PER_STATION = 16  # samples of the axis between neighbouring stations, each side included
STRAIGHT = 1e-9  # 1/m: a curvature below this is a straight line (radius over 1e9 m)


@dataclass(frozen=True)
class Arc:
    """One piece of the chain. Lengths in m, angles in degrees.

    Attributes:
        start_station, end_station: stations of the axis it spans.
        start, end: its end points (x, y).
        curvature_per_m: signed (positive turning anticlockwise, left); 0 for a straight piece.
        centre: the centre (x, y); None for a straight piece.
        radius_m: 1 / |curvature| (inf for a straight piece).
        length_m: along the arc.
        turn_deg: the change of direction along it (negative for a downward-curving arch).
        max_deviation_m: the largest distance from the densely sampled axis to it.
    """

    start_station: int
    end_station: int
    start: tuple[float, float]
    end: tuple[float, float]
    curvature_per_m: float
    centre: tuple[float, float] | None
    radius_m: float
    length_m: float
    turn_deg: float
    max_deviation_m: float


def dense_axis(axis: Axis, per_station: int = SAMPLES_PER_STATION) -> tuple[np.ndarray, np.ndarray]:
    """Points (m, (N, 2)) along the smooth axis, and the index of each station among them."""
    t = np.linspace(0.0, 1.0, per_station + 1)[:-1]
    x = (axis.x[:-1, None] + t[None, :] * np.diff(axis.x)[:, None]).ravel()
    x = np.append(x, axis.x[-1])
    at_station = np.append(np.arange(axis.count - 1) * per_station, x.size - 1)
    return np.column_stack([x, axis.smooth_ordinate(x)]), at_station


def _interval(points: np.ndarray, start: np.ndarray, normal: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """The curvature bounds (1/m) of arcs from ``start`` (tangent to the left of ``normal``) that pass
    within ``tol`` of each point."""
    u = points - start
    a = u @ normal
    b = np.einsum("ij,ij->i", u, u)
    denom = np.maximum(b - tol**2, 1e-300)
    inside = b <= tol**2  # a point within tol of the start: any curvature will do
    lower = np.where(inside, -np.inf, 2.0 * (a - tol) / denom)
    upper = np.where(inside, np.inf, 2.0 * (a + tol) / denom)
    return lower, upper


def fit_arcs(axis: Axis, tolerance_m: float) -> tuple[Arc, ...]:
    """The fewest tangent-continuous arcs within ``tolerance_m`` of ``axis`` (module docstring).

    Raises:
        ValueError: if the tolerance is not positive and finite.
    """
    if not (np.isfinite(tolerance_m) and tolerance_m > 0):
        raise ValueError(f"the arc tolerance must be a positive length, got {tolerance_m!r}")
    points, at = dense_axis(axis)
    last = axis.count - 1
    start = points[0].copy()
    direction = np.array([np.cos(axis.theta[0]), np.sin(axis.theta[0])])
    station = 0
    arcs: list[Arc] = []
    tol = 0.99 * tolerance_m  # a margin for the axis between samples and the round-off of the end points
    while station < last:
        normal = np.array([-direction[1], direction[0]])
        lo, hi = -np.inf, np.inf
        reach, k_reach = station, 0.0
        for end in range(station + 1, last + 1):
            lower, upper = _interval(points[at[end - 1]:at[end] + 1], start, normal, tol)
            lo, hi = max(lo, float(lower.max())), min(hi, float(upper.min()))
            if lo > hi:
                break
            u = points[at[end]] - start
            through = 2.0 * float(u @ normal) / float(u @ u)  # the arc that ends on the station itself
            if lo <= through <= hi:
                reach, k_reach = end, through
        if reach == station:  # not even one station within the tolerance: an arc through the next station
            reach = station + 1
            u = points[at[reach]] - start
            k_reach = 2.0 * float(u @ normal) / float(u @ u)
        arc = _arc(start, direction, k_reach, points[at[station]:at[reach] + 1], station, reach)
        arcs.append(arc)
        start = np.array(arc.end)
        angle = np.arctan2(direction[1], direction[0]) + np.radians(arc.turn_deg)
        direction = np.array([np.cos(angle), np.sin(angle)])
        station = reach
    return tuple(arcs)


def _end_angle(k: np.ndarray, start: np.ndarray, direction: np.ndarray, target: np.ndarray) -> np.ndarray:
    """The tangent angle (rad) at the end of arcs of curvatures ``k`` from ``start`` on ``direction``,
    each ending at the point of its circle nearest ``target``."""
    normal = np.array([-direction[1], direction[0]])
    u = target - start
    along, across = float(u @ direction), float(u @ normal)
    # in the start's frame the circle's centre is (0, 1/k); the end's angle round it from the start
    turn = np.where(np.abs(k) < STRAIGHT, 0.0, np.arctan2(along * np.abs(k), np.sign(k) * (1.0 - k * across)))
    return np.arctan2(direction[1], direction[0]) + np.where(k >= 0, turn, -turn)


def _best_curvature(lo: float, hi: float, start: np.ndarray, direction: np.ndarray, target: np.ndarray,
                    theta_end: float) -> float:
    """Among the admissible curvatures [lo, hi], the one whose end tangent is nearest the axis's at the
    end station, so that the next arc starts on the axis's direction (no drift along the chain)."""
    k = np.linspace(lo, hi, 33)
    mismatch = np.abs(np.angle(np.exp(1j * (_end_angle(k, start, direction, target) - theta_end))))
    return float(k[int(np.argmin(mismatch))])


def _arc(start: np.ndarray, direction: np.ndarray, k: float, covered: np.ndarray, first: int, last: int) -> Arc:
    """The arc from ``start`` on ``direction`` with curvature ``k`` over the axis points ``covered``,
    ending at the point of the circle nearest the last of them (on it, where the circle passes through)."""
    normal = np.array([-direction[1], direction[0]])
    target = covered[-1]
    if abs(k) < STRAIGHT:
        along = float((target - start) @ direction)
        end = start + along * direction
        deviation = float(np.max(np.abs((covered - start) @ normal)))
        return Arc(first, last, (float(start[0]), float(start[1])), (float(end[0]), float(end[1])), 0.0,
                   None, float("inf"), along, 0.0, deviation)
    centre = start + normal / k
    radius = 1.0 / abs(k)
    to_target = target - centre
    end = centre + radius * to_target / np.linalg.norm(to_target)
    a0 = np.arctan2(start[1] - centre[1], start[0] - centre[0])
    a1 = np.arctan2(end[1] - centre[1], end[0] - centre[0])
    sweep = (a1 - a0) % (2 * np.pi) if k > 0 else -((a0 - a1) % (2 * np.pi))
    deviation = float(np.max(np.abs(np.linalg.norm(covered - centre, axis=1) - radius)))
    return Arc(first, last, (float(start[0]), float(start[1])), (float(end[0]), float(end[1])), float(k),
               (float(centre[0]), float(centre[1])), radius, abs(sweep) * radius, float(np.degrees(sweep)), deviation)


def chain_points(arcs: tuple[Arc, ...], per_arc: int = 64) -> np.ndarray:
    """Points (m, (N, 2)) along the chain, for drawing and for checking it against the axis."""
    out = []
    for arc in arcs:
        t = np.linspace(0.0, 1.0, per_arc + 1)
        if arc.centre is None:
            p = np.array(arc.start)[None, :] + t[:, None] * (np.array(arc.end) - np.array(arc.start))[None, :]
        else:
            c = np.array(arc.centre)
            a0 = np.arctan2(arc.start[1] - c[1], arc.start[0] - c[0])
            angles = a0 + t * np.radians(arc.turn_deg)
            p = c[None, :] + arc.radius_m * np.column_stack([np.cos(angles), np.sin(angles)])
        out.append(p if not out else p[1:])
    return np.vstack(out)
