"""The convex program of form finding, built once with cvxpy and re-solved with new data.

Variables: the ordinates y (m) at the stations, and for the epigraph objectives one scalar s. The
moments of the governing states are affine in y:

    M[k, i] = a[k, i] - h[k, i] y[i]         (kN m; h the horizontal resultant left of the
                                              station, kN: the thrust H for vertical loads)

(exact for a three-hinged arch with fixed springings and hinge under loads of fixed magnitude), or
in general M[k, i] = a[k, i] + sum_j J[k, i, j] y[j] with J the Jacobian of the exact engine (the
sequential step of `formfind.design.shape`).

Objectives:

    minimax, offset, min_depth:  minimise s  subject to  |M[k, i]| <= c[k, i] s
        minimax   c = 1                 s = peak |M| (kNm)
        offset    c = h[k, i]           s = peak vertical thrust-line offset |M| / H (m)
        min_depth c = beta |N[k, i]| / 2  s = rib depth (m): |M / N| <= beta depth / 2
    rms:  minimise sum_k sum_i w[i] M[k, i]^2   (w: tributary length along the axis, m)

and linear constraints on y: equalities E y = g (springings, hinge, symmetry) and named blocks of
inequalities G y <= q (rise, clearance, site envelope, slope, curvature, step limit).

The dual bound is computed from the constraint multipliers as the Lagrangian dual function, with its
stationarity residual: a certificate that no admissible axis does better than the bound, to within
the residual.

Two ways to solve. `solve_program` builds the problem with constant data and, for the epigraph
objectives, generates constraints: it starts from the few states that are extreme at each station,
solves, adds every (state, station) row the solution violates, and repeats until none is violated.
The optimum is that of the full program, and the multipliers (zero on rows never added) remain a
valid dual certificate for it. A tie-break of weight 1e-6 also minimises each station's own peak,
so stations that do not govern take definite values (the certificate's normalisation divides the
bound by 1 + 1e-6 accordingly, which keeps it a valid lower bound). Where the optimum is still not
unique, a second stage picks, among the axes within 1e-7 of the optimum, the smoothest (least integral of the
squared second derivative): a definite answer, and the shape a designer would draw. `FormProgram` compiles the full program once with cvxpy Parameters
(DPP) so that a study re-solves without recompiling; its compilation grows with states x stations
and suits modest sizes.
"""

from __future__ import annotations

import contextlib
import os
import sys
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from formfind.enums import Objective, Solver

SOLVER_NAMES = {Solver.CLARABEL: "CLARABEL", Solver.HIGHS: "HIGHS", Solver.AUTO: "CLARABEL"}


def solver_for(structure: Structure, dense: bool) -> str:
    """The cvxpy solver name for a program: the user's choice, or the rule of ``auto``."""
    if structure.solver is Solver.AUTO:
        return "HIGHS" if dense and structure.objective is not Objective.RMS else "CLARABEL"
    if structure.solver is Solver.HIGHS and structure.objective is Objective.RMS:
        return "CLARABEL"  # a QP: HiGHS through cvxpy takes LPs
    return SOLVER_NAMES[structure.solver]


@dataclass(frozen=True)
class Structure:
    """What fixes a program's shape: sizes and constraint matrices (data go in as parameters).

    Attributes:
        objective: the objective.
        stations, states: n and K.
        equality: E (rows, n) sparse.
        blocks: named inequality blocks, each (name, G (rows, n) sparse).
        solver: the cvxpy solver.
    """

    objective: Objective
    stations: int
    states: int
    equality: sp.csr_matrix
    blocks: tuple[tuple[str, sp.csr_matrix], ...]
    solver: Solver


