"""Loads as data, load cases and combinations, and their station loads on a given axis.

Units: kN, kN/m, kN/m3, kPa (kN/m2), degC, m, rad. Case-file loads are "down" positive for vertical
and "right" positive for horizontal components; inside `StationLoads` every force is a global vector
(x to the right, y upwards), converted once here.

How loads reach the engines (the element scheme). The axis is the chord polygon through the stations.
On every element the distributed load of a state is held as a density linear in the element
parameter t in [0, 1] (kN per unit t; the element's resultant is (f_a + f_b) / 2), chosen to carry
the exact resultant and the exact first moment of the described load on that element. Hence the
resultant force and the moment of all loads on either side of any station are exact, so the exact
statics engine's station moments and station shears are exact for the polygon. Point loads are kept
at their true abscissae (never lumped). Imposed deformations (temperature, support movement) are held
per state and produce forces only in statically indeterminate arches.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from formfind.enums import ActionKind, FillReference, LimitState, LoadDirection, Projection, TrainDirection
from formfind.model.geometry import Axis
from formfind.model.section import SectionAlong

_G2_T = np.array([0.5 - 0.5 / np.sqrt(3.0), 0.5 + 0.5 / np.sqrt(3.0)])  # 2-point Gauss on [0, 1]


# ----------------------------------------------------------------------------------- load kinds
@dataclass(frozen=True)
class FillSpread:
    """A surface load spread through a fill to the ring: ``slope`` metres horizontally per metre of depth
    on each side of it, the depth measured from ``fill``'s surface down to the extrados (vertically)."""

    slope: float
    fill: FillLoad | None = None  # the case's permanent fill; set when the case file is read


@dataclass(frozen=True)
class PointLoad:
    """A concentrated force at abscissa ``x_m`` (m): ``down_kN`` and ``right_kN`` (kN), on the axis, or
    on the road surface and spread through the fill to the ring (``spread``) as a uniform load over
    2 slope depth, centred under it (the part beyond a springing goes to the abutment)."""

    x_m: float
    down_kN: float = 0.0
    right_kN: float = 0.0
    spread: FillSpread | None = None


@dataclass(frozen=True)
class LineLoad:
    """A line load from ``from_x_m`` to ``to_x_m`` (m), linear from ``start_kN_m`` to ``end_kN_m``.

    ``direction``: DOWN (vertical, downward positive) or RIGHT (horizontal). ``projection``: the
    intensity is per metre of horizontal projection, of vertical projection, or of arc length.
    """

    from_x_m: float
    to_x_m: float
    start_kN_m: float
    end_kN_m: float
    direction: LoadDirection = LoadDirection.DOWN
    projection: Projection = Projection.HORIZONTAL


@dataclass(frozen=True)
class SelfWeight:
    """The rib's own weight, unit weight x area per metre of axis, times ``factor``."""

    factor: float = 1.0


@dataclass(frozen=True)
class NormalPressure:
    """A force per metre of axis normal to it (kN/m), positive pushing from extrados to intrados."""

    inward_kN_m: float
    from_x_m: float | None = None
    to_x_m: float | None = None


@dataclass(frozen=True)
class FillLoad:
    """Vertical load of fill above the arch, growing with depth (kN per metre horizontal).

    w(x) = width * (unit_weight * depth(x) + surcharge), depth = surface level - level of the
    reference line (extrados or axis) at x, never negative. The surface is either given as a level
    ``surface_y_m`` or as ``cover_m`` above the reference line at the crown (highest station).
    """

    unit_weight_kN_m3: float
    width_m: float = 1.0
    surface_y_m: float | None = None
    cover_m: float | None = None
    reference: FillReference = FillReference.EXTRADOS
    surcharge_kPa: float = 0.0


@dataclass(frozen=True)
class Temperature:
    """Uniform temperature change (degC) and extrados-minus-intrados difference (degC)."""

    uniform_C: float = 0.0
    difference_C: float = 0.0


@dataclass(frozen=True)
class SupportMovement:
    """Imposed movements of the springings.

    ``spread_m``: increase of the span, the right springing moving right (m). Settlements are
    downward movements (m). Rotations are anticlockwise (rad) and matter only for fixed springings.
    """

    spread_m: float = 0.0
    settlement_left_m: float = 0.0
    settlement_right_m: float = 0.0
    rotation_left_rad: float = 0.0
    rotation_right_rad: float = 0.0


