"""Linear in-plane buckling of an arch: load factors and mode shapes.

For a reference load state, a linear solve gives the element axial forces N_e; the geometric
stiffness K_G(N) of the beam-column elements then defines the eigenproblem

    (K + lambda (K_G + K_L)) phi = 0,

whose smallest positive lambda is the factor on the reference load at which the arch buckles.

Loads either keep their direction while the arch deflects (``follow_axis=False``, the default:
gravity loads) or, for distributed pressure normal to the axis, stay normal to the deflected axis
(``follow_axis=True``, hydrostatic or radial pressure). The second adds the load stiffness K_L of the
pressure densities. The classic circular-arch results (Timoshenko & Gere, *Theory of Elastic
Stability*, ch. 7) assume pressure normal to the deformed axis; a model whose loads keep their
direction gives noticeably higher factors, so compare like with like.

Solved as mu = 1 / lambda of  -(K_G + K_L) phi = mu K phi  with K positive definite, by ARPACK's
generalised symmetric mode on the free dofs (K factorised once); the largest mu give the smallest
positive lambda, and a negative mu (a factor that would need the loads reversed) is discarded. For an
axially rigid rib (lengths held by constraints, `formfind.analysis.frame`) the same mu are the
eigenvalues of K_c^-1 (-(K_G + K_L)), K_c^-1 the constrained inverse, found by ARPACK's general mode
(the reduced pencil is symmetric definite, so they are real; round-off imaginary parts are dropped).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigs, eigsh

from formfind.analysis.frame import FrameModel, rotation_matrices, solve
from formfind.analysis.statics import cut_resultants
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads


@dataclass(frozen=True, eq=False)
class BucklingResult:
    """Buckling of one reference load state.

    Attributes:
        state: name of the reference load state.
        group: the load case or combination that state belongs to.
        factors: load factors lambda on the reference state, ascending, positive (dimensionless).
        modes: (modes, stations, 3) nodal mode shapes (ux, uy, rotation), each scaled to a largest
            translation of 1.
        symmetry: for each mode, "symmetric", "antisymmetric" or "unsymmetric" (about midspan).
        follow_axis: whether the pressure loads were taken as following the deflected axis.
        axial_force: element axial forces of the reference state (elements,), kN, tension positive.
    """

    state: str
    group: str
    factors: np.ndarray
    modes: np.ndarray
    symmetry: tuple[str, ...]
    follow_axis: bool
    axial_force: np.ndarray

    @property
    def critical_factor(self) -> float:
        """The smallest positive load factor (inf if the state puts nothing in compression)."""
        return float(self.factors[0]) if self.factors.size else float("inf")


def element_axial_forces(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Axial force along each chord element (states, elements), kN, tension positive.

    From the resultant of the part left of each element's midpoint projected on the chord.
    """
    response = solve(model, loads, displacements=False)
    axis = model.axis
    reaction = response.reactions[:, 0, :2].copy()
    if response.tie_force.any():
        tdx, tdy = axis.x[-1] - axis.x[0], axis.y[-1] - axis.y[0]
        tl = np.hypot(tdx, tdy)
        reaction += response.tie_force[:, None] * np.array([tdx / tl, tdy / tl])
    return axial_from_reactions(axis, loads, reaction, model.cos, model.sin)


def axial_from_reactions(axis: Axis, loads: StationLoads, left_force: np.ndarray, cos: np.ndarray,
                         sin: np.ndarray) -> np.ndarray:
    """Element axial forces (states, elements), kN, tension positive, from the force (states, 2) that
    the left support (and a tie) applies to the arch: the mean over the element of the resultant of
    the part left of each point, projected on the chord (direction ``cos``, ``sin``).

    The mean (rather than the value at one point of the element) moves continuously with a load inside
    the element: a point load at parameter t adds (1 - t) of itself, a linear density (f_a, f_b) adds
    f_a / 3 + f_b / 6. A value taken at the midpoint jumped by a whole point load as the load crossed
    it, which a second-order iteration on a slightly moved axis could not settle.
    """
    cuts = cut_resultants(axis, loads)
    fa, fb = loads.dist[:, :, 0, :], loads.dist[:, :, 1, :]
    mean = fa / 3.0 + fb / 6.0  # integral over s of the density's integral over t in [0, s]
    left = cuts.force_right[:, :-1] + mean + left_force[:, None, :]
    if loads.point_x.size:  # point loads inside their element (one at its start is in force_right)
        e = np.clip(np.searchsorted(axis.x, loads.point_x, side="right") - 1, 0, axis.count - 2)
        t = np.clip((loads.point_x - axis.x[e]) / (axis.x[e + 1] - axis.x[e]), 0.0, 1.0)
        inner = t > 1e-12
        np.add.at(left, (loads.point_state[inner], e[inner]), (1.0 - t[inner])[:, None] * loads.point_force[inner])
    return -(left[..., 0] * cos + left[..., 1] * sin)


