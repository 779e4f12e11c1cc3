"""Results by name and place: one load state by its name, its internal forces and displacements at any
abscissa, the reactions in words, and the envelope of a group.

Between stations the arch is the straight element of the chord polygon that the engines analyse, so
the internal forces there follow exactly from the station just left of the point and the loads on the
element up to it (the element's distributed load varies linearly; point loads act where they stand).
At a point load two values exist: ``N_kN`` and ``V_kN`` just right of it, ``N_left_kN`` and
``V_left_kN`` just left (M is continuous). N and V are resolved on the tangent interpolated linearly
between the stations' tangents, so that a point at a station gives the station's own values.
Displacements between stations are the element's own interpolation: linear along the chord, cubic
(Hermite, from the end rotations) across it.

Signs as `formfind.analysis.response`: N tension positive, M positive with tension on the intrados,
V the resultant on the left part projected on the normal; x to the right, y up; units m, kN, kNm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.response import Envelope, Response, envelope
from formfind.errors import ArgumentError
from formfind.model.loads import StationLoads


@dataclass(frozen=True)
class SectionForces:
    """The internal forces and displacements of one load state at one abscissa.

    ``N_kN``, ``V_kN`` just right of the point, ``N_left_kN``, ``V_left_kN`` just left (they differ only
    at a point load); ``M_kNm`` is continuous. ``y_m`` is the axis's level there (the chord polygon's).
    ``ux_m`` (right), ``uy_m`` (up) are None where the engine gives no displacements (exact statics of a
    three-hinged arch); ask `formfind.analyse` for ``displacements=True`` otherwise.
    """

    state: str
    x_m: float
    y_m: float
    N_kN: float
    V_kN: float
    M_kNm: float
    N_left_kN: float
    V_left_kN: float
    ux_m: float | None = None
    uy_m: float | None = None


@dataclass(frozen=True)
class SupportReaction:
    """What one springing does to the arch, in the words used for the rib.

    ``thrust_kN``: horizontal force pushing the arch inwards (towards midspan), positive; for a tied
    arch the springing's own horizontal force (the tie carries the rest). ``up_kN``: vertical force,
    upwards positive. ``moment_kNm``: the bending moment in the rib at the springing (positive: tension
    on the intrados), zero at a pinned springing.
    """

    thrust_kN: float
    up_kN: float
    moment_kNm: float


@dataclass(frozen=True)
class Reactions:
    """The springings' reactions of one load state, and the thrust H of the arch (kN; for a tied arch
    the tie force)."""

    state: str
    left: SupportReaction
    right: SupportReaction
    thrust_kN: float
    tie_kN: float


def find_state(analysis, name: str) -> tuple[Response, StationLoads, int]:
    """The response and loads holding the state called ``name`` (a state's own name, or a case or
    combination with a single state), and its index in them.

    Raises:
        ArgumentError: if no state has that name, or a group of several states (a moving train) is named.
    """
    if not isinstance(name, str):
        raise ArgumentError(f"state: name: expected the name of a load state, case or combination, got "
                            f"{type(name).__name__}")
    pairs = ((analysis.combinations, analysis.loads.combinations), (analysis.cases, analysis.loads.cases))
    for response, loads in pairs:
        if name in response.names:
            return response, loads, response.names.index(name)
    for response, loads in pairs:
        states = [k for k, g in enumerate(response.groups) if g == name]
        if len(states) == 1:
            return response, loads, states[0]
        if states:
            shown = ", ".join(repr(response.names[k]) for k in states[:3])
            raise ArgumentError(f"state: {name!r} holds {len(states)} states (a moving load): name one of them, "
                                f"such as {shown}, or take its envelope")
    known = list(dict.fromkeys(analysis.combinations.groups + analysis.cases.groups))
    raise ArgumentError(f"state: no load state, case or combination called {name!r}; the analysis has "
                        + ", ".join(repr(k) for k in known[:12]))


def group_response(analysis, name: str) -> Response:
    """Every state of the case or combination ``name`` (several for a moving train).

    Raises:
        ArgumentError: if no case or combination has that name.
    """
    for response in (analysis.combinations, analysis.cases):
        states = [k for k, g in enumerate(response.groups) if g == name]
        if states:
            return response.select(states)
    raise ArgumentError(f"group: no case or combination called {name!r}")


def group_envelope(analysis, name: str) -> Envelope:
    """The envelope of the case or combination ``name`` over its states, with named fields
    (``M_max_kNm``, ``N_min_kN``, ...)."""
    response = group_response(analysis, name)
    return envelope(response, name)


def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def forces_at(analysis, name: str, x_m: float) -> SectionForces:
    """The internal forces (and displacements) of state ``name`` at abscissa ``x_m`` (module docstring).

    Raises:
        ArgumentError: for an unknown state or an abscissa outside the span.
    """
    response, loads, k = find_state(analysis, name)
    axis = analysis.axis
    try:
        x = float(x_m)
    except (TypeError, ValueError):
        raise ArgumentError(f"at: x_m: expected a number (m), got {type(x_m).__name__}") from None
    span = axis.span_m
    tol = 1e-9 * span
    if not (np.isfinite(x) and -tol <= x - axis.x[0] and x <= axis.x[-1] + tol):
        raise ArgumentError(f"at: x_m: expected an abscissa within the span 0..{span:g} m, got {x!r}")
    disp = None if response.displacements is None else response.displacements[k]
    j = int(np.clip(np.searchsorted(axis.x, x), 0, axis.count - 1))
    for station in (j - 1, j):
        if 0 <= station < axis.count and abs(axis.x[station] - x) <= tol:
            i = station
            return SectionForces(response.names[k], float(axis.x[i]), float(axis.y[i]), float(response.N[k, i]),
                                 float(response.V[k, i]), float(response.M[k, i]), float(response.N_left[k, i]),
                                 float(response.V_left[k, i]),
                                 None if disp is None else float(disp[i, 0]),
                                 None if disp is None else float(disp[i, 1]))
    i = j - 1  # the element from station i to i + 1 holds x
    r_i = np.array([axis.x[i], axis.y[i]])
    d = np.array([axis.x[i + 1] - axis.x[i], axis.y[i + 1] - axis.y[i]])
    t = (x - axis.x[i]) / d[0]
    point = r_i + t * d
    c, s = np.cos(axis.theta[i]), np.sin(axis.theta[i])
    N_i, V_i = response.N[k, i], response.V[k, i]
    resultant = np.array([-N_i * c - V_i * s, -N_i * s + V_i * c])  # the left part's load, right of station i
    moment = float(response.M[k, i]) + _cross(point - r_i, resultant)
    fa = loads.dist[k, i, 0]
    df = loads.dist[k, i, 1] - fa
    resultant = resultant + fa * t + df * t**2 / 2.0
    moment += _cross(d, fa * t**2 / 2.0 + df * t**3 / 6.0)
    left = resultant.copy()
    mine = np.flatnonzero(loads.point_state == k)
    for p in mine:
        px = float(loads.point_x[p])
        if not axis.x[i] + tol < px < axis.x[i + 1] - tol or px > x + tol:
            continue  # at a station (already in its values) or beyond the point
        force = loads.point_force[p]
        resultant = resultant + force
        if px < x - tol:
            left = left + force
            moment += _cross(point - np.array([px, float(axis.ordinate_at(px))]), force)
    theta = axis.theta[i] + t * (axis.theta[i + 1] - axis.theta[i])
    c, s = np.cos(theta), np.sin(theta)

    def resolve(force: np.ndarray) -> tuple[float, float]:
        return float(-(force[0] * c + force[1] * s)), float(-force[0] * s + force[1] * c)

    N, V = resolve(resultant)
    N_left, V_left = resolve(left)
    ux = uy = None
    if disp is not None:
        length = float(np.hypot(*d))
        ce, se = d / length
        a_i, a_j = ce * disp[i, 0] + se * disp[i, 1], ce * disp[i + 1, 0] + se * disp[i + 1, 1]
        v_i, v_j = -se * disp[i, 0] + ce * disp[i, 1], -se * disp[i + 1, 0] + ce * disp[i + 1, 1]
        h1, h2, h3, h4 = 1 - 3 * t**2 + 2 * t**3, t - 2 * t**2 + t**3, 3 * t**2 - 2 * t**3, -(t**2) + t**3
        along = (1 - t) * a_i + t * a_j
        across = h1 * v_i + h2 * length * disp[i, 2] + h3 * v_j + h4 * length * disp[i + 1, 2]
        ux, uy = float(ce * along - se * across), float(se * along + ce * across)
    return SectionForces(response.names[k], x, float(point[1]), N, V, moment, N_left, V_left, ux, uy)


def reactions_of(analysis, name: str) -> Reactions:
    """The springings' reactions of state ``name`` in words (`SupportReaction`)."""
    response, _, k = find_state(analysis, name)
    r = response.reactions[k]
    left = SupportReaction(float(r[0, 0]), float(r[0, 1]), float(response.M[k, 0]))
    right = SupportReaction(float(-r[1, 0]), float(r[1, 1]), float(response.M[k, -1]))
    return Reactions(response.names[k], left, right, float(response.thrust[k]), float(response.tie_force[k]))