@dataclass(frozen=True)
class AxleTrain:
    """A train of vertical axle loads moved across the span.

    ``offsets_m``: distance of each axle behind the leading axle (m, first is 0, non-decreasing).
    ``loads_kN``: axle loads, downward (kN). The leading axle runs from the entry springing until
    the last axle leaves the span, in steps of ``step_m``; each position is one load state.
    """

    offsets_m: tuple[float, ...]
    loads_kN: tuple[float, ...]
    step_m: float
    direction: TrainDirection = TrainDirection.BOTH
    spread: FillSpread | None = None  # the axles stand on the road and spread through the fill (`PointLoad`)

    def positions(self, span_m: float) -> list[tuple[float, str]]:
        """Leading-axle positions (m, along the direction of travel) with their direction tag."""
        total = span_m + float(self.offsets_m[-1])
        count = int(np.floor(total / self.step_m + 1e-9)) + 1
        leads = [i * self.step_m for i in range(count)]
        if leads[-1] < total - 1e-9 * span_m:
            leads.append(total)
        dirs = {
            TrainDirection.LEFT_TO_RIGHT: ["ltr"],
            TrainDirection.RIGHT_TO_LEFT: ["rtl"],
            TrainDirection.BOTH: ["ltr", "rtl"],
        }[self.direction]
        return [(lead, d) for d in dirs for lead in leads]

    def axles_at(self, lead_m: float, tag: str, span_m: float) -> list[PointLoad]:
        """Axles on the span (0 <= x <= span) for a leading-axle travel distance ``lead_m``."""
        out = []
        for off, p in zip(self.offsets_m, self.loads_kN, strict=True):
            travel = lead_m - off
            if -1e-9 * span_m <= travel <= span_m * (1 + 1e-9):
                travel = min(max(travel, 0.0), span_m)
                x = travel if tag == "ltr" else span_m - travel
                out.append(PointLoad(x_m=x, down_kN=p, spread=self.spread))
        return out


Load = PointLoad | LineLoad | SelfWeight | NormalPressure | FillLoad | Temperature | SupportMovement | AxleTrain


@dataclass(frozen=True)
class LoadCase:
    """A named set of loads acting together. A case holding an `AxleTrain` has one state per position."""

    name: str
    loads: tuple[Load, ...]
    action: ActionKind = ActionKind.VARIABLE
    description: str = ""

    @property
    def train(self) -> AxleTrain | None:
        """The case's moving train, if it has one."""
        trains = [ld for ld in self.loads if isinstance(ld, AxleTrain)]
        return trains[0] if trains else None


@dataclass(frozen=True)
class Combination:
    """A named linear combination of load cases: ``factors`` maps case name to factor."""

    name: str
    factors: tuple[tuple[str, float], ...]
    description: str = ""
    limit_state: LimitState = LimitState.ULTIMATE


