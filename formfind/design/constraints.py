"""The limits of form finding as linear constraints on the station ordinates, from `[find]`.

Equalities: the springings keep their levels; a fixed rise fixes the crown (the hinge of a
three-hinged arch, else the station nearest midspan); a symmetric axis pairs its stations. Named
blocks of inequalities: the rise's upper bound at every interior station and its lower bound at the
crown, clearance lines under the intrados and site lines over the extrados (both measured vertically:
half the depth over cos(theta) of the current axis, which the caller refreshes), slope and curvature
bounds (second differences), and concavity (d2y/dx2 <= 0). The matrices are fixed for a whole search;
only the right-hand sides of clearance and site lines change with the axis.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from formfind.design.program import Structure, second_differences
from formfind.enums import Objective
from formfind.errors import FormFindingError
from formfind.model.case import Case
from formfind.model.geometry import Axis
from formfind.model.section import Section


@dataclass(frozen=True, eq=False)
class Limits:
    """The constraint matrices of one search and the data of their right-hand sides.

    Attributes:
        structure: the program's shape (objective, sizes, E and the named blocks).
        q_static: right-hand sides that do not change with the axis, by block name.
        g: the equalities' right-hand side.
        crown: the crown station (the hinge of a three-hinged arch).
        chord: the springing chord's ordinate at every station, m.
        clearance_rows, clearance_level: stations under a clearance line and its level there, m.
        envelope_rows, envelope_level: stations under a site line and its level there, m.
        fixed_rise: whether the crown's ordinate is fixed.
        coupled: whether a constraint couples stations (symmetry, slope, curvature, free rise).
        symmetric: whether the axis is kept symmetric about midspan.
    """

    structure: Structure
    q_static: dict[str, np.ndarray]
    g: np.ndarray
    crown: int
    chord: np.ndarray
    clearance_rows: np.ndarray
    clearance_level: np.ndarray
    envelope_rows: np.ndarray
    envelope_level: np.ndarray
    fixed_rise: bool
    coupled: bool
    symmetric: bool = False

    @property
    def free(self) -> np.ndarray:
        """(n,) bool: the ordinates no equality fixes on its own (symmetric pairs stay free)."""
        eq = self.structure.equality.tocsr()
        fixed = np.zeros(self.structure.stations, dtype=bool)
        for r in range(eq.shape[0]):
            cols = eq.indices[eq.indptr[r]:eq.indptr[r + 1]]
            if cols.size == 1:
                fixed[cols[0]] = True
        fixed[[0, -1]] = True
        return ~fixed

    def rhs(self, half_depth: np.ndarray) -> tuple[np.ndarray, ...]:
        """The blocks' right-hand sides for the vertical half-depth (n,) of the current axis, m."""
        out = []
        for name, _ in self.structure.blocks:
            if name == "clearance":
                out.append(-(self.clearance_level + half_depth[self.clearance_rows]))
            elif name == "envelope":
                out.append(self.envelope_level - half_depth[self.envelope_rows])
            else:
                out.append(self.q_static[name])
        return tuple(out)