@dataclass(frozen=True, eq=False)
class ProgramData:
    """The numbers of one solve.

    Attributes:
        a: (K, n) moments at y = 0 of the affine model, kNm.
        h: (K, n) frozen horizontal resultant left of each station, kN (the thrust H for vertical loads).
        c: (K, n) epigraph weights (see the module docstring); ignored for rms.
        w: (n,) rms weights (tributary lengths, m); ignored otherwise.
        g: equality right-hand side (rows,).
        q: one right-hand side per inequality block.
        jac: (K, n, n) Jacobian dM/dy, kN; when given, M = a + J y and ``h`` only weights ``offset``.
        x: station abscissae (n,), m, for the smoothness measure of the final selection.
    """

    a: np.ndarray
    h: np.ndarray
    c: np.ndarray
    w: np.ndarray
    g: np.ndarray
    q: tuple[np.ndarray, ...]
    jac: np.ndarray | None = None
    x: np.ndarray | None = None

    def moments(self, y: np.ndarray) -> np.ndarray:
        """M (K, n) of the linear model at ordinates y."""
        if self.jac is not None:
            return self.a + np.einsum("kij,j->ki", self.jac, y)
        return self.a - self.h * y[None, :]

    def rows(self, kk: np.ndarray, ii: np.ndarray) -> sp.csr_matrix:
        """dM/dy of the selected (state, station) entries as sparse rows (entries, n)."""
        n = self.a.shape[1]
        if self.jac is not None:
            return sp.csr_matrix(self.jac[kk, ii, :])
        return sp.csr_matrix((-self.h[kk, ii], (np.arange(kk.size), ii)), shape=(kk.size, n))

    def gradient(self, coeff: np.ndarray) -> np.ndarray:
        """sum over (k, i) of coeff[k, i] dM[k, i]/dy, shape (n,)."""
        if self.jac is not None:
            return np.einsum("kij,ki->j", self.jac, coeff)
        return -np.sum(self.h * coeff, axis=0)

    def gradient_scale(self, coeff: np.ndarray) -> float:
        """A scale for `gradient`: its value with absolute sensitivities and coefficients."""
        if self.jac is not None:
            return float(np.abs(np.einsum("kij,ki->j", np.abs(self.jac), np.abs(coeff))).max())
        return float(np.abs(np.sum(np.abs(self.h) * np.abs(coeff), axis=0)).max())


@dataclass(frozen=True, eq=False)
class ProgramSolution:
    """The result of one solve.

    Attributes:
        status: the solver's status ("optimal", "optimal_inaccurate", "infeasible", ...).
        y: ordinates (n,), m; None unless a solution is present.
        value: the objective value (kNm, m or kNm2 for the rms sum) or None.
        dual_bound: the Lagrangian dual value, same unit; None if unavailable.
        stationarity: residual of the dual's stationarity conditions (relative).
        epigraph_duals: (2, K, n) multipliers of the upper and lower epigraph constraints.
        block_duals: one multiplier array per inequality block.
        block_slacks: one slack array (q - G y) per inequality block.
        solve_time_s: wall time of the solve (compilation included on the first solve), s.
        solver: the solver's name.
    """

    status: str
    y: np.ndarray | None
    value: float | None
    dual_bound: float | None
    stationarity: float
    epigraph_duals: np.ndarray | None
    block_duals: tuple[np.ndarray, ...]
    block_slacks: tuple[np.ndarray, ...]
    solve_time_s: float
    solver: str
    rows_used: int = field(default=0)