# --------------------------------------------------------------------------------- station loads
@dataclass(frozen=True, eq=False)
class StationLoads:
    """Loads of one or more load states on the chord polygon of an axis.

    Attributes:
        names: unique name of each state (states,).
        groups: the load case or combination each state belongs to (states,).
        dist: distributed-load densities (states, elements, 2 ends, 2 components) in kN per unit
            element parameter, global x (right) and y (up) components.
        point_state: state index of each point load (points,).
        point_x: abscissa of each point load (m) (points,).
        point_force: global force of each point load (kN) (points, 2), x right, y up.
        temperature_uniform_C: uniform temperature change per state (states,).
        temperature_difference_C: extrados minus intrados temperature per state (states,).
        support_movement: imposed (ux right m, uy up m, rotation anticlockwise rad) of the left and
            right springing per state (states, 2, 3).
    """

    names: tuple[str, ...]
    groups: tuple[str, ...]
    dist: np.ndarray
    point_state: np.ndarray
    point_x: np.ndarray
    point_force: np.ndarray
    temperature_uniform_C: np.ndarray
    temperature_difference_C: np.ndarray
    support_movement: np.ndarray

    @property
    def count(self) -> int:
        """Number of load states."""
        return len(self.names)

    def total_force(self) -> np.ndarray:
        """Resultant applied force of each state (states, 2) in kN, global x right, y up."""
        total = 0.5 * self.dist.sum(axis=(1, 2))
        np.add.at(total, self.point_state, self.point_force)
        return total

    def select(self, states: list[int]) -> StationLoads:
        """The given states, in the given order (point loads follow their states)."""
        idx = np.asarray(states, dtype=int)
        remap = -np.ones(self.count, dtype=int)
        remap[idx] = np.arange(idx.size)
        keep = remap[self.point_state] >= 0
        return StationLoads(
            names=tuple(self.names[i] for i in idx),
            groups=tuple(self.groups[i] for i in idx),
            dist=self.dist[idx],
            point_state=remap[self.point_state[keep]],
            point_x=self.point_x[keep],
            point_force=self.point_force[keep],
            temperature_uniform_C=self.temperature_uniform_C[idx],
            temperature_difference_C=self.temperature_difference_C[idx],
            support_movement=self.support_movement[idx],
        )

    @staticmethod
    def from_densities(dist: np.ndarray, group: str = "batch") -> StationLoads:
        """States holding only the given distributed densities (states, elements, 2, 2)."""
        count = dist.shape[0]
        return StationLoads(
            names=tuple(f"{group}-{i}" for i in range(count)),
            groups=(group,) * count,
            dist=dist,
            point_state=np.zeros(0, dtype=int),
            point_x=np.zeros(0),
            point_force=np.zeros((0, 2)),
            temperature_uniform_C=np.zeros(count),
            temperature_difference_C=np.zeros(count),
            support_movement=np.zeros((count, 2, 3)),
        )

    @staticmethod
    def empty(element_count: int) -> StationLoads:
        """A set of zero states for an axis with ``element_count`` elements."""
        return StationLoads(
            names=(),
            groups=(),
            dist=np.zeros((0, element_count, 2, 2)),
            point_state=np.zeros(0, dtype=int),
            point_x=np.zeros(0),
            point_force=np.zeros((0, 2)),
            temperature_uniform_C=np.zeros(0),
            temperature_difference_C=np.zeros(0),
            support_movement=np.zeros((0, 2, 3)),
        )

    @staticmethod
    def concatenate(parts: list[StationLoads], element_count: int) -> StationLoads:
        """All the states of ``parts``, in order."""
        if not parts:
            return StationLoads.empty(element_count)
        offsets = np.cumsum([0] + [p.count for p in parts[:-1]])
        return StationLoads(
            names=tuple(n for p in parts for n in p.names),
            groups=tuple(g for p in parts for g in p.groups),
            dist=np.concatenate([p.dist for p in parts]),
            point_state=np.concatenate([p.point_state + o for p, o in zip(parts, offsets, strict=True)]),
            point_x=np.concatenate([p.point_x for p in parts]),
            point_force=np.concatenate([p.point_force for p in parts]),
            temperature_uniform_C=np.concatenate([p.temperature_uniform_C for p in parts]),
            temperature_difference_C=np.concatenate([p.temperature_difference_C for p in parts]),
            support_movement=np.concatenate([p.support_movement for p in parts]),
        )

    def combine(self, name: str, terms: list[tuple[int, float]]) -> StationLoads:
        """A combination of whole groups: ``terms`` lists (first-state index, factor) per case.

        Each term names a group by the index range it occupies; a group with several states (a
        moving train) makes the combination take one state per position. At most one such group.
        """
        spans = self._group_spans()
        multi = [(g, f) for g, f in terms if len(spans[g]) > 1]
        if len(multi) > 1:
            raise ValueError(f"combination {name!r} holds more than one moving-load case")
        count = len(spans[multi[0][0]]) if multi else 1
        dist = np.zeros((count,) + self.dist.shape[1:])
        t_u = np.zeros(count)
        t_d = np.zeros(count)
        sup = np.zeros((count, 2, 3))
        ps, px, pf = [], [], []
        for g, f in terms:
            states = spans[g]
            idx = states if len(states) > 1 else [states[0]] * count
            dist += f * self.dist[idx]
            t_u += f * self.temperature_uniform_C[idx]
            t_d += f * self.temperature_difference_C[idx]
            sup += f * self.support_movement[idx]
            if len(states) > 1:  # a moving train: state s of the group becomes combination state k
                position = -np.ones(self.count, dtype=int)
                position[states] = np.arange(len(states))
                sel = position[self.point_state] >= 0
                ps.append(position[self.point_state[sel]])
                px.append(self.point_x[sel])
                pf.append(f * self.point_force[sel])
            else:  # a single-state case: its point loads repeat in every combination state
                sel = self.point_state == states[0]
                ps.append(np.repeat(np.arange(count), int(sel.sum())))
                px.append(np.tile(self.point_x[sel], count))
                pf.append(np.tile(f * self.point_force[sel], (count, 1)))
        if multi:
            base = self.names[spans[multi[0][0]][0]].split("@", 1)[0]
            names = tuple(name + "@" + self.names[s][len(base) + 1 :] for s in spans[multi[0][0]])
        else:
            names = (name,)
        return StationLoads(
            names=names,
            groups=(name,) * count,
            dist=dist,
            point_state=np.concatenate(ps).astype(int) if ps else np.zeros(0, dtype=int),
            point_x=np.concatenate(px) if px else np.zeros(0),
            point_force=np.concatenate(pf) if pf else np.zeros((0, 2)),
            temperature_uniform_C=t_u,
            temperature_difference_C=t_d,
            support_movement=sup,
        )

    def group_states(self, group: str) -> list[int]:
        """Indices of the states that belong to ``group``."""
        return [i for i, g in enumerate(self.groups) if g == group]

    def _group_spans(self) -> dict[int, list[int]]:
        spans: dict[int, list[int]] = {}
        for i, g in enumerate(self.groups):
            first = self.groups.index(g)
            spans.setdefault(first, []).append(i)
        return spans