def _interp_line(points: tuple[tuple[float, float], ...], x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    px = np.array([p[0] for p in points])
    py = np.array([p[1] for p in points])
    inside = (x >= px[0] - 1e-9) & (x <= px[-1] + 1e-9)
    return inside, np.interp(x, px, py)


def crown_station(case: Case, x: np.ndarray) -> int:
    """The hinge station of a three-hinged arch, else the station nearest midspan."""
    span = x[-1] - x[0]
    hinge = case.supports.hinge_at(float(x[-1] - x[0]))
    if hinge is not None:
        return int(np.argmin(np.abs(x - (x[0] + hinge))))
    return int(np.argmin(np.abs(x - (x[0] + 0.5 * span))))


def build_limits(case: Case, x: np.ndarray, y0: np.ndarray, states: int, symmetric: bool | None = None,
                 mirrored: bool = False) -> Limits:
    """The constraints of ``case``'s `[find]` on stations ``x`` with springings at ``y0``'s ends;
    ``symmetric`` (None: the case's own setting, False if that is automatic) pairs the stations, and
    ``mirrored`` says the problem is its own mirror image, so the pairing couples nothing the
    per-station method would not give anyway."""
    f = case.find
    symmetric = bool(f.symmetric) if symmetric is None else symmetric
    n = x.size
    span = x[-1] - x[0]
    chord = y0[0] + (y0[-1] - y0[0]) * (x - x[0]) / span
    crown = crown_station(case, x)
    fixed_rise = abs(f.rise_max_m - f.rise_min_m) <= 1e-12 * span
    eye = sp.identity(n, format="csr")
    held = [0, n - 1] + ([crown] if fixed_rise else [])  # springings, and the crown of a fixed rise
    g: list[float] = [y0[0], y0[-1]] + ([chord[crown] + f.rise_max_m] if fixed_rise else [])
    rows_eq = [sp.csr_matrix((np.ones(len(held)), (np.arange(len(held)), held)), shape=(len(held), n))]
    if symmetric:
        if not np.allclose(x + x[::-1], x[0] + x[-1], atol=1e-9 * span):
            raise FormFindingError("a symmetric axis needs stations placed symmetrically about midspan")
        twins = np.arange(1, n // 2)  # y_i - y_(n-1-i) = 0
        row = np.arange(twins.size)
        rows_eq.append(sp.csr_matrix((np.concatenate([np.ones(twins.size), -np.ones(twins.size)]),
                                      (np.concatenate([row, row]), np.concatenate([twins, n - 1 - twins]))),
                                     shape=(twins.size, n)))
        g.extend([0.0] * twins.size)
    blocks: list[tuple[str, sp.csr_matrix]] = []
    q: dict[str, np.ndarray] = {}
    interior = np.arange(1, n - 1)
    blocks.append(("rise_max", eye[interior]))
    q["rise_max"] = chord[interior] + f.rise_max_m
    if not fixed_rise:
        blocks.append(("rise_min", -eye[[crown]]))
        q["rise_min"] = -np.array([chord[crown] + f.rise_min_m])
    clearance_rows = envelope_rows = np.zeros(0, dtype=int)
    clearance_level = envelope_level = np.zeros(0)
    if f.clearance:
        inside, level = _interp_line(f.clearance, x)
        clearance_rows = np.flatnonzero(inside)
        clearance_level = level[clearance_rows]
        blocks.append(("clearance", -eye[clearance_rows]))
    if f.envelope:
        inside, level = _interp_line(f.envelope, x)
        envelope_rows = np.flatnonzero(inside)
        envelope_level = level[envelope_rows]
        blocks.append(("envelope", eye[envelope_rows]))
    dx = np.diff(x)
    if f.max_slope is not None:
        d1 = sp.diags([-np.ones(n - 1), np.ones(n - 1)], [0, 1], shape=(n - 1, n)).tocsr()
        blocks.append(("slope", sp.vstack([d1, -d1]).tocsr()))
        q["slope"] = np.concatenate([f.max_slope * dx, f.max_slope * dx])
    d2 = second_differences(x)
    if f.concave:
        blocks.append(("concave", d2))
        q["concave"] = np.zeros(n - 2)
    if f.max_curvature_per_m is not None:
        blocks.append(("curvature", sp.vstack([d2, -d2]).tocsr()))
        q["curvature"] = np.full(2 * (n - 2), f.max_curvature_per_m)
    coupled = (symmetric and not mirrored) or f.max_slope is not None or f.max_curvature_per_m is not None or not fixed_rise
    structure = Structure(f.objective, n, states, sp.vstack(rows_eq, format="csr"), tuple(blocks), f.solver)
    return Limits(structure, q, np.array(g), crown, chord, clearance_rows, clearance_level, envelope_rows,
                  envelope_level, fixed_rise, coupled, symmetric)


def admissible(limits: Limits, q: tuple[np.ndarray, ...], y: np.ndarray) -> bool:
    """True if ordinates ``y`` meet every equality and inequality block of ``limits`` with right-hand
    sides ``q`` (to 1e-9 m)."""
    st = limits.structure
    if st.equality.shape[0] and np.abs(st.equality @ y - limits.g).max() > 1e-9:
        return False
    return all(float(np.max(block @ y - qq, initial=-np.inf)) <= 1e-9
               for (_, block), qq in zip(st.blocks, q, strict=True))


def half_depth(section: Section, axis: Axis) -> np.ndarray:
    """Half the rib depth measured vertically at each station (m)."""
    return 0.5 * section.at(axis).depth_m / np.maximum(np.abs(np.cos(axis.theta)), 1e-6)


def station_bounds(limits: Limits, half: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per-station bounds (lower, upper), m, from the rise, clearance and site lines and the fixed
    ordinates, for the uncoupled per-station method.

    Raises:
        FormFindingError: if a station's bounds cross (the message names the conflict).
    """
    n = x.size
    span = x[-1] - x[0]
    lower = np.full(n, -np.inf)
    upper = np.full(n, np.inf)
    upper[1:-1] = limits.q_static["rise_max"]
    lower[1:-1] = limits.chord[1:-1] - 2.0 * span
    rows = limits.clearance_rows
    if rows.size:
        lower[rows] = np.maximum(lower[rows], limits.clearance_level + half[rows])
    rows = limits.envelope_rows
    if rows.size:
        upper[rows] = np.minimum(upper[rows], limits.envelope_level - half[rows])
    eq = limits.structure.equality.tocsr()
    for r in range(eq.shape[0]):
        if eq.indptr[r + 1] - eq.indptr[r] != 1:
            continue  # a symmetry pair, not a fixed ordinate
        i = int(eq.indices[eq.indptr[r]])
        lower[i] = upper[i] = limits.g[r] / eq.data[eq.indptr[r]]
    if np.any(lower > upper + 1e-12):
        bad = int(np.flatnonzero(lower > upper + 1e-12)[0])
        raise FormFindingError(
            f"constraints conflict at x = {x[bad]:.3f} m: the clearance line needs y >= {lower[bad]:.3f} m but the "
            f"rise or site envelope allows at most {upper[bad]:.3f} m"
        )
    return lower, upper


def infeasible_message(limits: Limits, q: tuple[np.ndarray, ...], status: str) -> str:
    """Name the smallest set of constraint blocks that cannot hold together with the equalities."""
    if status != "infeasible":
        return f"form finding: the solver stopped with status {status!r}"
    names = [name for name, _ in limits.structure.blocks]
    for size in range(1, len(names) + 1):
        for subset in itertools.combinations(names, size):
            if not _feasible(limits, q, subset):
                listed = " and ".join(subset)
                return (f"form finding: the constraints conflict: {listed} cannot hold together with the "
                        "springings and the crown (check rise limits, clearance and site lines, slope bounds)")
    return "form finding: the constraints conflict (infeasible program)"


def _feasible(limits: Limits, q: tuple[np.ndarray, ...], subset: tuple[str, ...]) -> bool:
    from formfind.design.convex import ConvexProblem, solve_convex
    from formfind.enums import Solver

    st = limits.structure
    n = st.stations
    blocks = [block for (name, block) in st.blocks if name in subset]
    rhs = [qq for (name, _), qq in zip(st.blocks, q, strict=True) if name in subset]
    problem = ConvexProblem(np.zeros(n), sp.vstack(blocks, format="csr") if blocks else sp.csr_matrix((0, n)),
                            np.concatenate(rhs) if rhs else np.zeros(0), st.equality, limits.g,
                            np.full(n, -np.inf), np.full(n, np.inf))
    return solve_convex(problem, Solver.HIGHS).solved


def objective_needs_loop(objective: Objective) -> bool:
    """min_depth weighs the rows by |N|, which moves with the shape: always the sequential method."""
    return objective is Objective.MIN_DEPTH
