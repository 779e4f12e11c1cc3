"""How many digits of the frame's results can be trusted: a forward-error estimate carried on the result.

A backward-stable solve of K u = f returns the exact answer of a nearby problem; how far that answer is
from the true one grows with the condition of K (Higham, *Accuracy and Stability of Numerical
Algorithms*). The normwise bound, condition x backward error, is far too pessimistic for a frame (its
condition is set by the ratio of axial to bending stiffness of short elements, which the redundant
forces barely feel), so the estimate used is the one of iterative refinement: one more correction
of the solution of the response maps (the linear maps from loads to the redundant reactions, from which
every force follows), its residual computed in extended precision; the correction's size relative to
the solution is the error the double-precision solution still carries. The condition estimate is kept
beside it. A rib made nearly inextensible by a huge area (the usual way to get the classical
assumptions) loses digits silently; this says so, and the checks fail when the estimate passes the
case's tolerance.

Exact statics (three-hinged arches) solves no system: its results are good to round-off.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

UNIT_ROUNDOFF = float(np.finfo(float).eps) / 2.0


@dataclass(frozen=True)
class Accuracy:
    """The estimated relative error of an analysis's forces (dimensionless).

    ``condition``: condition estimate of the scaled stiffness (None: exact statics, nothing solved);
    ``backward_error``: of the solve; ``forward_error``: the refinement estimate (at least the unit
    round-off), or the round-off for exact statics.
    """

    condition: float | None
    backward_error: float
    forward_error: float

    @property
    def digits(self) -> float:
        """About how many significant digits of the results are right."""
        return float(-np.log10(max(self.forward_error, 1e-300)))


def accuracy_of(model) -> Accuracy:
    """The `Accuracy` of results from ``model`` (a `FrameModel`, or None for exact statics)."""
    if model is None or model.maps is None:
        return Accuracy(None, 0.0, UNIT_ROUNDOFF)
    maps = model.maps
    condition = maps.condition_estimate
    if condition is None:
        from formfind.analysis.frame import _condition_estimate

        condition = _condition_estimate(model)
    return Accuracy(float(condition), float(maps.backward_error), max(float(maps.forward_error), UNIT_ROUNDOFF))