def _moment_density(total: np.ndarray, first_moment: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Linear density ends (f_a, f_b) with resultant ``total`` and first moment in t ``first_moment``."""
    return 4.0 * total - 6.0 * first_moment, 6.0 * first_moment - 2.0 * total


def _ranged_density(
    axis: Axis, a: float, b: float, wa: float, wb: float, per_dx: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Densities (f_a, f_b) per element of an intensity linear in x from (a, wa) to (b, wb).

    ``per_dx`` (elements,) converts the intensity to force per metre of x on each chord element.
    Exact resultant and first moment on every element, including partly loaded ones.
    """
    x0, x1 = axis.x[:-1], axis.x[1:]
    h = x1 - x0
    p = np.clip(np.maximum(x0, a), x0, x1)
    q = np.clip(np.minimum(x1, b), x0, x1)
    length = np.maximum(q - p, 0.0)
    xs = p[None, :] + _G2_T[:, None] * length[None, :]  # 2-point Gauss abscissae, exact for cubics
    slope = (wb - wa) / (b - a) if b > a else 0.0
    w = wa + slope * (xs - a)
    t = (xs - x0[None, :]) / h[None, :]
    total = 0.5 * length * np.sum(w, axis=0) * per_dx
    first = 0.5 * length * np.sum(w * t, axis=0) * per_dx
    return _moment_density(total, first)


def _distributed(load: Load, axis: Axis, section: SectionAlong) -> np.ndarray:
    """Density (elements, 2 ends, 2 components) of one distributed load, global kN per unit t."""
    dx = np.diff(axis.x)
    dy = np.diff(axis.y)
    chord = np.hypot(dx, dy)
    out = np.zeros((dx.size, 2, 2))
    span = axis.span_m
    if isinstance(load, LineLoad):
        per_dx = {
            Projection.HORIZONTAL: np.ones_like(dx),
            Projection.VERTICAL: np.abs(dy) / dx,
            Projection.ARC: chord / dx,
        }[load.projection]
        fa, fb = _ranged_density(axis, load.from_x_m, load.to_x_m, load.start_kN_m, load.end_kN_m, per_dx)
        comp, sign = (1, -1.0) if load.direction is LoadDirection.DOWN else (0, 1.0)
        out[:, 0, comp], out[:, 1, comp] = sign * fa, sign * fb
    elif isinstance(load, SelfWeight):
        w = load.factor * section.weight_kN_m
        out[:, 0, 1] = -w[:-1] * chord
        out[:, 1, 1] = -w[1:] * chord
    elif isinstance(load, NormalPressure):
        a = 0.0 if load.from_x_m is None else load.from_x_m
        b = span if load.to_x_m is None else load.to_x_m
        fa, fb = _ranged_density(axis, a, b, load.inward_kN_m, load.inward_kN_m, chord / dx)
        # -n * chord = (dy, -dx): inward pressure on the element, per unit t
        ux, uy = dy / chord, -dx / chord
        out[:, 0, 0], out[:, 1, 0] = fa * ux, fb * ux
        out[:, 0, 1], out[:, 1, 1] = fa * uy, fb * uy
    elif isinstance(load, FillLoad):
        w = fill_intensity(load, axis, section)
        out[:, 0, 1] = -w[:-1] * dx
        out[:, 1, 1] = -w[1:] * dx
    return out


def case_distributed(case: LoadCase, axis: Axis, section: SectionAlong) -> np.ndarray:
    """The distributed-load densities of one load case on ``axis`` (elements, 2 ends, 2 components)."""
    total = np.zeros((axis.count - 1, 2, 2))
    for load in case.loads:
        if isinstance(load, LineLoad | SelfWeight | NormalPressure | FillLoad):
            total += _distributed(load, axis, section)
    return total


def fill_intensity(load: FillLoad, axis: Axis, section: SectionAlong) -> np.ndarray:
    """Fill load per metre of horizontal projection at every station (kN/m), downward."""
    level = _fill_level(load, axis, section)
    surface = load.surface_y_m if load.surface_y_m is not None else float(np.max(level)) + float(load.cover_m or 0.0)
    depth = np.maximum(surface - level, 0.0)
    return load.width_m * (load.unit_weight_kN_m3 * depth + load.surcharge_kPa)


def moves_with_shape(load: Load) -> bool:
    """True if the load's densities on the elements change when the station ordinates move (self-weight
    per arc length, normal pressure, fill, line loads per vertical projection or per arc length)."""
    if isinstance(load, SelfWeight | NormalPressure | FillLoad):
        return True
    return isinstance(load, LineLoad) and load.projection is not Projection.HORIZONTAL


DERIVATIVE_STEP = 1e-5  # central-difference step of `density_derivative`, relative to the span


def density_derivative(case: LoadCase, axis: Axis, section: SectionAlong):
    """d(densities)/dy of one load case: a sparse matrix (elements x 4, stations), or None if its loads
    do not move with the shape.

    Row 4 e + 2 end + component is the density of element e at its end a (0) or b (1), component x (0)
    or y (1), as in `StationLoads.dist`; column j is the ordinate of station j. The tangent angles and
    the section stay as they are (they follow the smooth axis, which the engines re-fit after a move).
    Each element's densities depend on its own two stations, so two coloured central differences (even
    stations, then odd ones) give every entry; the springings stay where they are. A fill surface set
    by cover above the highest point moves with that point: its column is added exactly.
    """
    import scipy.sparse as sp

    moving = [ld for ld in case.loads if moves_with_shape(ld)]
    if not moving:
        return None
    n = axis.count
    elements = n - 1
    eps = DERIVATIVE_STEP * axis.span_m
    frozen: list[Load] = []
    surface_columns: list[tuple[int, np.ndarray]] = []
    for ld in moving:
        if isinstance(ld, FillLoad) and ld.surface_y_m is None:
            level = _fill_level(ld, axis, section)
            top = int(np.argmax(level))
            surface = float(level[top]) + float(ld.cover_m or 0.0)
            frozen.append(replace(ld, surface_y_m=surface, cover_m=None))
            # d w / d surface at the stations, where the fill has depth; its element densities
            rate = ld.width_m * ld.unit_weight_kN_m3 * (surface - level > 0)
            dens = np.zeros((elements, 2, 2))
            dens[:, 0, 1] = -rate[:-1] * np.diff(axis.x)
            dens[:, 1, 1] = -rate[1:] * np.diff(axis.x)
            surface_columns.append((top, dens.reshape(-1)))
        else:
            frozen.append(ld)
    rows, cols, vals = [], [], []
    index = np.arange(elements)
    for parity in (0, 1):
        mask = np.zeros(n)
        mask[1:-1][(np.arange(1, n - 1) % 2) == parity] = 1.0
        diff = np.zeros((elements, 2, 2))
        for sign in (1.0, -1.0):
            moved = Axis(axis.x, axis.y + sign * eps * mask, axis.theta)
            for ld in frozen:
                diff += sign * _distributed(ld, moved, section)
        diff /= 2.0 * eps
        node = np.where(index % 2 == parity, index, index + 1)  # the element's perturbed end
        keep = mask[node] > 0
        e = index[keep]
        rows.append((4 * e[:, None] + np.arange(4)[None, :]).ravel())
        cols.append(np.repeat(node[keep], 4))
        vals.append(diff[keep].reshape(-1))
    for top, dens in surface_columns:
        if 0 < top < n - 1:
            rows.append(np.arange(4 * elements))
            cols.append(np.full(4 * elements, top))
            vals.append(dens)
    return sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                         shape=(4 * elements, n))


