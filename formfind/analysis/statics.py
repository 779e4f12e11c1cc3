"""Exact statics of the three-hinged arch, vectorised over stations and load states.

The arch is pinned at both springings (which may stand at different levels) and has one internal
hinge at a station anywhere in the span. The four reactions follow from the three equations of
global equilibrium and M = 0 at the hinge; the internal forces at every station follow from the
resultant of everything on the left of the cut (the beam analogy, M = M0 - H y for vertical loads
on equal springings). Vertical, horizontal and inclined loads are all treated exactly on the chord
polygon (see `formfind.model.loads`). Temperature and support movement cause no forces in a
statically determinate arch, so they are ignored here.

Signs and array shapes are those of `formfind.analysis.response`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.response import Response
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

EQUILIBRIUM_RTOL = 1e-9


def _cross(ax: np.ndarray, ay: np.ndarray, bx: np.ndarray, by: np.ndarray) -> np.ndarray:
    return ax * by - ay * bx


@dataclass(frozen=True, eq=False)
class CutResultants:
    """Resultant of the applied loads on the part of the arch left of every station.

    Components are held as separate contiguous arrays (states, stations), kN and kNm:
        fx_right, fy_right: loads at x <= x_i (point loads at the station included).
        fx_left, fy_left: loads at x < x_i.
        moment_origin: anticlockwise moment about the origin of the loads at x <= x_i (the same for
            both sides: a load at the station has no lever arm there).
        total_force: (states, 2) every applied load; total_moment: (states,) about the origin.
    """

    fx_right: np.ndarray
    fy_right: np.ndarray
    fx_left: np.ndarray
    fy_left: np.ndarray
    moment_origin: np.ndarray
    total_force: np.ndarray
    total_moment: np.ndarray

    @property
    def force_right(self) -> np.ndarray:
        """(states, stations, 2) resultant of the loads at x <= x_i."""
        return np.stack([self.fx_right, self.fy_right], axis=-1)


def cut_resultants(axis: Axis, loads: StationLoads) -> CutResultants:
    """Exact cumulative resultants of the applied loads at every station cut."""
    states = loads.count
    n = axis.count
    fx = np.zeros((states, n))
    fy = np.zeros((states, n))
    moment = np.zeros((states, n))
    if loads.dist.any():
        x0, y0 = axis.x[:-1], axis.y[:-1]
        dx, dy = np.diff(axis.x), np.diff(axis.y)
        fax, fay = loads.dist[:, :, 0, 0], loads.dist[:, :, 0, 1]
        dfx, dfy = loads.dist[:, :, 1, 0] - fax, loads.dist[:, :, 1, 1] - fay
        # integral over t of r(t) x f(t), r = r0 + t d, f = fa + t (fb - fa)
        elem_moment = (
            _cross(x0, y0, fax, fay)
            + 0.5 * (_cross(x0, y0, dfx, dfy) + _cross(dx, dy, fax, fay))
            + _cross(dx, dy, dfx, dfy) / 3.0
        )
        np.cumsum(fax + 0.5 * dfx, axis=1, out=fx[:, 1:])
        np.cumsum(fay + 0.5 * dfy, axis=1, out=fy[:, 1:])
        np.cumsum(elem_moment, axis=1, out=moment[:, 1:])
    total_force = np.stack([fx[:, -1], fy[:, -1]], axis=1)
    total_moment = moment[:, -1].copy()
    fx_left, fy_left = fx.copy(), fy.copy()
    if loads.point_x.size:
        tol = 1e-9 * axis.span_m
        j = np.clip(np.searchsorted(axis.x, loads.point_x - tol, side="left"), 0, n - 1)
        at_station = np.abs(axis.x[j] - loads.point_x) <= tol
        # a load within the tolerance of a station is at that station, for its lever arm too
        px = np.where(at_station, axis.x[j], loads.point_x)
        py = axis.ordinate_at(px)
        pf = loads.point_force
        pm = _cross(px, py, pf[:, 0], pf[:, 1])
        size = states * (n + 1)
        right = loads.point_state * (n + 1) + j
        left = right + at_station.astype(int)

        def spread(index: np.ndarray, weights: np.ndarray) -> np.ndarray:
            # cumulative sum over stations of point contributions, by state
            added = np.bincount(index, weights, minlength=size).reshape(states, n + 1)
            return np.cumsum(added, axis=1)[:, :n]

        fx += spread(right, pf[:, 0])
        fy += spread(right, pf[:, 1])
        fx_left += spread(left, pf[:, 0])
        fy_left += spread(left, pf[:, 1])
        moment += spread(right, pm)
        for comp in (0, 1):
            total_force[:, comp] += np.bincount(loads.point_state, pf[:, comp], minlength=states)
        total_moment += np.bincount(loads.point_state, pm, minlength=states)
    return CutResultants(fx, fy, fx_left, fy_left, moment, total_force, total_moment)


def internal_forces(
    axis: Axis,
    cuts: CutResultants,
    left_reaction: np.ndarray,
    left_moment: np.ndarray | None = None,
) -> tuple[np.ndarray, ...]:
    """N, V, M, N_left, V_left at every station from the left reaction (states, 2) kN.

    ``left_moment`` (states,) kNm is the reaction moment at a fixed left springing (zero if pinned).
    """
    xa, ya = axis.x[0], axis.y[0]
    rx, ry = left_reaction[:, 0:1], left_reaction[:, 1:2]
    sx = cuts.fx_right + rx
    sy = cuts.fy_right + ry
    # M = sum over the left part of (r_i - r_j) x F_j = r_i x S_i - (moment of the left part about O)
    mo0 = xa * left_reaction[:, 1] - ya * left_reaction[:, 0]
    if left_moment is not None:
        mo0 = mo0 + left_moment
    M = axis.x * sy
    M -= axis.y * sx
    M -= cuts.moment_origin
    M -= mo0[:, None]
    cos, sin = np.cos(axis.theta), np.sin(axis.theta)

    def project(px: np.ndarray, py: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        normal = py * cos
        normal -= px * sin
        px *= cos
        py *= sin
        px += py
        np.negative(px, out=px)
        return px, normal

    N, V = project(sx, sy)
    N_left, V_left = project(cuts.fx_left + rx, cuts.fy_left + ry)
    # the right springing takes the inner side; the left springing's "left" value its inner side
    N[:, -1], V[:, -1] = N_left[:, -1], V_left[:, -1]
    N_left[:, 0], V_left[:, 0] = N[:, 0], V[:, 0]
    return N, V, M, N_left, V_left


def three_hinged(axis: Axis, loads: StationLoads, hinge_station: int) -> Response:
    """Exact analysis of a three-hinged arch with its crown hinge at station ``hinge_station``.

    Raises:
        AnalysisError: if the hinge lies on the line joining the springings (a mechanism), or if
            the equilibrium verification fails.
    """
    n = axis.count
    if not 0 < hinge_station < n - 1:
        raise AnalysisError(f"the hinge must be at an interior station, got station {hinge_station}")
    xa, ya, xb, yb = axis.x[0], axis.y[0], axis.x[-1], axis.y[-1]
    xc, yc = axis.x[hinge_station], axis.y[hinge_station]
    # the hinge must not be collinear with the springings (else H is indeterminate / infinite)
    offset = (yc - ya) - (yb - ya) * (xc - xa) / (xb - xa)
    if abs(offset) < 1e-9 * axis.span_m:
        raise AnalysisError(
            "the hinge lies on the line joining the springings: the three-hinged arch is a mechanism"
        )
    cuts = cut_resultants(axis, loads)
    fc = np.stack([cuts.fx_right[:, hinge_station], cuts.fy_right[:, hinge_station]], axis=1)
    mc = cuts.moment_origin[:, hinge_station]
    # unknowns (RAx, RAy, RBx, RBy)
    a = np.array(
        [
            [1.0, 0.0, 1.0, 0.0],
            [0.0, 1.0, 0.0, 1.0],
            [-ya, xa, -yb, xb],
            [-(yc - ya), xc - xa, 0.0, 0.0],
        ]
    )
    rhs = np.stack(
        [
            -cuts.total_force[:, 0],
            -cuts.total_force[:, 1],
            -cuts.total_moment,
            mc - _cross(xc, yc, fc[:, 0], fc[:, 1]),
        ]
    )
    r = np.linalg.solve(a, rhs).T  # (states, 4)
    reactions = np.zeros((loads.count, 2, 3))
    reactions[:, 0, :2] = r[:, :2]
    reactions[:, 1, :2] = r[:, 2:]
    N, V, M, N_left, V_left = internal_forces(axis, cuts, reactions[:, 0, :2])
    response = Response(
        names=loads.names,
        groups=loads.groups,
        x=axis.x,
        N=N,
        V=V,
        M=M,
        N_left=N_left,
        V_left=V_left,
        reactions=reactions,
        tie_force=np.zeros(loads.count),
        displacements=None,
        engine="statics",
    )
    verify_equilibrium(axis, cuts, response)
    return response


def verify_equilibrium(
    axis: Axis,
    cuts: CutResultants,
    response: Response,
    rtol: float = EQUILIBRIUM_RTOL,
    force_scale: np.ndarray | None = None,
    rounding_kN: np.ndarray | None = None,
) -> None:
    """Check that reactions balance the applied loads, in force and moment, to ``rtol`` relative.

    The residual is relative to the largest of the applied loads, the reactions and ``force_scale``
    (states,) kN, where an engine passes the largest force it handled (e.g. equivalent nodal forces of
    a temperature change). ``rounding_kN`` (states,) is a bound on the rounding error of reactions an
    engine recovers by cancellation (K u - f), allowed on top.

    Raises:
        AnalysisError: with the largest relative residual if it exceeds ``rtol``.
    """
    if response.count == 0:
        return
    r = response.reactions
    rx = r[:, :, 0].sum(axis=1) + cuts.total_force[:, 0]
    ry = r[:, :, 1].sum(axis=1) + cuts.total_force[:, 1]
    xs = axis.x[[0, -1]]
    ys = axis.y[[0, -1]]
    rm = (
        np.sum(xs * r[:, :, 1] - ys * r[:, :, 0] + r[:, :, 2], axis=1)
        + cuts.total_moment
    )
    scale_f = np.maximum(np.abs(cuts.total_force).max(axis=1), np.abs(r[:, :, :2]).max(axis=(1, 2)))
    if force_scale is not None:
        scale_f = np.maximum(scale_f, force_scale)
    scale_f = np.maximum(scale_f, 1e-300)
    scale_m = scale_f * max(axis.span_m, float(np.ptp(axis.y)))
    slack = np.zeros_like(scale_f) if rounding_kN is None else rounding_kN
    lever = max(axis.span_m, float(np.ptp(axis.y)))
    worst = max(
        float(np.max(np.maximum(np.abs(rx) - slack, 0.0) / scale_f)),
        float(np.max(np.maximum(np.abs(ry) - slack, 0.0) / scale_f)),
        float(np.max(np.maximum(np.abs(rm) - slack * lever, 0.0) / scale_m)),
    )
    if not np.isfinite(worst) or worst > rtol:
        raise AnalysisError(
            f"{response.engine} equilibrium check failed: relative residual {worst:.3e} exceeds {rtol:.0e}"
            + (" (axial stiffness far above bending stiffness loses digits in K u)" if response.engine == "frame" else "")
        )
