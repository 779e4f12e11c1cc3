"""Linear and convex quadratic programs, solved directly by HiGHS or Clarabel, multipliers in one sign.

The problem, with z the variables:

    minimise    1/2 z' P z + c' z
    subject to  A_ub z <= b_ub        multipliers mu >= 0
                A_eq z  = b_eq        multipliers nu (free)
                lower <= z <= upper   multipliers zeta_lo >= 0, zeta_up >= 0 (infinite bounds allowed)

and the multipliers are those of the Lagrangian

    L = 1/2 z'Pz + c'z + mu'(A_ub z - b_ub) + nu'(A_eq z - b_eq) + zeta_lo'(lower - z) + zeta_up'(z - upper),

so that at the optimum P z + c + A_ub' mu + A_eq' nu - zeta_lo + zeta_up = 0, whichever solver ran.
Both solvers are called on sparse arrays built once by the caller: no modelling layer in between, so a
program of a few thousand rows costs milliseconds. HiGHS (simplex) returns vertex solutions and
takes a basis to warm-start a program of the same size; Clarabel (interior point) returns the
analytic centre of a face. Solvers never print: HiGHS's banner, written from C++ to file descriptor
1 whatever its options say, is sent to /dev/null.

A caller that solves a run of nearby problems (the live page: each answer re-finds the axis after a
small change) can hold their bases across calls with `remembered_bases`: inside it, a program solved by
HiGHS without a basis of its own starts from the last optimal basis of a program of the same shape.
The LP's optimum is the same (a warm start changes the path, not the answer, up to the solver's
tolerance), though a degenerate LP may end on another optimal vertex.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from formfind.enums import Solver, SolveStatus


@dataclass(frozen=True, eq=False)
class ConvexProblem:
    """A linear or convex quadratic program (module docstring). ``P`` None means an LP."""

    c: np.ndarray
    A_ub: sp.csr_matrix
    b_ub: np.ndarray
    A_eq: sp.csr_matrix
    b_eq: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    P: sp.spmatrix | None = None

    @property
    def size(self) -> int:
        """Number of variables."""
        return int(self.c.size)


@dataclass(frozen=True, eq=False)
class ConvexSolution:
    """The outcome of one solve; ``z`` and the multipliers are None unless a solution is present.

    Attributes:
        status: `SolveStatus`.
        z: the variables; objective: the objective value at z.
        mu, nu: multipliers of the inequality and equality rows (signs of the module docstring).
        zeta_lo, zeta_up: multipliers of the lower and upper variable bounds (>= 0).
        solver: "HiGHS" or "Clarabel"; time_s: wall time of the solve, s; message: the solver's status.
        basis: HiGHS's final basis (opaque), to warm-start the next program of the same size.
    """

    status: SolveStatus
    z: np.ndarray | None
    objective: float
    mu: np.ndarray | None
    nu: np.ndarray | None
    zeta_lo: np.ndarray | None
    zeta_up: np.ndarray | None
    solver: str
    time_s: float
    message: str
    basis: object | None = None

    @property
    def solved(self) -> bool:
        """True if a solution is present (optimal, or optimal to a reduced accuracy)."""
        return self.z is not None


@contextlib.contextmanager
def silent_stdout():
    """Send file descriptor 1 to /dev/null for the duration (solvers must not print)."""
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


_REMEMBERED: contextvars.ContextVar[dict | None] = contextvars.ContextVar("formfind_bases", default=None)


@contextlib.contextmanager
def remembered_bases(bases: dict) -> Iterator[None]:
    """Within the block, HiGHS programs without a basis of their own start from the last optimal basis
    of a program of the same shape kept in ``bases`` (the caller's dict, kept across blocks), and
    leave theirs there. Scoped to the current thread or task."""
    token = _REMEMBERED.set(bases)
    try:
        yield
    finally:
        _REMEMBERED.reset(token)


def solve_convex(problem: ConvexProblem, solver: Solver = Solver.HIGHS, warm_basis: object | None = None) -> ConvexSolution:
    """Solve ``problem`` with HiGHS or Clarabel (``AUTO``: HiGHS). Quadratic programs always go to
    Clarabel: HiGHS's active-set QP stops with an error on the form-finding QPs, whose Hessian is
    singular on every variable but the ordinates.

    Never raises for an infeasible, unbounded or failed solve: the status says so.
    """
    if solver is Solver.AUTO or problem.P is not None:
        solver = Solver.HIGHS if problem.P is None else Solver.CLARABEL
    if solver is Solver.HIGHS:
        bases = _REMEMBERED.get()
        if bases is None or problem.P is not None:
            return _highs(problem, warm_basis)
        shape = (problem.size, problem.b_ub.size, problem.b_eq.size)
        solution = _highs(problem, warm_basis if warm_basis is not None else bases.get(shape))
        if solution.basis is not None:
            bases[shape] = solution.basis
        return solution
    return _clarabel(problem)


# ------------------------------------------------------------------------------------------ HiGHS
def _highs(problem: ConvexProblem, warm_basis: object | None) -> ConvexSolution:
    import highspy

    started = time.perf_counter()
    inf = np.inf
    n = problem.size
    a = sp.vstack([problem.A_ub, problem.A_eq], format="csc")
    lp = highspy.HighsLp()
    lp.num_col_ = n
    lp.num_row_ = a.shape[0]
    lp.col_cost_ = np.ascontiguousarray(problem.c, dtype=float)
    lp.col_lower_ = np.ascontiguousarray(problem.lower, dtype=float)
    lp.col_upper_ = np.ascontiguousarray(problem.upper, dtype=float)
    lp.row_lower_ = np.concatenate([np.full(problem.b_ub.size, -inf), problem.b_eq]).astype(float)
    lp.row_upper_ = np.concatenate([problem.b_ub, problem.b_eq]).astype(float)
    lp.a_matrix_.format_ = highspy.MatrixFormat.kColwise
    lp.a_matrix_.start_ = a.indptr.astype(np.int32)
    lp.a_matrix_.index_ = a.indices.astype(np.int32)
    lp.a_matrix_.value_ = a.data.astype(float)
    with silent_stdout():
        h = highspy.Highs()
        h.setOptionValue("output_flag", False)
        # no "threads" option: HiGHS keeps one scheduler per process, and asking a number other than the
        # one it was started with (by another HiGHS user, cvxpy's thrust-line programs among them) makes
        # every later run fail; the simplex runs serially whatever the option says
        if problem.P is None:
            h.passModel(lp)
        else:
            model = highspy.HighsModel()
            model.lp_ = lp
            lower = sp.tril(sp.csc_matrix(problem.P), format="csc")
            hess = highspy.HighsHessian()
            hess.dim_ = n
            hess.format_ = highspy.HessianFormat.kTriangular
            hess.start_ = lower.indptr.astype(np.int32)
            hess.index_ = lower.indices.astype(np.int32)
            hess.value_ = lower.data.astype(float)
            model.hessian_ = hess
            h.passModel(model)
        if (warm_basis is not None and problem.P is None and len(warm_basis.col_status) == n
                and len(warm_basis.row_status) == a.shape[0]):
            h.setBasis(warm_basis)  # the previous program's optimal basis: a few pivots, not hundreds
        h.run()
        status = h.getModelStatus()
        text = h.modelStatusToString(status)
        solution = h.getSolution()
        info = h.getInfo()
        basis = h.getBasis() if problem.P is None else None
    elapsed = time.perf_counter() - started
    ms = highspy.HighsModelStatus
    if status == ms.kOptimal:
        kind = SolveStatus.OPTIMAL
    elif status in (ms.kInfeasible,):
        kind = SolveStatus.INFEASIBLE
    elif status in (ms.kUnbounded, ms.kUnboundedOrInfeasible):
        kind = SolveStatus.UNBOUNDED if status == ms.kUnbounded else SolveStatus.INFEASIBLE
    else:
        kind = SolveStatus.FAILED
    if kind is SolveStatus.FAILED and warm_basis is not None:
        # a basis of another program of the same shape can leave HiGHS with no status at all ("Not
        # Set", seen on a form-finding certificate): solve again from scratch
        return _highs(problem, None)
    if kind is not SolveStatus.OPTIMAL or not solution.value_valid:
        return ConvexSolution(kind, None, float("nan"), None, None, None, None, "HiGHS", elapsed, text)
    z = np.asarray(solution.col_value, dtype=float)
    row_dual = np.asarray(solution.row_dual, dtype=float)
    col_dual = np.asarray(solution.col_dual, dtype=float)
    m_ub = problem.b_ub.size
    # HiGHS: c + P z - A' y - d = 0, so mu = -y on <= rows, nu = -y, and d splits by sign into bounds
    return ConvexSolution(
        status=kind,
        z=z,
        objective=float(info.objective_function_value),
        mu=np.maximum(-row_dual[:m_ub], 0.0),
        nu=-row_dual[m_ub:],
        zeta_lo=np.maximum(col_dual, 0.0),
        zeta_up=np.maximum(-col_dual, 0.0),
        solver="HiGHS",
        time_s=elapsed,
        message=text,
        basis=basis,
    )


# --------------------------------------------------------------------------------------- Clarabel
def _clarabel(problem: ConvexProblem) -> ConvexSolution:
    import clarabel

    started = time.perf_counter()
    n = problem.size
    eye = sp.identity(n, format="csr")
    has_lo = np.isfinite(problem.lower)
    has_up = np.isfinite(problem.upper)
    a = sp.vstack([problem.A_eq, problem.A_ub, -eye[has_lo], eye[has_up]], format="csc")
    b = np.concatenate([problem.b_eq, problem.b_ub, -problem.lower[has_lo], problem.upper[has_up]]).astype(float)
    m_eq, m_ub = problem.b_eq.size, problem.b_ub.size
    cones = []
    if m_eq:
        cones.append(clarabel.ZeroConeT(m_eq))
    if b.size - m_eq:
        cones.append(clarabel.NonnegativeConeT(b.size - m_eq))
    p = sp.csc_matrix((n, n)) if problem.P is None else sp.triu(sp.csc_matrix(problem.P), format="csc")
    settings = clarabel.DefaultSettings()
    settings.verbose = False
    settings.max_threads = 1
    try:
        solver = clarabel.DefaultSolver(p, np.ascontiguousarray(problem.c, dtype=float), a, b, cones, settings)
        result = solver.solve()
    except Exception as exc:  # the binding raises plain exceptions on bad data
        return ConvexSolution(SolveStatus.FAILED, None, float("nan"), None, None, None, None, "Clarabel",
                              time.perf_counter() - started, str(exc))
    elapsed = time.perf_counter() - started
    text = str(result.status)
    st = clarabel.SolverStatus
    if result.status == st.Solved:
        kind = SolveStatus.OPTIMAL
    elif result.status in (st.AlmostSolved, st.InsufficientProgress, st.MaxIterations, st.MaxTime):
        kind = SolveStatus.INACCURATE
    elif result.status in (st.PrimalInfeasible, st.AlmostPrimalInfeasible):
        kind = SolveStatus.INFEASIBLE
    elif result.status in (st.DualInfeasible, st.AlmostDualInfeasible):
        kind = SolveStatus.UNBOUNDED
    else:
        kind = SolveStatus.FAILED
    z = np.asarray(result.x, dtype=float)
    if kind not in (SolveStatus.OPTIMAL, SolveStatus.INACCURATE) or not np.all(np.isfinite(z)):
        return ConvexSolution(kind if kind is not SolveStatus.INACCURATE else SolveStatus.FAILED, None, float("nan"),
                              None, None, None, None, "Clarabel", elapsed, text)
    duals = np.asarray(result.z, dtype=float)
    nu = duals[:m_eq]
    mu = np.maximum(duals[m_eq:m_eq + m_ub], 0.0)
    zeta_lo = np.zeros(n)
    zeta_up = np.zeros(n)
    zeta_lo[has_lo] = np.maximum(duals[m_eq + m_ub:m_eq + m_ub + int(has_lo.sum())], 0.0)
    zeta_up[has_up] = np.maximum(duals[m_eq + m_ub + int(has_lo.sum()):], 0.0)
    objective = float(problem.c @ z) + (0.5 * float(z @ (problem.P @ z)) if problem.P is not None else 0.0)
    return ConvexSolution(kind, z, objective, mu, nu, zeta_lo, zeta_up, "Clarabel", elapsed, text)


def lagrangian_bound(problem: ConvexProblem, solution: ConvexSolution) -> tuple[float, float]:
    """The Lagrangian dual value of an LP at the solution's multipliers, and its stationarity residual.

    For an LP the dual function at (mu, nu, zeta) is -mu'b_ub - nu'b_eq + zeta_lo'lower - zeta_up'upper
    where the reduced costs c + A_ub'mu + A_eq'nu - zeta_lo + zeta_up vanish: a lower bound on every
    feasible objective. The residual (infinity norm of the reduced costs, relative to the largest term
    in them) says how far the multipliers are from making it exact.
    """
    if not solution.solved:
        return float("nan"), float("nan")
    mu, nu, lo, up = solution.mu, solution.nu, solution.zeta_lo, solution.zeta_up
    terms = [np.abs(problem.c), np.abs(problem.A_ub.T @ mu), np.abs(problem.A_eq.T @ nu), lo, up]
    reduced = problem.c + problem.A_ub.T @ mu + problem.A_eq.T @ nu - lo + up
    scale = max(float(np.max(np.maximum.reduce(terms))), 1e-300)
    finite_lo = np.isfinite(problem.lower)
    finite_up = np.isfinite(problem.upper)
    bound = (-float(mu @ problem.b_ub) - float(nu @ problem.b_eq) + float(lo[finite_lo] @ problem.lower[finite_lo])
             - float(up[finite_up] @ problem.upper[finite_up]))
    return bound, float(np.abs(reduced).max() / scale)
