"""`Response`: internal forces, reactions and displacements, the one result every engine returns.

Sign convention (used everywhere in formfind, tables and plots included):

- N (kN): axial force, **tension positive**; an arch in compression has N < 0.
- V (kN): shear force, the resultant of all forces on the part of the arch to the left of the cut,
  projected on the station normal n = (-sin theta, cos theta). For a horizontal beam this is the
  usual "left reaction minus loads to the left".
- M (kNm): bending moment, **positive when it causes tension on the intrados** (sagging); it equals
  M0 - H y for a three-hinged arch under vertical loads (beam analogy).
- Reactions (kN, kNm): forces of the supports on the arch, global x to the right, y upwards, moment
  anticlockwise. The thrust H is the horizontal reaction at the left springing (positive pushing
  the arch towards the right, i.e. inwards); for a tied arch it is the tie force.

Arrays have load states along the first axis and stations along the last. ``N`` and ``V`` are the
values just to the right of each station (at the right springing: just left); ``N_left`` and
``V_left`` just to the left (at the left springing: just right). They differ only where a point
load acts exactly at a station. M is continuous.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class Response:
    """Internal forces of an arch under a set of load states.

    Attributes:
        names: name of each load state (states,).
        groups: the load case or combination each state belongs to (states,).
        x: station abscissae (m) (stations,).
        N, V, M: internal forces (states, stations), kN and kNm, signs as the module says.
        N_left, V_left: N and V just left of each station (states, stations), kN.
        reactions: (states, 2 supports [left, right], 3 [Rx kN, Ry kN, Mz kNm]).
        tie_force: tension in the tie (states,), kN; zeros where there is no tie.
        displacements: (states, stations, 3 [ux m, uy m, rotation rad anticlockwise]) or None where
            the engine does not compute them (exact statics).
        engine: which engine produced it ("statics" or "frame").
    """

    names: tuple[str, ...]
    groups: tuple[str, ...]
    x: np.ndarray
    N: np.ndarray
    V: np.ndarray
    M: np.ndarray
    N_left: np.ndarray
    V_left: np.ndarray
    reactions: np.ndarray
    tie_force: np.ndarray
    displacements: np.ndarray | None
    engine: str

    @property
    def count(self) -> int:
        """Number of load states."""
        return len(self.names)

    @property
    def thrust(self) -> np.ndarray:
        """Horizontal thrust H per state (kN): left horizontal reaction, or the tie force if tied."""
        return self.reactions[:, 0, 0] + self.tie_force

    def to_frame(self):
        """The response as a pandas DataFrame, one row per state and station: state, group, x_m, N_kN,
        V_kN, M_kNm, N_left_kN, V_left_kN, and ux_m, uy_m, rotation_rad where displacements exist.
        pandas is optional: formfind does not need it, this method does.

        Raises:
            ArgumentError: if pandas is not installed (the message says how to install it).
        """
        try:
            import pandas as pd
        except ImportError:
            from formfind.errors import ArgumentError

            raise ArgumentError("to_frame: needs pandas, an optional dependency: pip install pandas") from None
        states, stations = self.M.shape
        columns = {
            "state": np.repeat(np.array(self.names, dtype=object), stations),
            "group": np.repeat(np.array(self.groups, dtype=object), stations),
            "x_m": np.tile(self.x, states),
            "N_kN": self.N.ravel(), "V_kN": self.V.ravel(), "M_kNm": self.M.ravel(),
            "N_left_kN": self.N_left.ravel(), "V_left_kN": self.V_left.ravel(),
        }
        if self.displacements is not None:
            for j, name in enumerate(("ux_m", "uy_m", "rotation_rad")):
                columns[name] = self.displacements[:, :, j].ravel()
        return pd.DataFrame(columns)

    def select(self, states: list[int]) -> Response:
        """A response holding only the given states, in the given order."""
        idx = np.asarray(states, dtype=int)
        disp = None if self.displacements is None else self.displacements[idx]
        return Response(
            names=tuple(self.names[i] for i in idx),
            groups=tuple(self.groups[i] for i in idx),
            x=self.x,
            N=self.N[idx],
            V=self.V[idx],
            M=self.M[idx],
            N_left=self.N_left[idx],
            V_left=self.V_left[idx],
            reactions=self.reactions[idx],
            tie_force=self.tie_force[idx],
            displacements=disp,
            engine=self.engine,
        )


@dataclass(frozen=True)
class Extreme:
    """Where an effect is largest in magnitude: value (units of the effect), state and station."""

    value: float
    state: str
    group: str
    station: int
    x_m: float


def extreme(response: Response, effect: str, states: list[int] | None = None) -> Extreme:
    """The largest-magnitude value of ``effect`` ('N', 'V' or 'M') over states and stations.

    For N and V both sides of every station are searched.
    """
    idx = list(range(response.count)) if states is None else states
    arrays = [getattr(response, effect)[idx]]
    if effect in ("N", "V"):
        arrays.append(getattr(response, effect + "_left")[idx])
    best: tuple[float, int, int] | None = None
    for arr in arrays:
        if arr.size == 0:
            continue
        k, i = np.unravel_index(int(np.argmax(np.abs(arr))), arr.shape)
        if best is None or abs(arr[k, i]) > abs(best[0]):
            best = (float(arr[k, i]), int(k), int(i))
    if best is None:
        raise ValueError("no load states to search")
    value, k, i = best
    s = idx[k]
    return Extreme(value, response.names[s], response.groups[s], i, float(response.x[i]))


@dataclass(frozen=True)
class GroupSummary:
    """Extremes of one load case or combination over its states (a moving train has many).

    ``thrust_kN`` is the thrust H of largest magnitude over the group's states.
    """

    group: str
    states: int
    thrust_kN: float
    M: Extreme
    N: Extreme
    V: Extreme


def summarise(response: Response) -> list[GroupSummary]:
    """One `GroupSummary` per group, in the order the groups first appear.

    Raises:
        ArgumentError: if ``response`` is not a Response (an analysis's ``cases`` or ``combinations``).
    """
    from formfind import arguments

    arguments.instance(response, Response, "summarise", "response")
    rows = []
    for group in dict.fromkeys(response.groups):
        idx = [i for i, g in enumerate(response.groups) if g == group]
        thrust = response.thrust[idx]
        rows.append(
            GroupSummary(
                group=group,
                states=len(idx),
                thrust_kN=float(thrust[int(np.argmax(np.abs(thrust)))]),
                M=extreme(response, "M", idx),
                N=extreme(response, "N", idx),
                V=extreme(response, "V", idx),
            )
        )
    return rows


EFFECTS = ("N", "V", "M")


@dataclass(frozen=True, eq=False)
class Envelope:
    """Largest and smallest N, V, M at every station over the states of one group.

    Attributes:
        group: the load case or combination.
        states: names of the states enveloped (one, or one per position of a moving train).
        maximum, minimum: (3 effects [N kN, V kN, M kNm], stations); N and V include both sides of
            every station.
        max_state, min_state: (3, stations) index into ``states`` of the governing state.
    """

    group: str
    states: tuple[str, ...]
    maximum: np.ndarray
    minimum: np.ndarray
    max_state: np.ndarray
    min_state: np.ndarray

    @property
    def N_max_kN(self) -> np.ndarray:
        """Largest axial force at every station (kN, tension positive), both sides of each station."""
        return self.maximum[0]

    @property
    def N_min_kN(self) -> np.ndarray:
        """Smallest axial force at every station (kN): the largest compression, as a negative number."""
        return self.minimum[0]

    @property
    def V_max_kN(self) -> np.ndarray:
        """Largest shear force at every station (kN), both sides of each station."""
        return self.maximum[1]

    @property
    def V_min_kN(self) -> np.ndarray:
        """Smallest shear force at every station (kN)."""
        return self.minimum[1]

    @property
    def M_max_kNm(self) -> np.ndarray:
        """Largest bending moment at every station (kNm, positive: tension on the intrados)."""
        return self.maximum[2]

    @property
    def M_min_kNm(self) -> np.ndarray:
        """Smallest bending moment at every station (kNm; negative: tension on the extrados)."""
        return self.minimum[2]


def envelope(response: Response, group: str) -> Envelope:
    """The envelope of ``group``'s states in ``response``."""
    idx = [i for i, g in enumerate(response.groups) if g == group]
    if not idx:
        raise ValueError(f"no states of group {group!r}")
    n = response.x.size
    maximum = np.empty((3, n))
    minimum = np.empty((3, n))
    max_state = np.empty((3, n), dtype=int)
    min_state = np.empty((3, n), dtype=int)
    for e, name in enumerate(EFFECTS):
        if name == "M":
            hi = lo = response.M[idx]
        else:
            right, left = getattr(response, name)[idx], getattr(response, name + "_left")[idx]
            hi = np.maximum(right, left)
            lo = np.minimum(right, left)
        max_state[e] = np.argmax(hi, axis=0)
        min_state[e] = np.argmin(lo, axis=0)
        maximum[e] = np.take_along_axis(hi, max_state[e][None], axis=0)[0]
        minimum[e] = np.take_along_axis(lo, min_state[e][None], axis=0)[0]
    return Envelope(group, tuple(response.names[i] for i in idx), maximum, minimum, max_state, min_state)


def envelopes(response: Response) -> list[Envelope]:
    """One `Envelope` per group, in the order the groups first appear."""
    return [envelope(response, g) for g in dict.fromkeys(response.groups)]


def thrust_line(x: np.ndarray, y: np.ndarray, theta: np.ndarray, M: np.ndarray, N: np.ndarray) -> np.ndarray:
    """Points (stations, 2), m, where the resultant of a state crosses each section.

    The eccentricity along the normal n = (-sin theta, cos theta) is e = -M / N: with N < 0
    (compression) and M > 0 (intrados in tension) the line of thrust lies on the extrados side.
    Stations without axial force get no point (NaN).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        e = np.where(np.abs(N) > 1e-12, -M / N, np.nan)
    return np.stack([x - e * np.sin(theta), y + e * np.cos(theta)], axis=-1)