def _dual_certificate(structure: Structure, data: ProgramData, y: np.ndarray, lam_up: np.ndarray, lam_lo: np.ndarray,
                      nu: np.ndarray, block_duals: tuple[np.ndarray, ...]) -> tuple[float, float, np.ndarray]:
    """Lagrangian dual value and stationarity residual of the epigraph program (full-size multipliers)."""
    n, k = structure.stations, structure.states
    a = np.ascontiguousarray(data.a, dtype=float).ravel()
    c = np.maximum(np.ascontiguousarray(data.c, dtype=float).ravel(), 0.0)
    lam_up = np.maximum(lam_up, 0.0)
    lam_lo = np.maximum(lam_lo, 0.0)
    # stationarity in s asks sum c (lam_up + lam_lo) = 1 (min_depth: <= 1, s >= 0 takes the rest);
    # rescaling all multipliers to meet it exactly keeps them dual feasible
    total = float(np.dot(c, lam_up + lam_lo))
    factor = 1.0 / total if total > 0 and (structure.objective is not Objective.MIN_DEPTH or total > 1.0) else 1.0
    lam_up, lam_lo, nu = lam_up * factor, lam_lo * factor, nu * factor
    lin = np.zeros(n)
    const = 0.0
    for (_, block), mu, q in zip(structure.blocks, block_duals, data.q, strict=True):
        lin += block.T @ (mu * factor)
        const -= float(np.dot(mu * factor, q))
    if nu.size:
        lin += structure.equality.T @ nu
        const -= float(np.dot(nu, data.g))
    diff = (lam_up - lam_lo).reshape(k, n)
    bound = float(np.sum(diff.ravel() * a)) + const
    grad_y = data.gradient(diff) + lin
    scale = max(data.gradient_scale((lam_up + lam_lo).reshape(k, n)), 1e-300)
    return bound, float(np.abs(grad_y).max()) / scale, np.stack([lam_up.reshape(k, n), lam_lo.reshape(k, n)])


def _rms_certificate(structure: Structure, data: ProgramData, y: np.ndarray,
                     block_duals: tuple[np.ndarray, ...], nu: np.ndarray) -> tuple[float, float]:
    n = structure.stations
    w = np.asarray(data.w, dtype=float)[None, :]
    m = data.moments(y)
    lin = np.zeros(n)
    for (_, block), mu in zip(structure.blocks, block_duals, strict=True):
        lin += block.T @ mu
    if nu.size:
        lin += structure.equality.T @ nu
    grad = data.gradient(2.0 * w * m) + lin
    value = float(np.sum(w * m**2))
    bound = value + sum(float(np.dot(mu, blk @ y - q)) for (_, blk), mu, q in
                        zip(structure.blocks, block_duals, data.q, strict=True))
    scale = max(data.gradient_scale(2.0 * w * m), 1e-300)
    return bound, float(np.abs(grad).max() / scale)


INITIAL_STATES = 2  # per station and side, the most extreme states start the constraint generation
SELECT_SLACK = 1e-7  # stage two may give up this fraction of the optimum to pick the smoothest axis
TIE_BREAK = 1e-6  # weight of the per-station peaks against the governing peak (lexicographic tie-break)
MAX_ROUNDS = 50


def _second_differences(x: np.ndarray) -> sp.csr_matrix:
    """d2y/dx2 at the interior stations as a sparse (n - 2, n) matrix (1/m)."""
    h0, h1 = np.diff(x)[:-1], np.diff(x)[1:]
    mean = 0.5 * (h0 + h1)
    n = x.size
    return sp.diags([1 / (h0 * mean), -(1 / h0 + 1 / h1) / mean, 1 / (h1 * mean)], [0, 1, 2], shape=(n - 2, n)).tocsr()