def combine_density_rates(case_rates: list, factors: np.ndarray):
    """The density rates of load states made of load cases: sparse (K x elements x 4, stations).

    ``case_rates``: one `density_derivative` per load case (None where nothing moves); ``factors``
    (K, cases): the factor of each case in each state. Returns None when no state has a moving load.
    """
    import scipy.sparse as sp

    if all(r is None for r in case_rates):
        return None
    shape = next(r.shape for r in case_rates if r is not None)
    blocks = []
    for row in factors:
        block = sp.csr_matrix(shape)
        for f, rate in zip(row, case_rates, strict=True):
            if rate is not None and f:
                block = block + f * rate
        blocks.append(block)
    return sp.vstack(blocks, format="csr")


def _fill_level(load: FillLoad, axis: Axis, section: SectionAlong) -> np.ndarray:
    """Level (m) of the line the fill depth is measured to: the extrados measured vertically, or the axis."""
    if load.reference is FillReference.EXTRADOS:
        cos = np.maximum(np.abs(np.cos(axis.theta)), 1e-6)
        return axis.y + 0.5 * section.depth_m / cos
    return axis.y.copy()


def fill_surface(load: FillLoad, axis: Axis, section: SectionAlong) -> float:
    """Level of the fill's surface (m): given, or its cover above the highest point of its reference line."""
    if load.surface_y_m is not None:
        return float(load.surface_y_m)
    return float(np.max(_fill_level(load, axis, section))) + float(load.cover_m or 0.0)


