"""The convex program of form finding, assembled as sparse arrays and solved directly.

Variables: the ordinates y (m) at the stations and, for the epigraph objectives, one scalar s. The
moments of the governing states are affine in y through a `MomentModel`
(`formfind.analysis.sensitivity`): exactly M = M0 - h (y - y0) for a three-hinged arch with its hinge
held under loads of fixed magnitude, and the exact engine's linearisation otherwise (the sequential
step of `formfind.design.sequential`). The linearisation enters through running-sum variables (the
change of the loads' running force and moment at every cut, and of the left reaction, per state),
so the program has O(states x stations) non-zeros, never a dense Jacobian.

Objectives:

    minimax, offset, min_depth:  minimise s  subject to  |M[k, i]| <= c[k, i] s
        minimax   c = 1                 s = peak |M| (kNm)
        offset    c = h[k, i]           s = peak vertical thrust-line offset |M| / H (m)
        min_depth c = beta |N[k, i]| / 2  s = rib depth (m): |M / N| <= beta depth / 2
    rms:  minimise sum_k sum_i w[i] M[k, i]^2   (w: tributary length along the axis, m)

and linear constraints on y: equalities E y = g (springings, hinge, symmetry), named blocks of
inequalities G y <= q (rise, clearance, site envelope, slope, curvature) and bounds on y (the trust
region of the sequential method).

Epigraph programs are solved by constraint generation: from the few states extreme at each station
at the start, adding every (state, station) row the solution violates until none is (the optimum is
that of the full program; rows never added have zero multipliers). A tie-break of weight 1e-6 also
minimises each station's own peak, so stations that do not govern take definite values. The dual
bound is the Lagrangian dual value of the program without the tie-break at the solver's multipliers
(rescaled to meet the stationarity in s exactly, which keeps them dual feasible), with its
stationarity residual: a certificate that no admissible axis does better than the bound, to within
the residual. Where the optimum is still not unique, a second stage picks, among the axes within
``SELECT_SLACK`` of the optimum, the smoothest (least integral of the squared second derivative).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np
import scipy.sparse as sp

from formfind.analysis.sensitivity import FX, FY, MO, MomentModel
from formfind.design.convex import ConvexProblem, ConvexSolution, lagrangian_bound, solve_convex
from formfind.enums import Objective, Solver, SolveStatus

INITIAL_STATES = 2  # per station and side, the most extreme states start the constraint generation
SELECT_SLACK = 1e-7  # stage two may give up this fraction of the optimum to pick the smoothest axis
TIE_BREAK = 1e-6  # weight of the per-station peaks against the governing peak (lexicographic tie-break)
MAX_ROUNDS = 50
NEAREST_SLACK = 1e-4  # the nearest axis's second stage may give up this fraction of the largest deviation


@dataclass(frozen=True)
class Structure:
    """What fixes a program's shape: sizes and constraint matrices.

    Attributes:
        objective: the objective.
        stations, states: n and K.
        equality: E (rows, n) sparse.
        blocks: named inequality blocks, each (name, G (rows, n) sparse).
        solver: the solver (`Solver.AUTO`: HiGHS for LPs, Clarabel for QPs).
    """

    objective: Objective
    stations: int
    states: int
    equality: sp.csr_matrix
    blocks: tuple[tuple[str, sp.csr_matrix], ...]
    solver: Solver

    @cached_property
    def stacked_blocks(self) -> sp.csr_matrix:
        """Every inequality block, one under the other (rows, n)."""
        if not self.blocks:
            return sp.csr_matrix((0, self.stations))
        return sp.vstack([block for _, block in self.blocks], format="csr")


@dataclass(frozen=True, eq=False)
class ProgramData:
    """The numbers of one solve.

    Attributes:
        model: the moments of the K governing states as affine functions of y.
        c: (K, n) epigraph weights (see the module docstring); ignored for rms.
        w: (n,) rms weights (tributary lengths, m); ignored otherwise.
        g: equality right-hand side (rows,).
        q: one right-hand side per inequality block.
        lower, upper: (n,) bounds on y, m (-inf / inf where there are none).
    """

    model: MomentModel
    c: np.ndarray
    w: np.ndarray
    g: np.ndarray
    q: tuple[np.ndarray, ...]
    lower: np.ndarray
    upper: np.ndarray

    def moments(self, y: np.ndarray) -> np.ndarray:
        """M (K, n) of the linear model at ordinates y."""
        return self.model.moments(y)


@dataclass(frozen=True, eq=False)
class ProgramSolution:
    """The result of one solve.

    Attributes:
        status: how the (last) solve ended.
        y: ordinates (n,), m; None unless a solution is present.
        value: the objective value (kNm, m, or kNm2 m for the rms sum) or None.
        dual_bound: the Lagrangian dual value, same unit; None if unavailable.
        stationarity: residual of the dual's stationarity conditions (relative).
        epigraph_duals: (2, K, n) multipliers of the upper and lower epigraph rows (rescaled).
        block_duals: one multiplier array per inequality block.
        block_slacks: one slack array (q - G y) per inequality block.
        bound_duals: (n,) multipliers of the bounds on y (upper minus lower).
        solve_time_s: wall time of the solves, s.
        solver: the solver's name.
        rows_used: epigraph rows in the last program.
        basis: the LP solver's final basis, to warm-start a program of the same shape (opaque).
    """

    status: SolveStatus
    y: np.ndarray | None
    value: float | None
    dual_bound: float | None
    stationarity: float
    epigraph_duals: np.ndarray | None
    block_duals: tuple[np.ndarray, ...]
    block_slacks: tuple[np.ndarray, ...]
    bound_duals: np.ndarray | None
    solve_time_s: float
    solver: str
    rows_used: int = field(default=0)
    basis: object | None = None


def _failed(status: SolveStatus, elapsed: float, solver: str) -> ProgramSolution:
    return ProgramSolution(status, None, None, None, float("nan"), None, (), (), None, elapsed, solver)


# ------------------------------------------------------------------------------ the moment rows
@dataclass(frozen=True, eq=False)
class _Layout:
    """Where the variables sit: y first, then the objective's own, then each listed state's running
    sums (one block of n - 1 per changing component) and reaction changes (3).

    ``first[k, c]`` is the column of state k's running sum of component c at cut 1 (cut 0 has none),
    ``first[k, 3]`` that of its reaction change Rx (Ry and ML follow); -1 where a state has none."""

    n: int
    own: int
    states: np.ndarray
    components: np.ndarray  # (K, 3) which running sums each state needs
    with_reaction: bool
    first: np.ndarray  # (K, 4) int
    size: int


def _layout(model: MomentModel, states: np.ndarray, own: int) -> _Layout:
    components = model.step_components
    twins = model.step_twins
    with_reaction = model.reaction is not None
    n = model.stations
    first = -np.ones((model.states, 4), dtype=int)
    position = n + own
    for k in np.asarray(states, dtype=int):
        twin = int(twins[k])
        for comp in range(3):
            if not components[k, comp]:
                continue
            if first[twin, comp] < 0:  # the first of its twins to be listed owns the running sums
                first[twin, comp] = position
                position += n - 1
            first[k, comp] = first[twin, comp]
        if with_reaction:
            first[k, 3] = position
            position += 3
    return _Layout(n, own, np.asarray(states, dtype=int), components, with_reaction, first, position)


def _aux_equalities(model: MomentModel, layout: _Layout) -> tuple[sp.csr_matrix, np.ndarray]:
    """Rows defining each listed state's auxiliary variables from y: V_1 = rate_0 (y - y0) and
    V_(i+1) - V_i = rate_i (y - y0) for every running sum, R = reaction rate (y - y0)."""
    n = model.stations
    e_count = n - 1
    size = layout.size
    states = layout.states
    rows_parts: list[np.ndarray] = []
    cols_parts: list[np.ndarray] = []
    vals_parts: list[np.ndarray] = []
    rhs_parts: list[np.ndarray] = []
    count = 0
    pairs: list[tuple[int, int]] = []  # (state, component) of each running sum, twins' shared sums once
    defined: set[int] = set()
    for k in states:
        for comp in (FX, FY, MO):
            column = int(layout.first[k, comp])
            if layout.components[k, comp] and column not in defined:
                defined.add(column)
                pairs.append((int(k), comp))
    if pairs:
        kk = np.array([k for k, _ in pairs])
        cc = np.array([c for _, c in pairs])
        step_rows = ((kk[:, None] * e_count + np.arange(e_count)[None, :]) * 3 + cc[:, None]).ravel()
        rate = model.steps[step_rows].tocoo()  # (pairs x E, n)
        rows_parts.append(rate.row)
        cols_parts.append(rate.col)
        vals_parts.append(-rate.data)
        first = layout.first[kk, cc]  # (pairs,)
        own = (first[:, None] + np.arange(e_count)[None, :]).ravel()
        rows_parts.append(np.arange(own.size))
        cols_parts.append(own)
        vals_parts.append(np.ones(own.size))
        previous = np.tile(np.arange(e_count) >= 1, len(pairs))
        rows_parts.append(np.flatnonzero(previous))
        cols_parts.append(own[previous] - 1)
        vals_parts.append(-np.ones(int(previous.sum())))
        rhs_parts.append(-(model.steps[step_rows] @ model.y0))
        count = own.size
    if layout.with_reaction and states.size:
        rate = model.reaction[states].reshape(-1, n)  # (states x 3, n)
        r = count + np.arange(rate.shape[0])
        rows_parts.append(np.repeat(r, n))
        cols_parts.append(np.tile(np.arange(n), rate.shape[0]))
        vals_parts.append(-rate.ravel())
        rows_parts.append(r)
        cols_parts.append((layout.first[states, 3][:, None] + np.arange(3)[None, :]).ravel())
        vals_parts.append(np.ones(r.size))
        rhs_parts.append(-(rate @ model.y0))
        count += r.size
    if not count:
        return sp.csr_matrix((0, size)), np.zeros(0)
    matrix = sp.csr_matrix((np.concatenate(vals_parts), (np.concatenate(rows_parts), np.concatenate(cols_parts))),
                           shape=(count, size))
    return matrix, np.concatenate(rhs_parts)


def _moment_rows(model: MomentModel, layout: _Layout, kk: np.ndarray, ii: np.ndarray) -> tuple[sp.csr_matrix, np.ndarray]:
    """M[kk, ii] = const + rows @ z for the selected (state, station) pairs (module docstring)."""
    m = kk.size
    x, y0 = model.x, model.y0
    r_idx = [np.arange(m)]
    c_idx = [ii]
    vals = [-model.sx[kk, ii]]
    const = model.M0[kk, ii] + model.sx[kk, ii] * y0[ii]
    inner = ii >= 1
    for comp, factor in ((FX, -y0), (FY, x), (MO, -np.ones_like(x))):
        use = inner & layout.components[kk, comp]
        if not use.any():
            continue
        cols = layout.first[kk[use], comp] + ii[use] - 1
        r_idx.append(np.flatnonzero(use))
        c_idx.append(cols)
        vals.append(factor[ii[use]])
    if layout.with_reaction:
        first = layout.first[kk, 3]
        lever = ((-(y0[ii] - y0[0])), (x[ii] - x[0]), -np.ones(m))
        for comp in range(3):
            r_idx.append(np.arange(m))
            c_idx.append(first + comp)
            vals.append(lever[comp])
    rows = sp.csr_matrix((np.concatenate(vals), (np.concatenate(r_idx), np.concatenate(c_idx))), shape=(m, layout.size))
    return rows, const


def _pad(matrix: sp.spmatrix, size: int) -> sp.csr_matrix:
    """A matrix over y, widened with zero columns to ``size`` variables (no copy of its entries)."""
    matrix = sp.csr_matrix(matrix)
    return sp.csr_matrix((matrix.data, matrix.indices, matrix.indptr), shape=(matrix.shape[0], size))


# ------------------------------------------------------------------------------------- solving
def solve_program(structure: Structure, data: ProgramData, start: np.ndarray | None = None,
                  select: bool = True, warm: object | None = None, resolving: bool = False) -> ProgramSolution:
    """Solve the program; epigraph objectives by constraint generation (module docstring).

    ``start`` (n,) is the current axis, used to pick the first rows. With ``select``, a second stage
    returns, among the axes within ``SELECT_SLACK`` of the optimum, the smoothest (least sum of
    (d2y/dx2)^2). ``warm`` is the ``basis`` of an earlier solution (used where the shapes match).
    With the solver ``auto``, a one-off program goes to Clarabel (interior point: the faster cold
    start, measured in benchmarks/bench_shape.py) and a program that will be re-solved with new
    numbers (``resolving``, the sequential method's steps) to HiGHS, whose basis warm-starts the next.
    Never raises for an infeasible or failed solve: the status says so.
    """
    if structure.objective is Objective.RMS:
        return _solve_rms(structure, data)
    if structure.solver is Solver.AUTO:
        structure = replace(structure, solver=Solver.HIGHS if resolving or warm is not None else Solver.CLARABEL)
    return _solve_epigraph(structure, data, start, select, warm)


def _common_rows(structure: Structure, data: ProgramData, size: int):
    """Equalities E y = g and the inequality blocks G y <= q, widened to ``size`` variables."""
    eq = _pad(structure.equality, size) if structure.equality.shape[0] else sp.csr_matrix((0, size))
    ub = _pad(structure.stacked_blocks, size)
    q = np.concatenate(data.q) if data.q else np.zeros(0)
    return eq, np.asarray(data.g, dtype=float), ub, q


def _bounds(data: ProgramData, size: int) -> tuple[np.ndarray, np.ndarray]:
    lower = np.full(size, -np.inf)
    upper = np.full(size, np.inf)
    n = data.model.stations
    lower[:n] = data.lower
    upper[:n] = data.upper
    return lower, upper


def _epigraph_problem(structure: Structure, data: ProgramData, kk: np.ndarray, ii: np.ndarray,
                      tie_break: bool) -> tuple[ConvexProblem, _Layout, dict[str, slice]]:
    """The epigraph LP on the selected rows: with the per-station tie-break (variables u), or the plain
    program of the certificate (moment rows bounded by c s directly)."""
    model = data.model
    n = model.stations
    own = 1 + (n if tie_break else 0)
    layout = _layout(model, np.unique(kk), own)
    size = layout.size
    eq, g, blocks, q = _common_rows(structure, data, size)
    aux, aux_rhs = _aux_equalities(model, layout)
    rows, const = _moment_rows(model, layout, kk, ii)
    c = np.maximum(np.asarray(data.c, dtype=float)[kk, ii], 0.0)
    m = kk.size
    bound_col = (n + 1 + ii) if tie_break else np.full(m, n)
    bound = sp.csr_matrix((c, (np.arange(m), bound_col)), shape=(m, size))
    parts = [blocks, rows - bound, -rows - bound]
    rhs = [q, -const, const]
    if tie_break:
        peak = sp.csr_matrix((np.concatenate([np.ones(n), -np.ones(n)]),
                              (np.concatenate([np.arange(n)] * 2), np.concatenate([n + 1 + np.arange(n), np.full(n, n)]))),
                             shape=(n, size))  # u_i - s <= 0
        parts.append(peak)
        rhs.append(np.zeros(n))
    A_ub = sp.vstack(parts, format="csr")
    b_ub = np.concatenate(rhs)
    A_eq = sp.vstack([eq, aux], format="csr")
    b_eq = np.concatenate([g, aux_rhs])
    cost = np.zeros(size)
    cost[n] = 1.0
    if tie_break:
        tributary = np.zeros(n)
        tributary[:-1] += 0.5 * np.diff(model.x)
        tributary[1:] += 0.5 * np.diff(model.x)
        cost[n + 1:n + 1 + n] = TIE_BREAK * tributary / tributary.sum()
    lower, upper = _bounds(data, size)
    if structure.objective is Objective.MIN_DEPTH:
        lower[n] = 0.0
    where = {"blocks": slice(0, q.size), "up": slice(q.size, q.size + m), "lo": slice(q.size + m, q.size + 2 * m)}
    return ConvexProblem(cost, A_ub, b_ub, A_eq, b_eq, lower, upper), layout, where


def _block_split(structure: Structure, values: np.ndarray) -> tuple[np.ndarray, ...]:
    out = []
    start = 0
    for _, block in structure.blocks:
        out.append(values[start:start + block.shape[0]])
        start += block.shape[0]
    return tuple(out)


def _initial_rows(data: ProgramData, start: np.ndarray | None) -> np.ndarray:
    model = data.model
    k, n = model.states, model.stations
    c = np.maximum(np.asarray(data.c, dtype=float), 0.0)
    y0 = model.y0 if start is None else np.asarray(start, dtype=float)
    m0 = model.moments(y0)
    ratio = np.where(c > 0, m0 / np.where(c > 0, c, 1.0), m0 * 1e12)
    take = min(INITIAL_STATES, k)
    order = np.argsort(ratio, axis=0)
    chosen = np.zeros((k, n), dtype=bool)
    cols = np.arange(n)
    for j in range(take):
        chosen[order[j], cols] = True  # most negative
        chosen[order[k - 1 - j], cols] = True  # most positive
    return chosen


def _solve_epigraph(structure: Structure, data: ProgramData, start: np.ndarray | None, select: bool,
                    warm: object | None) -> ProgramSolution:
    model = data.model
    k, n = model.states, model.stations
    started = time.perf_counter()
    c = np.maximum(np.asarray(data.c, dtype=float), 0.0)
    chosen = _initial_rows(data, start)
    solution: ConvexSolution | None = None
    problem = layout = where = None
    for _ in range(MAX_ROUNDS):
        kk, ii = np.nonzero(chosen)
        problem, layout, where = _epigraph_problem(structure, data, kk, ii, tie_break=True)
        solution = solve_convex(problem, structure.solver, warm)
        if not solution.solved:
            return _failed(solution.status, time.perf_counter() - started, solution.solver)
        warm = solution.basis
        y = solution.z[:n]
        s = solution.z[n]
        u = solution.z[n + 1:2 * n + 1]
        m = model.moments(y)
        limit = c * np.minimum(u, s)[None, :]
        tol = 1e-9 * max(abs(s) * max(float(c.max()), 1e-300), float(np.abs(m).max()), 1e-12)
        violated = (np.abs(m) > limit + tol) & ~chosen
        if not violated.any():
            break
        chosen |= violated
    kk, ii = np.nonzero(chosen)
    best = float(solution.z[n])
    y = solution.z[:n].copy()
    # the certificate: the program without the tie-break (moment rows bounded by c s) at the same
    # multipliers, rescaled to meet its stationarity in s; its rows and right-hand sides are those of
    # the solved program but for the per-station rows u_i <= s, which only touch u and s
    lam_up = solution.mu[where["up"]]
    lam_lo = solution.mu[where["lo"]]
    weight = float(np.dot(c[kk, ii], lam_up + lam_lo))
    factor = 1.0 / weight if weight > 0 and (structure.objective is not Objective.MIN_DEPTH or weight > 1.0) else 1.0
    block_mu = solution.mu[where["blocks"]]
    rows_mu = solution.mu[:where["lo"].stop] * factor
    nu = solution.nu * factor
    zeta_lo = solution.zeta_lo * factor
    zeta_up = solution.zeta_up * factor
    columns = np.r_[0:n, 2 * n + 1:problem.size]  # y and the auxiliary variables
    a_rows = problem.A_ub[:where["lo"].stop]
    reduced = (a_rows.T @ rows_mu + problem.A_eq.T @ nu - zeta_lo + zeta_up)[columns]
    terms = np.maximum.reduce([np.abs(a_rows.T @ rows_mu), np.abs(problem.A_eq.T @ nu), zeta_lo, zeta_up])[columns]
    stationarity = float(np.abs(reduced).max() / max(float(terms.max()), 1e-300))
    finite_lo = np.isfinite(problem.lower[:n])
    finite_up = np.isfinite(problem.upper[:n])
    bound = (-float(rows_mu @ problem.b_ub[:where["lo"].stop]) - float(nu @ problem.b_eq)
             + float(zeta_lo[:n][finite_lo] @ problem.lower[:n][finite_lo])
             - float(zeta_up[:n][finite_up] @ problem.upper[:n][finite_up]))
    epigraph = np.zeros((2, k, n))
    epigraph[0, kk, ii] = lam_up * factor
    epigraph[1, kk, ii] = lam_lo * factor
    block_duals = _block_split(structure, block_mu * factor)
    bound_duals = (solution.zeta_up[:n] - solution.zeta_lo[:n]) * factor
    status = solution.status
    solver_name = solution.solver
    if select:
        y = _smoothest(structure, data, chosen, best, y)
    elapsed = time.perf_counter() - started
    m = model.moments(y)
    value = float(np.max(np.abs(m) / np.where(c > 0, c, np.inf))) if np.any(c > 0) else best
    slacks = tuple(np.asarray(q) - blk @ y for (_, blk), q in zip(structure.blocks, data.q, strict=True))
    return ProgramSolution(status, y, max(value, best), min(bound, best), stationarity, epigraph, block_duals, slacks,
                           bound_duals, elapsed, solver_name, int(np.count_nonzero(chosen)), solution.basis)


def second_differences(x: np.ndarray) -> sp.csr_matrix:
    """d2y/dx2 at the interior stations as a sparse (n - 2, n) matrix (1/m)."""
    h0, h1 = np.diff(x)[:-1], np.diff(x)[1:]
    mean = 0.5 * (h0 + h1)
    n = x.size
    return sp.diags([1 / (h0 * mean), -(1 / h0 + 1 / h1) / mean, 1 / (h1 * mean)], [0, 1, 2], shape=(n - 2, n)).tocsr()


def fairness_matrix(x: np.ndarray) -> sp.csr_matrix:
    """The change of curvature along the axis, d3y/dx3 between interior stations, as a sparse
    (n - 3, n) matrix (1/m2): the differences of `second_differences` over the spacing. Its sum of
    squares is the fairness measure: a circle or a parabola has a constant second derivative (and a
    vanishing measure in the parabola's case), while a kink or a flat run between curved stretches
    shows up as a jump in curvature."""
    d2 = second_differences(x)
    middle = x[1:-1]
    h = np.diff(middle)
    step = sp.diags([-1.0 / h, 1.0 / h], [0, 1], shape=(middle.size - 1, middle.size))
    return (step @ d2).tocsr()


def smoothest_within(structure: Structure, data: ProgramData, limit: float, chosen: np.ndarray | None = None,
                     fallback: np.ndarray | None = None) -> tuple[np.ndarray | None, float]:
    """Among the axes whose linear-model objective stays within ``limit`` (epigraph unit), the fairest
    (least sum of squared changes of curvature, `fairness_matrix`), by constraint generation; returns
    (y or ``fallback`` if the QP fails, solve time s). Every other constraint of the program holds."""
    model = data.model
    n = model.stations
    started = time.perf_counter()
    c = np.maximum(np.asarray(data.c, dtype=float), 0.0)
    if chosen is None:
        chosen = _initial_rows(data, fallback)
    curvature = fairness_matrix(model.x) if model.stations > 3 else second_differences(model.x)
    scale = float(np.abs(curvature).max()) or 1.0
    chosen = chosen.copy()
    for _ in range(MAX_ROUNDS):
        kk, ii = np.nonzero(chosen)
        layout = _layout(model, np.unique(kk), 0)
        size = layout.size
        eq, g, blocks, q = _common_rows(structure, data, size)
        aux, aux_rhs = _aux_equalities(model, layout)
        rows, const = _moment_rows(model, layout, kk, ii)
        bound = c[kk, ii] * limit
        A_ub = sp.vstack([blocks, rows, -rows], format="csr")
        b_ub = np.concatenate([q, bound - const, bound + const])
        d2 = _pad(curvature / scale, size)
        P = (2.0 * d2.T @ d2).tocsc()
        lower, upper = _bounds(data, size)
        problem = ConvexProblem(np.zeros(size), A_ub, b_ub, sp.vstack([eq, aux], format="csr"),
                                np.concatenate([g, aux_rhs]), lower, upper, P)
        solution = solve_convex(problem, Solver.CLARABEL)
        if not solution.solved:
            return fallback, time.perf_counter() - started
        y = solution.z[:n]
        m = model.moments(y)
        violated = (np.abs(m) > c * limit * (1 + 1e-9) + 1e-12) & ~chosen
        if not violated.any():
            return y, time.perf_counter() - started
        chosen |= violated
    return fallback, time.perf_counter() - started


def _smoothest(structure: Structure, data: ProgramData, chosen: np.ndarray, best: float, y: np.ndarray) -> np.ndarray:
    limit = best + SELECT_SLACK * max(abs(best), 1e-12)
    smooth, _ = smoothest_within(structure, data, limit, chosen, y)
    return y if smooth is None else smooth


def _solve_rms(structure: Structure, data: ProgramData) -> ProgramSolution:
    """min sum_k sum_i w_i M_ki^2: a QP with the moments as variables (P diagonal on them)."""
    model = data.model
    k, n = model.states, model.stations
    started = time.perf_counter()
    layout = _layout(model, np.arange(k), k * n)
    size = layout.size
    eq, g, blocks, q = _common_rows(structure, data, size)
    aux, aux_rhs = _aux_equalities(model, layout)
    kk, ii = np.divmod(np.arange(k * n), n)
    rows, const = _moment_rows(model, layout, kk, ii)
    define = rows - sp.csr_matrix((np.ones(k * n), (np.arange(k * n), n + np.arange(k * n))), shape=(k * n, size))
    A_eq = sp.vstack([eq, aux, define], format="csr")
    b_eq = np.concatenate([g, aux_rhs, -const])
    w = np.tile(np.asarray(data.w, dtype=float), k)
    diag = np.zeros(size)
    diag[n:n + k * n] = 2.0 * w
    P = sp.diags(diag, format="csc")
    lower, upper = _bounds(data, size)
    problem = ConvexProblem(np.zeros(size), blocks, q, A_eq, b_eq, lower, upper, P)
    solution = solve_convex(problem, Solver.CLARABEL if structure.solver is Solver.AUTO else structure.solver)
    elapsed = time.perf_counter() - started
    if not solution.solved:
        return _failed(solution.status, elapsed, solution.solver)
    y = solution.z[:n]
    value = float(np.sum(w * model.moments(y).ravel() ** 2))
    # the Lagrangian at the solution: a lower bound by convexity where it is stationary
    z = solution.z
    residual = P @ z + problem.A_ub.T @ solution.mu + problem.A_eq.T @ solution.nu - solution.zeta_lo + solution.zeta_up
    scale = max(float(np.abs(P @ z).max()), 1e-300)
    slack_terms = float(solution.mu @ (problem.A_ub @ z - problem.b_ub))
    bound = value + slack_terms
    duals = _block_split(structure, solution.mu)
    slacks = tuple(np.asarray(qq) - blk @ y for (_, blk), qq in zip(structure.blocks, data.q, strict=True))
    return ProgramSolution(solution.status, y, value, bound, float(np.abs(residual).max() / scale), None, duals, slacks,
                           solution.zeta_up[:n] - solution.zeta_lo[:n], elapsed, solution.solver, k * n)


# ------------------------------------------------------------------------------ the nearest axis
@dataclass(frozen=True, eq=False)
class NearestSolution:
    """The axis nearest a reference with its moments within a limit (`nearest_within`).

    Attributes:
        status: how the (last) solve ended; ``y`` is None unless solved.
        y: ordinates (n,), m.
        deviation_m: the measure reached (largest |y - r| or its weighted RMS), m.
        least_m: the least measure of the linear model (the fair axis may give up a slack of it), m.
        bound_m: the Lagrangian dual bound on that measure (no axis of the linear model within the limit
            is nearer), m; None if unavailable.
        stationarity: residual of the dual's stationarity (relative).
        moment_duals: (K, n) multipliers of the moment rows |M| <= limit: where the limit holds the axis
            away from the reference, and how much each row costs (m per kNm).
        solve_time_s, solver: of the solves.
    """

    status: SolveStatus
    y: np.ndarray | None
    deviation_m: float
    bound_m: float | None
    least_m: float
    stationarity: float
    moment_duals: np.ndarray | None
    solve_time_s: float
    solver: str


def nearest_within(structure: Structure, data: ProgramData, limit_kNm: float, reference: np.ndarray,
                   rms: bool, start: np.ndarray | None = None, fair_slack: float | None = None) -> NearestSolution:
    """Among the axes whose linear-model moments satisfy |M[k, i]| <= c[k, i] limit (every other
    constraint of the program too), the nearest to ``reference`` (n,): least largest vertical deviation
    (an LP, then among its optima the least weighted sum of squares, so the axis is definite), or with
    ``rms`` the least sum of w (y - r)^2 (a QP). Moment rows are generated as they are violated, from
    the states extreme at each station of ``start`` (default: the reference).

    Never raises for an infeasible or failed solve: the status says so.
    """
    model = data.model
    n = model.stations
    reference = np.asarray(reference, dtype=float)
    started = time.perf_counter()
    c = np.maximum(np.asarray(data.c, dtype=float), 0.0)
    w = np.asarray(data.w, dtype=float)
    chosen = _initial_rows(data, reference if start is None else start)

    def generate(quadratic: bool, cap: float | None, fair: bool = False):
        """Solve on the chosen rows, adding every violated moment row until none is."""
        for _ in range(MAX_ROUNDS):
            problem, where = _nearest_problem(structure, data, chosen, limit_kNm, reference, quadratic, cap, fair)
            solution = solve_convex(problem, Solver.CLARABEL if quadratic else _lp_solver(structure))
            if not solution.solved:
                return problem, where, solution
            violated = (np.abs(model.moments(solution.z[:n])) > c * limit_kNm * (1 + 1e-9) + 1e-9) & ~chosen
            if not violated.any():
                return problem, where, solution
            chosen[violated] = True
        return problem, where, solution

    problem, where, solution = generate(rms, None)
    if not solution.solved:
        return NearestSolution(solution.status, None, float("nan"), None, float("nan"), float("nan"), None,
                               time.perf_counter() - started, solution.solver)
    y = solution.z[:n]
    kk, ii = np.nonzero(chosen)
    duals = np.zeros((model.states, n))
    duals[kk, ii] = solution.mu[where["up"]] + solution.mu[where["lo"]]
    if rms:
        value = float(np.sum(w * (y - reference) ** 2))
        P = problem.P
        z = solution.z
        residual = (P @ z + problem.c + problem.A_ub.T @ solution.mu + problem.A_eq.T @ solution.nu
                    - solution.zeta_lo + solution.zeta_up)
        scale = max(float(np.abs(P @ z).max()), float(np.abs(problem.c).max()), 1e-300)
        bound = value + float(solution.mu @ (problem.A_ub @ z - problem.b_ub))
        total = float(w.sum())
        rms_value = float(np.sqrt(value / total))
        return NearestSolution(solution.status, y, rms_value, float(np.sqrt(max(bound, 0.0) / total)), rms_value,
                               float(np.abs(residual).max() / scale), duals, time.perf_counter() - started,
                               solution.solver)
    bound, stationarity = lagrangian_bound(problem, solution)
    best = float(solution.z[n])
    # among the axes of least largest deviation, the nearest in the weighted sum of squares
    if fair_slack is not None:  # the fairest axis within the slack of the least largest deviation
        _, _, refined = generate(True, best + fair_slack * max(best, 1e-9), True)
    else:
        _, _, refined = generate(True, best + NEAREST_SLACK * max(best, 1e-9))
    if refined.solved:
        y = refined.z[:n]
    deviation = float(np.abs(y - reference).max())
    return NearestSolution(solution.status, y, deviation, min(bound, best), best, stationarity, duals,
                           time.perf_counter() - started, solution.solver)


def _lp_solver(structure: Structure) -> Solver:
    return Solver.CLARABEL if structure.solver is Solver.AUTO else structure.solver


def _nearest_problem(structure: Structure, data: ProgramData, chosen: np.ndarray, limit_kNm: float,
                     reference: np.ndarray, quadratic: bool, cap_m: float | None,
                     fair: bool = False) -> tuple[ConvexProblem, dict]:
    """The nearest-axis program on the chosen moment rows: variables y, then t (the largest
    deviation) unless ``quadratic`` without a cap, then the listed states' running sums. With
    ``quadratic`` the objective is sum w (y - r)^2 (its constant dropped); ``cap_m`` bounds the largest
    deviation (the second stage of the largest measure)."""
    model = data.model
    n = model.stations
    with_t = not quadratic or cap_m is not None
    own = 1 if with_t else 0
    kk, ii = np.nonzero(chosen)
    layout = _layout(model, np.unique(kk), own)
    size = layout.size
    eq, g, blocks, q = _common_rows(structure, data, size)
    aux, aux_rhs = _aux_equalities(model, layout)
    rows, const = _moment_rows(model, layout, kk, ii)
    c = np.maximum(np.asarray(data.c, dtype=float), 0.0)
    bound = c[kk, ii] * limit_kNm
    parts = [blocks, rows, -rows]
    rhs = [q, bound - const, bound + const]
    if with_t:
        eye = sp.identity(n, format="csr")
        t_col = sp.csr_matrix((np.ones(n), (np.arange(n), np.full(n, n))), shape=(n, size))
        parts += [_pad(eye, size) - t_col, -_pad(eye, size) - t_col]
        rhs += [reference, -reference]
    A_ub = sp.vstack(parts, format="csr")
    b_ub = np.concatenate(rhs)
    lower, upper = _bounds(data, size)
    cost = np.zeros(size)
    P = None
    if with_t:
        lower[n] = 0.0
        if cap_m is not None:
            upper[n] = cap_m
    if quadratic and fair:  # least change of curvature (`fairness_matrix`), scaled to order one
        curvature = fairness_matrix(model.x) if n > 3 else second_differences(model.x)
        d3 = _pad(curvature / (float(np.abs(curvature).max()) or 1.0), size)
        P = (2.0 * d3.T @ d3).tocsc()
    elif quadratic:
        w = np.asarray(data.w, dtype=float)
        diag = np.zeros(size)
        diag[:n] = 2.0 * w
        P = sp.diags(diag, format="csc")
        cost[:n] = -2.0 * w * reference
    else:
        cost[n] = 1.0
    m = kk.size
    where = {"up": slice(q.size, q.size + m), "lo": slice(q.size + m, q.size + 2 * m)}
    return ConvexProblem(cost, A_ub, b_ub, sp.vstack([eq, aux], format="csr"), np.concatenate([g, aux_rhs]),
                         lower, upper, P), where
