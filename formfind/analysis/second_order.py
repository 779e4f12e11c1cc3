"""Second-order (P-Delta) analysis of the frame model: equilibrium on the deflected arch.

For each load state the tangent stiffness K + K_G(N) (the geometric stiffness of the current element
axial forces, as in `formfind.analysis.buckling`) is factorised and solved for the displacements;
the internal forces then follow from exact equilibrium of the part left of each cut on the *deflected*
axis (stations moved by their displacements, tangents turned by their rotations), with the redundant
reactions from the solve and the others completed by statics. The element axial forces are updated
from that equilibrium and the loop repeats until they change by less than ``tol`` (relative).

This is the geometrically nonlinear analysis of moderate rotations (the beam-column theory behind
the amplification 1 / (1 - 1/alpha_cr): Timoshenko & Gere, *Theory of Elastic Stability*, ch. 1;
EN 1993-1-1 clause 5.2.2). Loads keep their direction (gravity). It is only meaningful below the
buckling load: a state at or above it has no stable equilibrium and is reported as an error.

Signs and shapes follow `formfind.analysis.response`; the response's abscissae are the undeflected
stations, so first- and second-order results line up station by station.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from formfind.analysis.buckling import axial_from_reactions, element_axial_forces, geometric_blocks
from formfind.analysis.frame import (
    RESIDUAL_RTOL,
    FrameModel,
    _complete,
    _prescribed,
    load_vectors,
)
from formfind.analysis.response import Response
from formfind.analysis.statics import cut_resultants, internal_forces
from formfind.enums import SupportKind
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

AXIAL_RTOL = 1e-8  # the loop stops when element axial forces change by less than this (relative)
MAX_ITERATIONS = 50


@dataclass(frozen=True, eq=False)
class SecondOrderResult:
    """Second-order response of a set of load states.

    Attributes:
        response: N, V, M, reactions and displacements on the deflected arch (engine "second-order").
        iterations: (states,) P-Delta iterations each state needed.
        change: (states,) relative change of the axial forces in the last iteration.
    """

    response: Response
    iterations: np.ndarray
    change: np.ndarray


def _deflected(axis: Axis, u: np.ndarray) -> Axis:
    """The axis with every station moved by (ux, uy) and its tangent turned by the rotation."""
    n = axis.count
    x = axis.x + u[0 : 3 * n : 3]
    y = axis.y + u[1 : 3 * n : 3]
    theta = axis.theta + u[2 : 3 * n : 3]
    if not np.all(np.diff(x) > 0):
        raise AnalysisError("second-order analysis: the deflected arch folds over itself (displacements too large)")
    return Axis(x, y, theta)


def _moved_loads(axis: Axis, deflected: Axis, loads: StationLoads) -> StationLoads:
    """The same loads on the deflected axis: densities per element unchanged, point loads kept at
    their parameter along their element."""
    if not loads.point_x.size:
        return loads
    e = np.clip(np.searchsorted(axis.x, loads.point_x, side="right") - 1, 0, axis.count - 2)
    t = (loads.point_x - axis.x[e]) / (axis.x[e + 1] - axis.x[e])
    px = deflected.x[e] + t * (deflected.x[e + 1] - deflected.x[e])
    return StationLoads(loads.names, loads.groups, loads.dist, loads.point_state, px, loads.point_force,
                        loads.temperature_uniform_C, loads.temperature_difference_C, loads.support_movement)


class _Tangent:
    """K + K_G(N) written straight into the sparsity patterns of its blocks (free-free, scaled for the
    LU; free-fixed; fixed rows), so an iteration costs no sparse slicing or conversion.

    The geometric stiffness lives on the element pattern, a subset of K's (K may also hold a tie).
    """

    def __init__(self, model: FrameModel) -> None:
        K = model.stiffness.tocsc(copy=True)
        K.sum_duplicates()
        K.sort_indices()
        n = K.shape[0]
        self.base = K.data.copy()
        self.nnz = K.nnz
        dofs = model.element_dofs
        rows = np.repeat(dofs, 6, axis=1).ravel().astype(np.int64)
        cols = np.tile(dofs, (1, 6)).ravel().astype(np.int64)
        entry_col = np.repeat(np.arange(n, dtype=np.int64), np.diff(K.indptr))
        self.position = np.searchsorted(entry_col * n + K.indices, cols * n + rows)
        numbered = sp.csc_matrix((np.arange(1, K.nnz + 1, dtype=float), K.indices, K.indptr), shape=K.shape)

        def block(r: np.ndarray, c: np.ndarray):
            b = numbered[r][:, c].tocsc()
            b.sort_indices()
            return b.indices.copy(), b.indptr.copy(), (b.data - 1).astype(np.int64), b.shape

        self.ff = block(model.free, model.free)
        self.fr = block(model.free, model.fixed)
        self.r = block(model.fixed, np.arange(n))
        d = model._scale
        ff_cols = np.repeat(np.arange(self.ff[3][1]), np.diff(self.ff[1]))
        self.ff_scale = d[self.ff[0]] * d[ff_cols]

    def blocks(self, model: FrameModel, axial: np.ndarray):
        """(K_ff, scaled K_ff, K_fr, K_r) of K + K_G(axial)."""
        data = self.base + np.bincount(self.position, geometric_blocks(model, axial).ravel(), minlength=self.nnz)

        def make(spec, values=None):
            indices, indptr, where, shape = spec
            return sp.csc_matrix((data[where] if values is None else values, indices, indptr), shape=shape)

        k_ff = make(self.ff)
        scaled = make(self.ff, k_ff.data * self.ff_scale)
        return k_ff, scaled, make(self.fr), make(self.r)


def _solve_state(model: FrameModel, one: StationLoads, tol: float, max_iterations: int, tangent: _Tangent):
    f = load_vectors(model, one)[0]
    free, fixed = model.free, model.fixed
    u = np.zeros(model.dof_count)
    u[fixed] = _prescribed(model, one)[0]
    axial = element_axial_forces(model, one)[0]
    scale_n = max(float(np.abs(axial).max()), 1e-300)
    change = np.inf
    d = model._scale
    for iteration in range(1, max_iterations + 1):  # noqa: B007 - the count is returned
        k_ff, scaled, k_fr, k_r = tangent.blocks(model, axial)
        rhs = f[free] - k_fr @ u[fixed]
        try:
            # a symmetric ordering and no row pivoting: U's diagonal then has the signs of the
            # eigenvalues (Sylvester's law of inertia), which tells a state beyond buckling
            lu = splu(scaled, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        except RuntimeError:
            raise AnalysisError(f"second-order analysis of {one.names[0]!r}: the tangent stiffness is singular "
                                "(the state is at its buckling load)") from None
        negative = int(np.sum(lu.U.diagonal() < 0))
        if negative:
            raise AnalysisError(f"second-order analysis of {one.names[0]!r}: the tangent stiffness has {negative} "
                                "negative eigenvalue(s); the state is beyond its buckling load")
        u_f = d * lu.solve(d * rhs)
        residual = np.abs(rhs - k_ff @ u_f).max()
        denom = abs(k_ff).sum(axis=1).max() * np.abs(u_f).max() + np.abs(rhs).max()
        if denom > 0 and not residual / denom <= RESIDUAL_RTOL:
            raise AnalysisError(f"second-order solve of {one.names[0]!r} is not trustworthy: backward error "
                                f"{residual / denom:.2e} > {RESIDUAL_RTOL:.0e}")
        u[free] = u_f
        reactions_fe = k_r @ u - f[fixed]
        deflected = _deflected(model.axis, u)
        moved = _moved_loads(model.axis, deflected, one)
        tie = _tie_force(model, u)
        left = _left_reaction(model, deflected, moved, reactions_fe, tie)[0]
        dx, dy = np.diff(deflected.x), np.diff(deflected.y)
        chord = np.hypot(dx, dy)
        new_axial = axial_from_reactions(deflected, moved, left, dx / chord, dy / chord)[0]
        change = float(np.abs(new_axial - axial).max() / scale_n)
        axial = new_axial
        if not np.isfinite(change):
            break
        if change <= tol:
            break
    if not change <= tol:
        raise AnalysisError(f"second-order analysis of {one.names[0]!r} did not converge in {max_iterations} "
                            f"iterations (axial forces still change by {change:.1e}); the state is likely at or "
                            "beyond its buckling load")
    return u, reactions_fe, tie, deflected, moved, iteration, change


def _tie_force(model: FrameModel, u: np.ndarray) -> float:
    if model.kind is not SupportKind.TIED:
        return 0.0
    n = model.axis.count
    direction = model.maps.tie_direction
    stretch = (u[3 * (n - 1) : 3 * (n - 1) + 2] - u[0:2]) @ direction
    length = float(np.hypot(model.axis.x[-1] - model.axis.x[0], model.axis.y[-1] - model.axis.y[0]))
    return float(model.tie_EA_kN * stretch / length)


def _left_reaction(model: FrameModel, deflected: Axis, loads: StationLoads, reactions_fe: np.ndarray, tie: float):
    """Reactions (1, 2, 3): redundants from the solve, the rest by statics on the deflected axis; and
    the left end's force (1, 2) including the tie's pull."""
    n = model.axis.count
    flat = np.zeros((1, 6))
    for j, dof in enumerate(model.fixed):
        side, comp = (0, dof) if dof < 3 else (1, dof - 3 * (n - 1))
        flat[0, 3 * side + comp] = reactions_fe[j]
    cuts = cut_resultants(deflected, loads)
    reactions = _complete(deflected, model.maps, cuts, flat.reshape(1, 2, 3))
    left = reactions[:, 0, :2].copy()
    if model.kind is SupportKind.TIED:
        left += tie * model.maps.tie_direction
    return left, reactions, cuts


def second_order(model: FrameModel, loads: StationLoads, tol: float = AXIAL_RTOL,
                 max_iterations: int = MAX_ITERATIONS) -> SecondOrderResult:
    """P-Delta analysis of every state of ``loads`` on ``model`` (see the module docstring).

    Raises:
        AnalysisError: if a state does not converge (at or beyond buckling) or a solve fails its check.
    """
    if model.axially_rigid:
        raise AnalysisError("second-order (P-Delta) analysis needs the rib's axial stiffness: set [analysis] "
                            "axially_rigid = false, or [check] second_order = false and judge stability by the "
                            "buckling factor")
    count = loads.count
    n = model.axis.count
    shape = (count, n)
    N, V, M, N_left, V_left = (np.zeros(shape) for _ in range(5))
    reactions = np.zeros((count, 2, 3))
    tie_force = np.zeros(count)
    disp = np.zeros((count, n, 3))
    iterations = np.zeros(count, dtype=int)
    change = np.zeros(count)
    tangent = _Tangent(model)
    for k in range(count):
        one = loads.select([k])
        u, reactions_fe, tie, deflected, moved, iterations[k], change[k] = _solve_state(model, one, tol, max_iterations,
                                                                                        tangent)
        left, r, cuts = _left_reaction(model, deflected, moved, reactions_fe, tie)
        forces = internal_forces(deflected, cuts, left, r[:, 0, 2])
        for arr, value in zip((N, V, M, N_left, V_left), forces, strict=True):
            arr[k] = value[0]
        reactions[k] = r[0]
        tie_force[k] = tie
        disp[k] = np.stack([u[0 : 3 * n : 3], u[1 : 3 * n : 3], u[2 : 3 * n : 3]], axis=-1)
    response = Response(loads.names, loads.groups, model.axis.x, N, V, M, N_left, V_left, reactions, tie_force,
                        disp, "second-order")
    return SecondOrderResult(response, iterations, change)