def geometric_stiffness(model: FrameModel, axial: np.ndarray) -> sp.csc_matrix:
    """Global geometric stiffness for element axial forces ``axial`` (elements,), tension positive."""
    dofs = model.element_dofs
    rows = np.repeat(dofs, 6, axis=1).ravel()
    cols = np.tile(dofs, (1, 6)).ravel()
    n = model.dof_count
    return sp.csc_matrix(sp.coo_matrix((geometric_blocks(model, axial).ravel(), (rows, cols)), shape=(n, n)))


def geometric_blocks(model: FrameModel, axial: np.ndarray) -> np.ndarray:
    """Element geometric stiffness matrices in global axes (elements, 6, 6), for element axial forces
    ``axial`` (elements,) kN, tension positive; dofs as ``model.element_dofs``."""
    L = model.length
    kg = np.zeros((L.size, 6, 6))
    a = axial / (30.0 * L)
    kg[:, 1, 1] = kg[:, 4, 4] = 36 * a
    kg[:, 1, 4] = kg[:, 4, 1] = -36 * a
    kg[:, 1, 2] = kg[:, 2, 1] = kg[:, 1, 5] = kg[:, 5, 1] = 3 * L * a
    kg[:, 4, 2] = kg[:, 2, 4] = kg[:, 4, 5] = kg[:, 5, 4] = -3 * L * a
    kg[:, 2, 2] = kg[:, 5, 5] = 4 * L**2 * a
    kg[:, 2, 5] = kg[:, 5, 2] = -(L**2) * a
    t = rotation_matrices(model.cos, model.sin)
    return np.matmul(np.matmul(t.transpose(0, 2, 1), kg), t)  # batched T^T k T; einsum is slower here


def pressure_load_stiffness(model: FrameModel, loads: StationLoads, state: int) -> sp.csc_matrix:
    """Load stiffness K_L = -dF/du of the distributed loads of ``state`` taken as follower pressure.

    Each element's density is resolved into its component normal to the chord, treated as a
    pressure that stays normal to the deflected chord (lumped half to each end node).
    """
    dist = loads.dist[state]  # (elements, 2, 2)
    c, s = model.cos, model.sin
    # inward normal of the chord (s, -c); mean inward pressure force per unit chord parameter
    inward = 0.5 * ((dist[:, 0, 0] + dist[:, 1, 0]) * s - (dist[:, 0, 1] + dist[:, 1, 1]) * c)
    p = inward / model.length  # kN/m of chord, positive pushing from extrados to intrados
    rot = np.array([[0.0, 1.0], [-1.0, 0.0]])  # tangent (dx, dy) -> inward (dy, -dx)
    blocks = []
    rows, cols = [], []
    dofs = model.element_dofs
    for e in range(model.length.size):
        i = dofs[e, [0, 1]]
        j = dofs[e, [3, 4]]
        dfdu = 0.5 * p[e] * np.block([[-rot, rot], [-rot, rot]])
        idx = np.concatenate([i, j])
        blocks.append(-dfdu)
        rows.append(np.repeat(idx, 4))
        cols.append(np.tile(idx, 4))
    n = model.dof_count
    data = np.concatenate([b.ravel() for b in blocks])
    return sp.csc_matrix(
        sp.coo_matrix((data, (np.concatenate(rows), np.concatenate(cols))), shape=(n, n))
    )


