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

    Attributes:
        force_right: (states, stations, 2) kN, loads at x <= x_i (point loads at the station included).
        force_left: (states, stations, 2) kN, loads at x < x_i.
        moment_origin: (states, stations) kNm, anticlockwise moment about the origin of the loads
            at x <= x_i (the same for both sides: a load at the station has no lever arm there).
        total_force: (states, 2) kN, every applied load.
        total_moment: (states,) kNm about the origin.
    """

    force_right: np.ndarray
    force_left: np.ndarray
    moment_origin: np.ndarray
    total_force: np.ndarray
    total_moment: np.ndarray


def cut_resultants(axis: Axis, loads: StationLoads) -> CutResultants:
    """Exact cumulative resultants of the applied loads at every station cut."""
    states = loads.count
    n = axis.count
    x0, y0 = axis.x[:-1], axis.y[:-1]
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    fa, fb = loads.dist[:, :, 0, :], loads.dist[:, :, 1, :]
    elem_force = 0.5 * (fa + fb)  # (S, E, 2)
    df = fb - fa
    # integral over t of r(t) x f(t), r = r0 + t d, f = fa + t (fb - fa)
    elem_moment = (
        _cross(x0, y0, fa[..., 0], fa[..., 1])
        + 0.5 * (_cross(x0, y0, df[..., 0], df[..., 1]) + _cross(dx, dy, fa[..., 0], fa[..., 1]))
        + _cross(dx, dy, df[..., 0], df[..., 1]) / 3.0
    )
    force = np.zeros((states, n, 2))
    moment = np.zeros((states, n))
    force[:, 1:] = np.cumsum(elem_force, axis=1)
    moment[:, 1:] = np.cumsum(elem_moment, axis=1)

    force_left = force.copy()
    if loads.point_x.size:
        tol = 1e-9 * axis.span_m
        j = np.clip(np.searchsorted(axis.x, loads.point_x - tol, side="left"), 0, n - 1)
        at_station = np.abs(axis.x[j] - loads.point_x) <= tol
        px = loads.point_x
        py = axis.ordinate_at(px)
        pf = loads.point_force
        pm = _cross(px, py, pf[:, 0], pf[:, 1])
        add_f = np.zeros((states, n + 1, 2))
        add_m = np.zeros((states, n + 1))
        add_fl = np.zeros((states, n + 1, 2))
        np.add.at(add_f, (loads.point_state, j), pf)
        np.add.at(add_m, (loads.point_state, j), pm)
        np.add.at(add_fl, (loads.point_state, j + at_station.astype(int)), pf)
        force += np.cumsum(add_f, axis=1)[:, :n]
        moment += np.cumsum(add_m, axis=1)[:, :n]
        force_left += np.cumsum(add_fl, axis=1)[:, :n]
        total_pf = add_f.sum(axis=1)
        total_pm = add_m.sum(axis=1)
    else:
        total_pf = np.zeros((states, 2))
        total_pm = np.zeros(states)
    total_force = elem_force.sum(axis=1) + total_pf
    total_moment = elem_moment.sum(axis=1) + total_pm
    return CutResultants(force, force_left, moment, total_force, total_moment)


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
    s_right = cuts.force_right + left_reaction[:, None, :]
    s_left = cuts.force_left + left_reaction[:, None, :]
    mo = cuts.moment_origin + _cross(xa, ya, left_reaction[:, 0], left_reaction[:, 1])[:, None]
    if left_moment is not None:
        mo = mo + left_moment[:, None]
    # M = sum over the left part of (r_i - r_j) x F_j
    M = _cross(axis.x, axis.y, s_right[..., 0], s_right[..., 1]) - mo
    t, n = axis.tangent, axis.normal
    N = -np.einsum("ski,ki->sk", s_right, t)
    V = np.einsum("ski,ki->sk", s_right, n)
    N_left = -np.einsum("ski,ki->sk", s_left, t)
    V_left = np.einsum("ski,ki->sk", s_left, n)
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
    fc = cuts.force_right[:, hinge_station]
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


def verify_equilibrium(axis: Axis, cuts: CutResultants, response: Response) -> None:
    """Check that reactions balance the applied loads, in force and moment.

    Raises:
        AnalysisError: with the largest residuals if the relative residual exceeds 1e-9.
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
    scale_f = np.maximum(scale_f, 1e-300)
    scale_m = scale_f * max(axis.span_m, float(np.ptp(axis.y)))
    worst = max(
        float(np.max(np.abs(rx) / scale_f)),
        float(np.max(np.abs(ry) / scale_f)),
        float(np.max(np.abs(rm) / scale_m)),
    )
    if not np.isfinite(worst) or worst > EQUILIBRIUM_RTOL:
        raise AnalysisError(
            f"equilibrium check failed: relative residual {worst:.3e} exceeds {EQUILIBRIUM_RTOL:.0e}"
        )