def solve_program(structure: Structure, data: ProgramData, start: np.ndarray | None = None,
                  select: bool = True) -> ProgramSolution:
    """Solve with constant data; epigraph objectives by constraint generation (module docstring).

    ``start`` (n,) is the current axis, used to pick the first rows. With ``select``, a second stage
    returns, among the axes within 1e-7 of the optimum, the smoothest (least sum of (d2y/dx2)^2):
    unique with the springings fixed. Never raises for an infeasible or failed solve: the status
    says so.
    """
    import cvxpy as cp  # imported here: cvxpy takes about a second to import

    n, k = structure.stations, structure.states
    solver = solver_for(structure, data.jac is not None)
    a = np.ascontiguousarray(data.a, dtype=float)
    started = time.perf_counter()
    y = cp.Variable(n)
    cons = []
    eq = None
    if structure.equality.shape[0]:
        eq = structure.equality @ y == data.g
        cons.append(eq)
    ineq = [block @ y <= q for (_, block), q in zip(structure.blocks, data.q, strict=True)]
    cons += ineq
    if structure.objective is Objective.RMS:
        w = np.tile(np.sqrt(np.asarray(data.w, dtype=float)), k)
        # sum_k sum_i w_i M_ki^2 as a sum of squares of one sparse affine map
        kk_all, ii_all = np.divmod(np.arange(k * n), n)
        lin = sp.diags(w) @ data.rows(kk_all, ii_all)
        problem = cp.Problem(cp.Minimize(cp.sum_squares(w * a.ravel() + lin @ y)), cons)
        status = _run(problem, solver)
        elapsed = time.perf_counter() - started
        if y.value is None or status not in ("optimal", "optimal_inaccurate"):
            return ProgramSolution(status, None, None, None, float("nan"), None, (), (), elapsed, solver)
        yv = _snap(structure, data, np.array(y.value, dtype=float))
        duals = tuple(np.asarray(c.dual_value, dtype=float) for c in ineq)
        nu = np.zeros(0) if eq is None else np.asarray(eq.dual_value, dtype=float).ravel()
        bound, stationarity = _rms_certificate(structure, data, yv, duals, nu)
        slacks = tuple(np.asarray(q) - blk @ yv for (_, blk), q in zip(structure.blocks, data.q, strict=True))
        return ProgramSolution(status, yv, float(problem.value), bound, stationarity, None, duals, slacks,
                               elapsed, solver, k * n)

    c = np.maximum(np.ascontiguousarray(data.c, dtype=float), 0.0)
    y0 = np.zeros(n) if start is None else np.asarray(start, dtype=float)
    m0 = data.moments(y0)
    ratio = np.where(c > 0, m0 / np.where(c > 0, c, 1.0), m0 * 1e12)
    take = min(INITIAL_STATES, k)
    order = np.argsort(ratio, axis=0)
    chosen = np.zeros((k, n), dtype=bool)
    cols = np.arange(n)
    for j in range(take):
        chosen[order[j], cols] = True  # most negative
        chosen[order[k - 1 - j], cols] = True  # most positive
    s = cp.Variable()
    # per-station peaks u_i <= s with a tiny weight: a lexicographic tie-break that also minimises
    # every station's own peak, so stations that do not govern take definite values (no zigzag)
    u = cp.Variable(n)
    x_st = np.arange(n, dtype=float) if data.x is None else np.asarray(data.x, dtype=float)
    tributary = np.zeros(n)
    tributary[:-1] += 0.5 * np.diff(x_st)
    tributary[1:] += 0.5 * np.diff(x_st)
    tie_break = TIE_BREAK * tributary / tributary.sum()
    status = "not solved"
    yv = None
    for _ in range(MAX_ROUNDS):
        kk, ii = np.nonzero(chosen)
        moments = a[kk, ii] + data.rows(kk, ii) @ y
        bound_rows = cp.multiply(c[kk, ii], u[ii])
        up = moments <= bound_rows
        lo = -moments <= bound_rows
        extra = [u <= s] + ([s >= 0] if structure.objective is Objective.MIN_DEPTH else [])
        problem = cp.Problem(cp.Minimize(s + tie_break @ u), cons + [up, lo] + extra)
        status = _run(problem, solver)
        if y.value is None or status not in ("optimal", "optimal_inaccurate"):
            return ProgramSolution(status, None, None, None, float("nan"), None, (), (),
                                   time.perf_counter() - started, solver)
        yv = np.array(y.value, dtype=float)
        sv = float(s.value)
        uv = np.array(u.value, dtype=float)
        m = data.moments(yv)
        limit = c * np.minimum(uv, sv)[None, :]
        tol = 1e-9 * max(abs(sv) * max(float(c.max()), 1e-300), float(np.abs(m).max()), 1e-12)
        violated = (np.abs(m) > limit + tol) & ~chosen
        if not violated.any():
            break
        chosen |= violated
    lam_up = np.zeros((k, n))
    lam_lo = np.zeros((k, n))
    lam_up[kk, ii] = np.asarray(up.dual_value, dtype=float)
    lam_lo[kk, ii] = np.asarray(lo.dual_value, dtype=float)
    duals = tuple(np.asarray(cn.dual_value, dtype=float) for cn in ineq)
    nu = np.zeros(0) if eq is None else np.asarray(eq.dual_value, dtype=float).ravel()
    bound, stationarity, epi = _dual_certificate(structure, data, yv, lam_up.ravel(), lam_lo.ravel(), nu, duals)
    best = float(s.value)
    # stage two: among the optimal axes, the smoothest (a definite answer where the optimum is not
    # unique); the certificate stays that of stage one
    limit_s = best + SELECT_SLACK * max(abs(best), 1e-12)
    x = np.arange(n, dtype=float) if data.x is None else np.asarray(data.x, dtype=float)
    curvature = _second_differences(x)
    for _ in range(MAX_ROUNDS if select else 0):
        kk, ii = np.nonzero(chosen)
        moments = a[kk, ii] + data.rows(kk, ii) @ y
        bound_rows = c[kk, ii] * limit_s
        smooth = cp.Problem(cp.Minimize(cp.sum_squares(curvature @ y)), cons + [cp.abs(moments) <= bound_rows])
        if _run(smooth, "CLARABEL") not in ("optimal", "optimal_inaccurate") or y.value is None:
            break  # keep the stage-one axis
        candidate = np.array(y.value, dtype=float)
        m = data.moments(candidate)
        violated = (np.abs(m) > c * limit_s * (1 + 1e-9) + 1e-12) & ~chosen
        if not violated.any():
            yv = candidate
            break
        chosen |= violated
    elapsed = time.perf_counter() - started
    yv = _snap(structure, data, yv)
    m = data.moments(yv)
    value = float(np.max(np.abs(m) / np.where(c > 0, c, np.inf))) if np.any(c > 0) else best
    slacks = tuple(np.asarray(q) - blk @ yv for (_, blk), q in zip(structure.blocks, data.q, strict=True))
    return ProgramSolution(status, yv, max(value, best), min(bound, best), stationarity, epi, duals, slacks,
                           elapsed, solver, int(np.count_nonzero(chosen)))