def _symmetry(model: FrameModel, mode: np.ndarray) -> str:
    axis = model.axis
    mirror = axis.span_m - axis.x
    if not np.allclose(np.sort(mirror), axis.x, atol=1e-9 * axis.span_m):
        return "unsymmetric"
    uy = mode[:, 1]
    uy_m = np.interp(axis.x, mirror[::-1], uy[::-1])
    norm = float(np.dot(uy, uy))
    if norm == 0.0:
        return "unsymmetric"
    corr = float(np.dot(uy, uy_m)) / norm
    return "symmetric" if corr > 0.9 else "antisymmetric" if corr < -0.9 else "unsymmetric"


def buckle(
    model: FrameModel,
    loads: StationLoads,
    state: int = 0,
    modes: int = 4,
    follow_axis: bool = False,
) -> BucklingResult:
    """The first ``modes`` buckling factors and shapes of load state ``state``.

    Raises:
        AnalysisError: if the eigen-solver does not converge.
    """
    one = loads.select([state])
    axial = element_axial_forces(model, one)[0]
    kg = geometric_stiffness(model, axial)
    if follow_axis:
        kg = kg + pressure_load_stiffness(model, one, 0)
    free = model.free
    k_ff = model.k_ff
    g_ff = (-kg[free][:, free]).tocsc()
    g_ff = 0.5 * (g_ff + g_ff.T)
    if not np.any(axial < 0.0):
        return BucklingResult(one.names[0], one.groups[0], np.zeros(0), np.zeros((0, model.axis.count, 3)), (), follow_axis, axial)
    count = min(modes, free.size - 2)
    try:
        # mu = 1 / lambda: -K_G phi = mu K phi; the largest mu are the smallest positive factors
        # a seeded, unsymmetric start vector: deterministic output, and no symmetry class left out
        start = np.random.default_rng(20240601).standard_normal(free.size)
        # K is already factorised (scaled): hand ARPACK its inverse instead of letting it factorise K again
        if model.axially_rigid:
            nodal = model.nodal_free
            g_nn = g_ff[nodal][:, nodal].tocsr()
            k_inv = model.constrained_inverse()
            op = LinearOperator(k_inv.shape, matvec=lambda v: k_inv.matvec(g_nn @ np.ravel(v)), dtype=float)
            mu_c, vec_c = eigs(op, k=min(count + 2, nodal.size - 2), which="LR", tol=1e-10, v0=start[nodal])
            mu = mu_c.real
            vec = np.zeros((free.size, mu.size))
            # a real eigenvalue's vector comes with an arbitrary complex phase: keep its larger part
            larger = np.linalg.norm(vec_c.real, axis=0) >= np.linalg.norm(vec_c.imag, axis=0)
            vec[nodal] = np.where(larger, vec_c.real, vec_c.imag)
        else:
            d = model._scale
            k_inv = LinearOperator(k_ff.shape, matvec=lambda v: d * model._lu.solve(d * np.ravel(v)), dtype=float)
            mu, vec = eigsh(g_ff, k=min(count + 2, free.size - 2), M=k_ff, Minv=k_inv, which="LA", tol=1e-10,
                            v0=start)
    except ArpackNoConvergence as exc:
        raise AnalysisError(f"buckling eigen-solver did not converge for state {one.names[0]!r}: {exc}") from None
    order = np.argsort(mu)[::-1]
    mu, vec = mu[order], vec[:, order]
    keep = mu > 0
    mu, vec = mu[keep][:count], vec[:, keep][:, :count]
    factors = 1.0 / mu
    n = model.axis.count
    shapes = np.zeros((factors.size, n, 3))
    full = np.zeros((model.dof_count, factors.size))
    full[free] = vec
    for m in range(factors.size):
        u = full[:, m]
        shape = np.stack([u[0 : 3 * n : 3], u[1 : 3 * n : 3], u[2 : 3 * n : 3]], axis=-1)
        scale = np.max(np.hypot(shape[:, 0], shape[:, 1]))
        shape = shape / scale if scale > 0 else shape
        big = np.argmax(np.abs(shape[:, 1]))
        shapes[m] = shape * np.sign(shape[big, 1] or 1.0)
    symmetry = tuple(_symmetry(model, shapes[m]) for m in range(factors.size))
    return BucklingResult(one.names[0], one.groups[0], factors, shapes, symmetry, follow_axis, axial)
