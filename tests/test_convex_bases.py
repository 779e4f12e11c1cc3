"""Remembered simplex bases (`formfind.design.convex.remembered_bases`): a warm start changes the path,
never the answer. The programs are small LPs whose optima are worked by hand."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from formfind.design.convex import ConvexProblem, remembered_bases, solve_convex
from formfind.enums import Solver


def _lp(c: tuple[float, float], b: tuple[float, float]) -> ConvexProblem:
    """max c.z s.t. z1 + 2 z2 <= b1, 3 z1 + z2 <= b2, z >= 0 (as a minimisation)."""
    return ConvexProblem(-np.asarray(c, dtype=float), sp.csr_matrix([[1.0, 2.0], [3.0, 1.0]]), np.asarray(b, float),
                         sp.csr_matrix((0, 2)), np.zeros(0), np.zeros(2), np.full(2, np.inf))


def test_bases_are_kept_by_shape_inside_the_block_and_not_outside():
    bases: dict = {}
    solve_convex(_lp((1.0, 1.0), (4.0, 6.0)), Solver.HIGHS)
    assert not bases
    with remembered_bases(bases):
        first = solve_convex(_lp((1.0, 1.0), (4.0, 6.0)), Solver.HIGHS)
    assert list(bases) == [(2, 2, 0)]
    # by hand: both rows bind, z = (8/5, 6/5), objective -(14/5)
    assert first.z == pytest.approx([1.6, 1.2], abs=1e-12)
    assert first.objective == pytest.approx(-2.8, abs=1e-12)


@pytest.mark.parametrize("c, expected", [((1.0, 0.1), (2.0, 0.0)), ((0.1, 1.0), (0.0, 2.0)), ((1.0, 1.0), (1.6, 1.2))])
def test_a_basis_from_another_program_of_the_same_shape_gives_that_program_its_own_optimum(c, expected):
    """The optima by hand: the vertex (2, 0) for a cost leaning to z1, (0, 2) for one leaning to z2, the
    corner where both rows bind for equal costs; the basis left by the other program never changes them."""
    bases: dict = {}
    with remembered_bases(bases):
        solve_convex(_lp((1.0, 1.0) if c != (1.0, 1.0) else (1.0, 0.1), (4.0, 6.0)), Solver.HIGHS)
        warm = solve_convex(_lp(c, (4.0, 6.0)), Solver.HIGHS)
    cold = solve_convex(_lp(c, (4.0, 6.0)), Solver.HIGHS)
    assert warm.z == pytest.approx(expected, abs=1e-12)
    assert warm.objective == pytest.approx(cold.objective, abs=1e-12)


def test_a_warm_start_that_leaves_highs_without_a_status_is_solved_again_cold(monkeypatch):
    """HiGHS once ended a warm-started form-finding certificate with no status ("Not Set"); the solve is
    then repeated from scratch. Simulated here: a HiGHS whose warm-started run reports no status."""
    import highspy

    real = highspy.Highs
    runs = []

    class Flaky(real):
        warm = False

        def setBasis(self, *args):  # noqa: N802 - HiGHS's own name
            self.warm = True
            return super().setBasis(*args)

        def run(self):
            runs.append(self.warm)
            return super().run() if not self.warm else highspy.HighsStatus.kError

        def getModelStatus(self):  # noqa: N802
            return highspy.HighsModelStatus.kNotset if self.warm else super().getModelStatus()

    basis = solve_convex(_lp((1.0, 0.1), (4.0, 6.0)), Solver.HIGHS).basis
    monkeypatch.setattr(highspy, "Highs", Flaky)
    solution = solve_convex(_lp((1.0, 1.0), (4.0, 6.0)), Solver.HIGHS, basis)
    assert runs == [True, False]  # the warm run failed, the cold one answered
    assert solution.z == pytest.approx([1.6, 1.2], abs=1e-12)