@contextlib.contextmanager
def silent_stdout():
    """Send file descriptor 1 to /dev/null: HiGHS writes its banner there from C++, whatever its
    output options say (a known HiGHS/cvxpy issue), and solvers must not print."""
    sys.stdout.flush()
    saved = os.dup(1)
    try:
        with open(os.devnull, "w") as null:
            os.dup2(null.fileno(), 1)
            yield
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)


def _snap(structure: Structure, data: ProgramData, y: np.ndarray) -> np.ndarray:
    """Meet the equality rows exactly: an ordinate fixed by a row (a springing, a hinge) takes its value,
    a symmetric pair its mean. Solvers meet equalities only to their tolerance (about 1e-8 m)."""
    y = y.copy()
    eq = structure.equality.tocsr()
    for r in range(eq.shape[0]):
        cols, vals = eq.indices[eq.indptr[r]:eq.indptr[r + 1]], eq.data[eq.indptr[r]:eq.indptr[r + 1]]
        if cols.size == 1:
            y[cols[0]] = data.g[r] / vals[0]
        elif cols.size == 2 and np.isclose(vals[0], -vals[1]) and data.g[r] == 0.0:
            y[cols] = y[cols].mean()
    return y


def _run(problem, solver: str) -> str:
    import cvxpy as cp

    try:
        if solver == "HIGHS":
            with silent_stdout():
                problem.solve(solver=solver, output_flag=False)
        else:
            problem.solve(solver=solver)
        return str(problem.status)
    except cp.error.SolverError as exc:
        return f"solver_error: {exc}"


