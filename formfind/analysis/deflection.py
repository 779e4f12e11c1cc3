"""Deflections of the arch: the displacement of every station under every state, from the frame model.

The frame model (`formfind.analysis.frame`) is solved for full displacement vectors; a three-hinged
arch uses the same model with its crown hinge as a release (the exact statics engine gives forces
only). Displacements are those of the stations (x right, y up, m), first order, on the perfect arch.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.engine import CaseAnalysis, frame_model
from formfind.analysis.frame import solve_displacements


@dataclass(frozen=True, eq=False)
class Deflections:
    """Station displacements of a set of load states.

    Attributes:
        names, groups: of each state (states,).
        x: station abscissae (stations,), m.
        ux, uy: (states, stations) horizontal (right) and vertical (up) displacements, m.
    """

    names: tuple[str, ...]
    groups: tuple[str, ...]
    x: np.ndarray
    ux: np.ndarray
    uy: np.ndarray

    def envelope(self, group: str) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """(uy max, uy min, ux max, ux min) over the group's states at every station, m."""
        k = [i for i, g in enumerate(self.groups) if g == group]
        return self.uy[k].max(axis=0), self.uy[k].min(axis=0), self.ux[k].max(axis=0), self.ux[k].min(axis=0)


def deflections(analysis: CaseAnalysis, combinations: bool = True) -> Deflections:
    """The displacements of the analysis's combination states (or of its load cases)."""
    case = analysis.case
    model = analysis.frame if analysis.frame is not None else frame_model(case, analysis.axis, analysis.section)
    loads = analysis.loads.combinations if combinations else analysis.loads.cases
    n = analysis.axis.count
    if loads.count == 0:
        empty = np.zeros((0, n))
        return Deflections((), (), analysis.axis.x, empty, empty)
    u = solve_displacements(model, loads)
    return Deflections(loads.names, loads.groups, analysis.axis.x, u[:, 0:3 * n:3], u[:, 1:3 * n:3])
