"""Speed of the form-finding programs, measured side by side in one run.

Three-hinged minimax with a coupling constraint (slope bound), assembled as sparse arrays and solved
directly (constraint generation; HiGHS and Clarabel), against the same full LP hand-built with sparse
matrices for scipy's linprog; the exact per-station method without coupling; a warm-started re-solve
of a program of the same shape (what the sequential method does from step to step). Moments are
those of real three-hinged parabolic arches under random load states.

Run: python3 benchmarks/bench_shape.py
"""

from __future__ import annotations

import time

import numpy as np
import scipy.sparse as sp
from scipy.optimize import linprog

from formfind.analysis.sensitivity import MomentModel
from formfind.analysis.statics import three_hinged
from formfind.design.program import ProgramData, Structure, solve_program
from formfind.design.separable import per_station_minimax
from formfind.enums import Objective, Solver
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, StationLoads, case_station_loads
from formfind.model.section import Section


def data_for(n: int, k: int, seed: int = 0):
    rng = np.random.default_rng(seed)
    curve = Parabola(Chord(40.0), 8.0)
    axis = Axis.from_curve(curve, place_stations(curve, n))
    section = Section(0.05, 2e-3, 0.6, 2.1e8).at(axis)
    cases = [LoadCase(f"c{j}", (LineLoad(0.0, 40.0, 20.0, 20.0), LineLoad(0.0, float(rng.uniform(5, 35)), 8.0, 8.0),
                                PointLoad(float(rng.uniform(1, 39)), 40.0))) for j in range(k)]
    loads = StationLoads.concatenate([case_station_loads(c, axis, section) for c in cases], n - 1)
    r = three_hinged(axis, loads, n // 2)
    h = np.repeat(r.thrust[:, None], n, axis=1)
    a = r.M + h * axis.y[None, :]
    return axis, a, h


def structure(axis: Axis, k: int, solver: Solver) -> tuple[Structure, tuple[np.ndarray, ...], np.ndarray]:
    n = axis.count
    eye = sp.identity(n, format="csr")
    equality = eye[[0, n // 2, n - 1]]
    g = axis.y[[0, n // 2, n - 1]]
    d1 = sp.diags([-np.ones(n - 1), np.ones(n - 1)], [0, 1], shape=(n - 1, n)).tocsr()
    dx = np.diff(axis.x)
    blocks = (("slope", sp.vstack([d1, -d1]).tocsr()),)
    q = (np.concatenate([1.2 * dx, 1.2 * dx]),)
    return Structure(Objective.MINIMAX, n, k, equality, blocks, solver), q, g


def timed(fn, repeat=3):
    best = np.inf
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def linprog_full(axis, a, h, q, g):
    n = axis.count
    k = a.shape[0]
    rows = np.arange(k * n)
    cols = np.tile(np.arange(n), k)
    hm = sp.csr_matrix((h.ravel(), (rows, cols)), shape=(k * n, n))
    ones = sp.csr_matrix(np.ones((k * n, 1)))
    d1 = sp.diags([-np.ones(n - 1), np.ones(n - 1)], [0, 1], shape=(n - 1, n)).tocsr()
    a_ub = sp.vstack([sp.hstack([-hm, -ones]), sp.hstack([hm, -ones]),
                      sp.hstack([sp.vstack([d1, -d1]), sp.csr_matrix((2 * (n - 1), 1))])]).tocsr()
    b_ub = np.concatenate([-a.ravel(), a.ravel(), q[0]])
    a_eq = sp.hstack([sp.identity(n, format="csr")[[0, n // 2, n - 1]], sp.csr_matrix((3, 1))])
    c = np.zeros(n + 1)
    c[-1] = 1.0
    res = linprog(c, A_ub=a_ub, b_ub=b_ub, A_eq=a_eq, b_eq=g, bounds=[(None, None)] * (n + 1), method="highs")
    return res.fun


def main() -> None:
    print(f"{'stations':>8} {'states':>6} {'Clarabel':>15} {'HiGHS':>12} {'linprog full':>13} "
          f"{'rows used':>10} {'per-station':>12}")
    for n, k in ((100, 10), (400, 20), (800, 40), (1600, 80)):
        axis, a, h = data_for(n + 1, k)
        times = {}
        values = {}
        for solver in (Solver.CLARABEL, Solver.HIGHS):
            st, q, g = structure(axis, k, solver)
            data = program_data(axis, a, h, g, q)
            times[solver], sol = timed(lambda st=st, data=data: solve_program(st, data, axis.y, select=False))
            values[solver] = sol.value
        t_lp, v_lp = timed(lambda: linprog_full(axis, a, h, q, g), 1)
        lower = np.full(n + 1, -1e3)
        upper = np.full(n + 1, 1e3)
        lower[[0, -1]] = upper[[0, -1]] = 0.0
        lower[n // 2] = upper[n // 2] = axis.y[n // 2]
        t_sep, _ = timed(lambda: per_station_minimax(a, h, lower, upper), 5)
        assert abs(values[Solver.CLARABEL] - v_lp) <= 1e-6 * abs(v_lp), (values, v_lp)
        print(f"{n + 1:>8} {k:>6} {1e3 * times[Solver.CLARABEL]:>12.1f} ms {1e3 * times[Solver.HIGHS]:>9.1f} ms "
              f"{1e3 * t_lp:>10.1f} ms {sol.rows_used:>10} {1e3 * t_sep:>9.2f} ms")
    # a warm-started re-solve of a program of the same shape, at 400 x 20
    axis, a, h = data_for(401, 20)
    st, q, g = structure(axis, 20, Solver.HIGHS)
    t0 = time.perf_counter()
    first = solve_program(st, program_data(axis, a, h, g, q), axis.y, select=False)
    t_first = time.perf_counter() - t0
    t_re, _ = timed(lambda: solve_program(st, program_data(axis, a * 1.01, h, g, q), axis.y, select=False,
                                          warm=first.basis))
    print(f"400 x 20: first solve {1e3 * t_first:.1f} ms, warm-started re-solve {1e3 * t_re:.1f} ms")


def program_data(axis: Axis, a: np.ndarray, h: np.ndarray, g: np.ndarray, q) -> ProgramData:
    n = axis.count
    model = MomentModel.diagonal(axis.x, np.zeros(n), a, h)
    return ProgramData(model=model, c=np.ones_like(a), w=np.ones(n), g=g, q=q, lower=np.full(n, -np.inf),
                       upper=np.full(n, np.inf))


if __name__ == "__main__":
    main()