def spread_density(point: PointLoad, axis: Axis, section: SectionAlong) -> np.ndarray | None:
    """Densities (elements, 2, 2) of a point load spread through the fill (`PointLoad`), or None where it
    reaches the ring as a point (no spread, or no fill above the extrados under it)."""
    spread = point.spread
    if spread is None or spread.fill is None:
        return None
    cos = np.maximum(np.abs(np.cos(axis.theta)), 1e-6)
    extrados = axis.y + 0.5 * section.depth_m / cos
    depth = fill_surface(spread.fill, axis, section) - float(np.interp(point.x_m, axis.x, extrados))
    width = 2.0 * spread.slope * depth
    if not width > 1e-9 * axis.span_m:
        return None
    a, b = point.x_m - 0.5 * width, point.x_m + 0.5 * width
    lo, hi = max(a, 0.0), min(b, axis.span_m)
    out = np.zeros((axis.count - 1, 2, 2))
    if not hi > lo:
        return out
    ones = np.ones(axis.count - 1)
    for comp, force in ((1, -point.down_kN), (0, point.right_kN)):
        if force:
            fa, fb = _ranged_density(axis, lo, hi, force / width, force / width, ones)
            out[:, 0, comp] += fa
            out[:, 1, comp] += fb
    return out


def case_station_loads(case: LoadCase, axis: Axis, section: SectionAlong) -> StationLoads:
    """The states of one load case on ``axis``: one state, or one per position of its axle train."""
    elements = axis.count - 1
    dist = np.zeros((elements, 2, 2))
    fixed_points: list[PointLoad] = []
    t_u = t_d = 0.0
    sup = np.zeros((2, 3))
    for load in case.loads:
        if isinstance(load, PointLoad):
            fixed_points.append(load)
        elif isinstance(load, Temperature):
            t_u += load.uniform_C
            t_d += load.difference_C
        elif isinstance(load, SupportMovement):
            sup[0] += [0.0, -load.settlement_left_m, load.rotation_left_rad]
            sup[1] += [load.spread_m, -load.settlement_right_m, load.rotation_right_rad]
        elif isinstance(load, AxleTrain):
            continue
        else:
            dist += _distributed(load, axis, section)
    train = case.train
    if train is None:
        states: list[tuple[str, list[PointLoad]]] = [(case.name, fixed_points)]
    else:
        states = [
            (f"{case.name}@{tag}={lead:.3f}m", fixed_points + train.axles_at(lead, tag, axis.span_m))
            for lead, tag in train.positions(axis.span_m)
        ]
    count = len(states)
    ps, px, pf = [], [], []
    per_state = np.broadcast_to(dist, (count,) + dist.shape).copy()
    for k, (_, points) in enumerate(states):
        for pt in points:
            spread = spread_density(pt, axis, section)
            if spread is not None:
                per_state[k] += spread
                continue
            ps.append(k)
            px.append(pt.x_m)
            pf.append((pt.right_kN, -pt.down_kN))
    return StationLoads(
        names=tuple(s[0] for s in states),
        groups=(case.name,) * count,
        dist=per_state,
        point_state=np.asarray(ps, dtype=int),
        point_x=np.asarray(px, dtype=float),
        point_force=np.asarray(pf, dtype=float).reshape(-1, 2),
        temperature_uniform_C=np.full(count, t_u),
        temperature_difference_C=np.full(count, t_d),
        support_movement=np.broadcast_to(sup, (count, 2, 3)).copy(),
    )