class FormProgram:
    """The full program compiled once with cvxpy Parameters for one `Structure` (study re-solves)."""

    def __init__(self, structure: Structure) -> None:
        import cvxpy as cp  # imported here: cvxpy takes about a second to import

        self.structure = structure
        n, k = structure.stations, structure.states
        self._y = cp.Variable(n, name="y")
        self._s = cp.Variable(name="s")
        self._a = cp.Parameter(k * n, name="a")
        self._h = cp.Parameter(k * n, name="h")
        tile = sp.vstack([sp.identity(n, format="csr")] * k, format="csr")
        moments = self._a - cp.multiply(self._h, tile @ self._y)
        self._g = cp.Parameter(structure.equality.shape[0], name="g")
        self._q = [cp.Parameter(block.shape[0], name=f"q_{name}") for name, block in structure.blocks]
        constraints = []
        self._eq = None
        if structure.equality.shape[0]:
            self._eq = structure.equality @ self._y == self._g
            constraints.append(self._eq)
        self._ineq = [block @ self._y <= q for (_, block), q in zip(structure.blocks, self._q, strict=True)]
        constraints += self._ineq
        if structure.objective is Objective.RMS:
            self._w = cp.Parameter(k * n, nonneg=True, name="w")
            objective = cp.Minimize(cp.sum(cp.multiply(self._w, cp.square(moments))))
            self._up = self._lo = None
        else:
            self._c = cp.Parameter(k * n, nonneg=True, name="c")
            self._up = moments <= cp.multiply(self._c, self._s)
            self._lo = -moments <= cp.multiply(self._c, self._s)
            constraints += [self._up, self._lo]
            if structure.objective is Objective.MIN_DEPTH:
                constraints.append(self._s >= 0)
            objective = cp.Minimize(self._s)
        self._problem = cp.Problem(objective, constraints)
        self._tile = tile

    def solve(self, data: ProgramData) -> ProgramSolution:
        """Solve with the given numbers; never raises for an infeasible or failed solve."""
        import cvxpy as cp

        if data.jac is not None:
            raise ValueError("a compiled FormProgram takes the diagonal model (h) only")
        st = self.structure
        n, k = st.stations, st.states
        self._a.value = np.ascontiguousarray(data.a, dtype=float).ravel()
        self._h.value = np.ascontiguousarray(data.h, dtype=float).ravel()
        if self._eq is not None:
            self._g.value = np.asarray(data.g, dtype=float)
        for param, q in zip(self._q, data.q, strict=True):
            param.value = np.asarray(q, dtype=float)
        if st.objective is Objective.RMS:
            self._w.value = np.tile(np.asarray(data.w, dtype=float), k)
        else:
            self._c.value = np.maximum(np.ascontiguousarray(data.c, dtype=float).ravel(), 0.0)
        start = time.perf_counter()
        try:
            self._problem.solve(solver=SOLVER_NAMES[st.solver])
            status = str(self._problem.status)
        except cp.error.SolverError as exc:
            status = f"solver_error: {exc}"
        elapsed = time.perf_counter() - start
        if self._y.value is None or status not in ("optimal", "optimal_inaccurate"):
            return ProgramSolution(status, None, None, None, float("nan"), None, (), (), elapsed,
                                   SOLVER_NAMES[st.solver])
        y = np.array(self._y.value, dtype=float)
        block_duals = tuple(np.asarray(c.dual_value, dtype=float) for c in self._ineq)
        block_slacks = tuple(
            np.asarray(q, dtype=float) - block @ y for (_, block), q in zip(st.blocks, data.q, strict=True)
        )
        value = float(self._problem.value)
        nu = np.zeros(0) if self._eq is None else np.asarray(self._eq.dual_value, dtype=float).ravel()
        if st.objective is Objective.RMS:
            bound, stationarity = _rms_certificate(st, data, y, block_duals, nu)
            epi = None
        else:
            bound, stationarity, epi = _dual_certificate(
                st, data, y, np.asarray(self._up.dual_value, dtype=float).ravel(),
                np.asarray(self._lo.dual_value, dtype=float).ravel(), nu, block_duals)
        return ProgramSolution(status, y, value, bound, stationarity, epi, block_duals, block_slacks, elapsed,
                               SOLVER_NAMES[st.solver], n * k)