@dataclass(frozen=True, eq=False)
class LoadSet:
    """Station loads of all cases and all combinations of a case file, on one axis."""

    cases: StationLoads
    combinations: StationLoads = field(repr=False)


def build_load_set(
    cases: tuple[LoadCase, ...],
    combinations: tuple[Combination, ...],
    axis: Axis,
    section: SectionAlong,
) -> LoadSet:
    """Station loads for every case (expanded over train positions) and every combination."""
    elements = axis.count - 1
    case_loads = StationLoads.concatenate([case_station_loads(c, axis, section) for c in cases], elements)
    first_state = {g: case_loads.groups.index(g) for g in dict.fromkeys(case_loads.groups)}
    combos = [
        case_loads.combine(combo.name, [(first_state[c], f) for c, f in combo.factors])
        for combo in combinations
    ]
    return LoadSet(cases=case_loads, combinations=StationLoads.concatenate(combos, elements))


def fill_pressure_loads(load: FillLoad, axis: Axis, section: SectionAlong, left_coefficient: float,
                        right_coefficient: float, crown_x_m: float) -> StationLoads:
    """The horizontal pressure of a fill on the extrados as one load state (kN), pushing the ring inwards.

    At a depth z below the fill surface the pressure is K (unit weight z + surcharge) per square metre,
    times the fill's width; on each element it acts on the vertical projection of the extrados face (the
    axis offset by half the depth along the normal), with K ``left_coefficient`` left of ``crown_x_m``
    (pushing right) and ``right_coefficient`` right of it (pushing left). The resultant is applied on the
    axis. A surface given by cover sits that far above the highest point of the measuring line, as for
    the fill's weight.
    """
    extrados = axis.extrados(section.depth_m)[:, 1]
    level = _fill_level(load, axis, section)
    surface = load.surface_y_m if load.surface_y_m is not None else float(np.max(level)) + float(load.cover_m or 0.0)
    mid = 0.5 * (extrados[:-1] + extrados[1:])
    depth = np.maximum(surface - mid, 0.0)
    rise = np.diff(extrados)  # vertical projection of each element's extrados (m), signed
    side_x = 0.5 * (axis.x[:-1] + axis.x[1:])
    coefficient = np.where(side_x < crown_x_m, left_coefficient, right_coefficient)
    direction = np.where(side_x < crown_x_m, 1.0, -1.0)  # inwards
    wet = surface > np.minimum(extrados[:-1], extrados[1:])  # some of the element lies below the surface
    # the depth varies linearly along a straight element: the midpoint rule is exact where it is all buried;
    # an element crossing the surface takes the buried part only
    top = np.maximum(extrados[:-1], extrados[1:])
    bottom = np.minimum(extrados[:-1], extrados[1:])
    buried = np.clip(surface - bottom, 0.0, None)
    height = np.where(top > surface, buried, np.abs(rise))
    mean_depth = np.where(top > surface, 0.5 * buried, depth)
    force = np.where(wet, coefficient * load.width_m * (load.unit_weight_kN_m3 * mean_depth + load.surcharge_kPa)
                     * height, 0.0)
    dist = np.zeros((1, axis.count - 1, 2, 2))
    dist[0, :, 0, 0] = dist[0, :, 1, 0] = direction * force  # uniform along the element: density = force
    return StationLoads.from_densities(dist, group="fill pressure")
