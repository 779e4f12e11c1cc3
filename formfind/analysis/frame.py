"""A 2D frame finite-element model of an arch axis: two-hinged, fixed, tied and three-hinged arches.

Model. Straight two-node elements between consecutive stations (the chord polygon), three degrees of
freedom per node (ux right, uy up, rotation anticlockwise), axial and bending stiffness, and shear
deformation (Timoshenko) when asked for (off by default). Element properties are the means of the
station values at its ends (so I = I_c sec(theta) or a taper is followed element by element). The crown
hinge of a three-hinged arch is a rotation release (the element right of the hinge gets its own
rotation); a tied arch has a pin at the left, a roller at the right and an axial tie between the
springings.

Loads. Distributed densities and point loads enter as consistent (work-equivalent) nodal loads made
with the element's own shapes (the cubic Hermite shapes, or with shear deformation the shapes that
solve the shear-flexible beam exactly), so nodal displacements and reactions are exact for a
prismatic polygon;
uniform temperature and a temperature difference across the depth enter as initial strains; support
movements as prescribed displacements.

Axially rigid rib (``axially_rigid``). Each element's chord length is held by a constraint (its
elongation is zero, or the free thermal elongation alpha T L) with a Lagrange multiplier, the element's
axial force, as one more unknown per element: the stiffness becomes the saddle-point matrix
[[K, C^T], [C, 0]] (its multipliers after the nodal dofs, always free). K then holds no axial
stiffness at all (E A would only carry thermal terms that cancel), and the nodal dofs are scaled as if
each element had an axial stiffness equal to its transverse one, 12 E I / L^3, so the matrix keeps the
conditioning of the elastic rib: the classical inextensional assumptions without the digits a huge
area would cost.

Solving. The stiffness is factorised once (sparse LU of the symmetrically scaled matrix). One solve
with at most seven right-hand sides then gives `ResponseMaps`: linear functionals from a load state to
every support reaction and the tie force. Every load state, and the unit loads of the influence
lines, costs a few multiply-adds per element after that. Nodal displacements, when asked for, come
from one more multi-right-hand-side solve with the same factors.

Recovery. The redundant reactions come from the maps; the others follow from the three equations of
statics, and the internal forces at the stations from exact equilibrium of the part of the arch left
of each cut, shared with the statics engine, so both engines report the same quantities with the same
signs.

Verification. The maps' solve and any displacement solve must have a backward error below 1e-9;
after every solve the frame's own reactions at the completed supports must equal those that
equilibrium gives, to 1e-9 relative (widened only by the condition estimate of the stiffness, which
is logged as a warning above 1e12). Failures raise `AnalysisError` with the numbers; a mechanism is
reported with its likely cause.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator, onenormest, splu

from formfind.analysis.response import Response
from formfind.analysis.statics import cut_resultants, internal_forces
from formfind.enums import SupportKind
from formfind.errors import AnalysisError
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads
from formfind.model.section import SectionAlong

# Normwise backward error allowed of a linear solve. A stable LU with refinement gives about 1e-15;
# stocky ribs with a hinge release were seen at 1.5e-10; genuine trouble is orders of magnitude worse.
RESIDUAL_RTOL = 1e-9
EQUILIBRIUM_RTOL = 1e-9  # the exact engine's tolerance, widened only by the conditioning (see ResponseMaps)
ILL_CONDITIONED = 1e12  # condition estimate above which a warning is logged

log = logging.getLogger(__name__)

# flat reaction components: left (Rx, Ry, M), right (Rx, Ry, M)
_REDUNDANT = {
    SupportKind.THREE_HINGED: ((3,), (0, 1, 4)),
    SupportKind.TWO_HINGED: ((3,), (0, 1, 4)),
    SupportKind.FIXED: ((3, 4, 5), (0, 1, 2)),
    SupportKind.TIED: ((), (0, 1, 4)),
}


@dataclass(frozen=True, eq=False)
class ResponseMaps:
    """Precomputed linear maps from a state's loads to its support reactions and tie force.

    Functional j is the reaction at restrained dof ``FrameModel.fixed[j]`` (then, for a tied arch,
    the tie force). For one factorisation it costs one solve with as many right-hand sides as there
    are functionals (at most seven); afterwards every load state costs a few multiply-adds per
    element. The redundant reactions are taken from these maps; the others are completed by statics
    and compared with the maps' values (the equilibrium verification).

    Attributes:
        element: (functionals, elements, 6) value per unit global load at each element end dof.
        dist: (functionals, elements, 4) value per unit element density (end a x, a y, b x, b y).
        temperature_uniform, temperature_difference: (functionals,) value per degC.
        movement: (functionals, restrained dofs) value per unit prescribed displacement.
        redundant, completed: flat reaction components (left Rx, Ry, M, right Rx, Ry, M) taken from
            the maps, and completed by statics.
        tie_direction: unit vector from the left to the right springing.
        condition_estimate: 1-norm condition estimate of the scaled free stiffness, or None where the
            model was built without it (form finding's trial axes: it is then estimated only if the
            equilibrium verification needs a wider tolerance).
        backward_error: normwise backward error of the maps' solve (`FrameModel.solve_free`).
        forward_error: the maps' relative error, estimated by a refinement step with its residual in
            extended precision.
        elongation: (functionals, elements) value per metre of imposed elongation of each element (the
            constraints' right-hand sides of a rigid rib); (functionals, 0) for an elastic rib.
    """

    element: np.ndarray
    dist: np.ndarray
    temperature_uniform: np.ndarray
    temperature_difference: np.ndarray
    movement: np.ndarray
    redundant: tuple[int, ...]
    completed: tuple[int, ...]
    tie_direction: np.ndarray
    condition_estimate: float | None
    backward_error: float = 0.0
    forward_error: float = 0.0
    elongation: np.ndarray | None = None

    def tolerance(self, condition: float | None = None) -> float:
        """Relative tolerance of the equilibrium verification: max(1e-9, 100 eps cond)."""
        cond = self.condition_estimate if condition is None else condition
        return EQUILIBRIUM_RTOL if cond is None else max(EQUILIBRIUM_RTOL, 100 * np.finfo(float).eps * cond)


@dataclass(frozen=True, eq=False)
class FrameModel:
    """An assembled, factorised frame model of one axis with one support system.

    Attributes:
        axis, section: the geometry and the section at the stations.
        kind: the support system.
        hinge_station: station of the crown hinge (three-hinged arches), else None.
        tie_EA_kN: axial stiffness E A of the tie (tied arches), else None.
        shear_deformation: whether element stiffness includes shear deformation.
        axially_rigid: whether each element's length is held by a constraint (module docstring); the
            multiplier of element e is dof ``first_multiplier + e``, its axial force (kN, tension +).
        element_dofs: (elements, 6) global dof indices of each element's ends.
        length, cos, sin: chord length (m) and direction of each element.
        EA, EI, GAs: element stiffnesses (kN, kNm2, kN); for a rigid rib EA is 0 (the constraints hold the lengths).
        stiffness: the full global stiffness matrix (CSC); for a rigid rib the saddle-point matrix.
        free, fixed: indices of free and restrained dofs (a rigid rib's multipliers are free).
    """

    axis: Axis
    section: SectionAlong
    kind: SupportKind
    hinge_station: int | None
    tie_EA_kN: float | None
    shear_deformation: bool
    element_dofs: np.ndarray
    length: np.ndarray
    cos: np.ndarray
    sin: np.ndarray
    EA: np.ndarray
    EI: np.ndarray
    GAs: np.ndarray
    stiffness: sp.csc_matrix
    free: np.ndarray
    fixed: np.ndarray
    k_ff: sp.csc_matrix
    maps: ResponseMaps | None
    _scale: np.ndarray
    _lu: object
    axially_rigid: bool = False

    @property
    def first_multiplier(self) -> int:
        """Index of the first constraint multiplier (rigid rib); the number of nodal dofs."""
        return int(self.stiffness.shape[0]) - (self.length.size if self.axially_rigid else 0)

    @property
    def dof_count(self) -> int:
        """Number of degrees of freedom, restrained ones included."""
        return int(self.stiffness.shape[0])

    def solve_free(self, rhs: np.ndarray) -> tuple[np.ndarray, float]:
        """Solve K_ff u = rhs for one or many right-hand sides (free dofs along the first axis).

        The factorisation is of the symmetrically scaled matrix D K_ff D (D = diag(K_ff)^-1/2), which
        keeps translations and rotations on one footing; up to three steps of iterative refinement
        with the same factors follow. Returns the solution and its normwise backward error
        |f - K u| / (|K| |u| + |f|) (infinity norms), the residual measure that stays meaningful when
        axial stiffness dwarfs the loads.
        """
        d = self._scale[:, None] if rhs.ndim == 2 else self._scale
        u = d * self._lu.solve(d * rhs)

        def backward_error(u: np.ndarray) -> float:
            r = np.abs(rhs - self.k_ff @ u).max()
            denom = self._k_norm * np.abs(u).max() + np.abs(rhs).max()
            return float(r / denom) if denom > 0 else 0.0

        error = backward_error(u)
        for _ in range(3):
            if error <= 1e-15:
                break
            u = u + d * self._lu.solve(d * (rhs - self.k_ff @ u))
            error = backward_error(u)
        return u, error

    @property
    def nodal_free(self) -> np.ndarray:
        """Positions, within ``free``, of the free nodal dofs (all of them unless the rib is rigid)."""
        return np.flatnonzero(self.free < self.first_multiplier)

    def constrained_inverse(self) -> LinearOperator:
        """v -> u: the nodal free displacements under nodal free forces v, the rigid rib's constraints
        held (homogeneous). For an elastic rib, plainly K_ff^-1. Symmetric positive definite on the
        constraints' null space, zero where v is orthogonal to it; for the eigen-solvers."""
        nodal = self.nodal_free
        d = self._scale

        def apply(v: np.ndarray) -> np.ndarray:
            rhs = np.zeros(self.free.size)
            rhs[nodal] = np.ravel(v)
            return (d * self._lu.solve(d * rhs))[nodal]

        return LinearOperator((nodal.size, nodal.size), matvec=apply, dtype=float)

    @property
    def _k_norm(self) -> float:
        return float(abs(self.k_ff).sum(axis=1).max())


def _local_stiffness(length, EA, EI, GAs, shear: bool) -> np.ndarray:
    """Local element stiffness matrices (elements, 6, 6), dofs (u1, v1, r1, u2, v2, r2)."""
    L = length
    phi = 12.0 * EI / (GAs * L**2) if shear else np.zeros_like(L)
    b = EI / (L**3 * (1.0 + phi))
    k = np.zeros((L.size, 6, 6))
    a = EA / L
    k[:, 0, 0] = k[:, 3, 3] = a
    k[:, 0, 3] = k[:, 3, 0] = -a
    k[:, 1, 1] = k[:, 4, 4] = 12 * b
    k[:, 1, 4] = k[:, 4, 1] = -12 * b
    k[:, 1, 2] = k[:, 2, 1] = k[:, 1, 5] = k[:, 5, 1] = 6 * b * L
    k[:, 4, 2] = k[:, 2, 4] = k[:, 4, 5] = k[:, 5, 4] = -6 * b * L
    k[:, 2, 2] = k[:, 5, 5] = (4 + phi) * b * L**2
    k[:, 2, 5] = k[:, 5, 2] = (2 - phi) * b * L**2
    return k


def rotation_matrices(cos: np.ndarray, sin: np.ndarray) -> np.ndarray:
    """Global-to-local transformation matrices (elements, 6, 6)."""
    t = np.zeros((cos.size, 6, 6))
    for o in (0, 3):
        t[:, o, o] = cos
        t[:, o, o + 1] = sin
        t[:, o + 1, o] = -sin
        t[:, o + 1, o + 1] = cos
        t[:, o + 2, o + 2] = 1.0
    return t


def build_frame(
    axis: Axis,
    section: SectionAlong,
    kind: SupportKind,
    hinge_station: int | None = None,
    tie_EA_kN: float | None = None,
    shear_deformation: bool = False,
    estimate_condition: bool = True,
    axially_rigid: bool = False,
) -> FrameModel:
    """Assemble and factorise the frame model of ``axis`` with the given support system.

    ``axially_rigid`` holds every element's length by a constraint (module docstring).

    ``estimate_condition`` False skips the condition estimate (and its warning) unless a verification
    needs it: for the many trial axes of form finding, whose final axis is analysed afresh.

    Raises:
        AnalysisError: if the support system is a mechanism (e.g. a three-hinged arch whose hinge
            lies on the line joining the springings) or the tie is missing for a tied arch.
    """
    n = axis.count
    ne = n - 1
    if kind is SupportKind.THREE_HINGED:
        if hinge_station is None or not 0 < hinge_station < n - 1:
            raise AnalysisError("a three-hinged arch needs its hinge at an interior station")
    else:
        hinge_station = None
    if kind is SupportKind.TIED and not (tie_EA_kN and tie_EA_kN > 0):
        raise AnalysisError("a tied arch needs a tie with positive axial stiffness")
    ndof = 3 * n + (1 if hinge_station is not None else 0)
    nodes = np.arange(ne)
    dofs = np.stack([3 * nodes, 3 * nodes + 1, 3 * nodes + 2, 3 * nodes + 3, 3 * nodes + 4, 3 * nodes + 5], axis=1)
    if hinge_station is not None:
        dofs[hinge_station, 2] = 3 * n  # the element right of the hinge rotates on its own

    dx, dy = np.diff(axis.x), np.diff(axis.y)
    length = np.hypot(dx, dy)
    cos, sin = dx / length, dy / length
    mean = lambda arr: 0.5 * (arr[:-1] + arr[1:])  # noqa: E731 - element value from its stations
    E = mean(section.elastic_modulus_kN_m2)
    EA = E * mean(section.area_m2)
    EI = E * mean(section.second_moment_m4)
    GAs = mean(section.shear_modulus_kN_m2) * mean(section.shear_area_m2)
    if axially_rigid:  # the constraint holds the length: no axial stiffness term at all
        EA = np.zeros_like(EI)
    k_local = _local_stiffness(length, EA, EI, GAs, shear_deformation)
    t = rotation_matrices(cos, sin)
    k_global = np.matmul(np.matmul(t.transpose(0, 2, 1), k_local), t)  # batched T^T k T
    rows = np.repeat(dofs, 6, axis=1).ravel()
    cols = np.tile(dofs, (1, 6)).ravel()
    data = k_global.ravel()
    if kind is SupportKind.TIED:
        tdx, tdy = axis.x[-1] - axis.x[0], axis.y[-1] - axis.y[0]
        tl = np.hypot(tdx, tdy)
        c, s = tdx / tl, tdy / tl
        kt = tie_EA_kN / tl * np.outer([c, s, -c, -s], [c, s, -c, -s])
        tie = np.array([0, 1, 3 * (n - 1), 3 * (n - 1) + 1])
        rows = np.concatenate([rows, np.repeat(tie, 4)])
        cols = np.concatenate([cols, np.tile(tie, 4)])
        data = np.concatenate([data, kt.ravel()])
    size = ndof
    if axially_rigid:
        # constraint row e: the elongation of element e along its chord, in the rows and columns after
        # the nodal dofs (C and its transpose)
        coeff = np.stack([-cos, -sin, cos, sin], axis=1)
        ends = dofs[:, [0, 1, 3, 4]]
        multiplier = ndof + np.repeat(nodes, 4)
        rows = np.concatenate([rows, multiplier, ends.ravel()])
        cols = np.concatenate([cols, ends.ravel(), multiplier])
        data = np.concatenate([data, coeff.ravel(), coeff.ravel()])
        size = ndof + ne
    stiffness = sp.csc_matrix(sp.coo_matrix((data, (rows, cols)), shape=(size, size)))

    right = 3 * (n - 1)
    fixed_dofs = {
        SupportKind.THREE_HINGED: [0, 1, right, right + 1],
        SupportKind.TWO_HINGED: [0, 1, right, right + 1],
        SupportKind.FIXED: [0, 1, 2, right, right + 1, right + 2],
        SupportKind.TIED: [0, 1, right + 1],
    }[kind]
    fixed = np.asarray(fixed_dofs)
    free = np.setdiff1d(np.arange(size), fixed)
    kff = stiffness[free][:, free].tocsc()
    nodal = free < ndof
    diag = kff.diagonal()
    if axially_rigid:
        # scale as if the element had an axial stiffness equal to its transverse one (12 E I / L^3)
        standin = np.zeros(size)
        axial = 12.0 * EI / length**3
        for j in (0, 3):
            np.add.at(standin, dofs[:, j], axial * cos**2)
            np.add.at(standin, dofs[:, j + 1], axial * sin**2)
        diag = diag + standin[free]
    if not np.all(diag[nodal] > 0):
        raise AnalysisError(f"the {kind.value} arch has a free degree of freedom with no stiffness (a mechanism)")
    scale = np.ones(free.size)
    scale[nodal] = 1.0 / np.sqrt(diag[nodal])
    if axially_rigid:
        # a multiplier's row is scaled so that its largest scaled entry is 1
        rows_c = abs(kff[~nodal][:, nodal] @ sp.diags(scale[nodal])).max(axis=1).toarray().ravel()
        if not np.all(rows_c > 0):
            raise AnalysisError(f"the rigid {kind.value} arch has an element whose both ends are held")
        scale[~nodal] = 1.0 / rows_c
    scaled = sp.diags(scale) @ kff @ sp.diags(scale)
    try:
        lu = splu(scaled.tocsc())
    except RuntimeError as exc:
        raise AnalysisError(
            f"the {kind.value} arch is a mechanism (singular stiffness: {exc}); likely cause: a hinge on "
            "the line joining the springings, or a missing support"
        ) from None
    diag = np.abs(lu.U.diagonal())
    if diag.min() <= 1e-13 * diag.max():
        raise AnalysisError(
            f"the {kind.value} arch is a mechanism or nearly so (pivot ratio {diag.min() / diag.max():.1e}); "
            "likely cause: a hinge on the line joining the springings"
            + ("; a rigid rib cannot be straight between held ends" if axially_rigid else "")
        )
    model = FrameModel(
        axis=axis,
        section=section,
        kind=kind,
        hinge_station=hinge_station,
        tie_EA_kN=tie_EA_kN,
        shear_deformation=shear_deformation,
        element_dofs=dofs,
        length=length,
        cos=cos,
        sin=sin,
        EA=EA,
        EI=EI,
        GAs=GAs,
        stiffness=stiffness,
        free=free,
        fixed=fixed,
        k_ff=kff,
        maps=None,
        _scale=scale,
        _lu=lu,
        axially_rigid=axially_rigid,
    )
    return replace(model, maps=_response_maps(model, estimate_condition))


def _condition_estimate(model: FrameModel) -> float:
    n = model.free.size
    d = model._scale
    scaled = sp.diags(d) @ model.k_ff @ sp.diags(d)
    inverse = LinearOperator((n, n), matvec=lambda v: model._lu.solve(np.asarray(v, dtype=float).ravel()),
                             rmatvec=lambda v: model._lu.solve(np.asarray(v, dtype=float).ravel(), trans="T"),
                             dtype=float)
    return float(onenormest(scaled) * onenormest(inverse))


def _response_maps(model: FrameModel, estimate_condition: bool = True) -> ResponseMaps:
    """Build the `ResponseMaps` of an assembled, factorised model (one multi-RHS solve)."""
    K = model.stiffness
    free, fixed = model.free, model.fixed
    nr = fixed.size
    n = model.axis.count
    k_fr = K[free][:, fixed].toarray()
    k_rr = K[fixed][:, fixed].toarray()
    tied = model.kind is SupportKind.TIED
    axis = model.axis
    tdx, tdy = axis.x[-1] - axis.x[0], axis.y[-1] - axis.y[0]
    direction = np.array([tdx, tdy]) / np.hypot(tdx, tdy)
    rhs = k_fr
    t_full = np.zeros(model.dof_count)
    if tied:
        right = 3 * (n - 1)
        t_full[[0, 1, right, right + 1]] = model.tie_EA_kN / np.hypot(tdx, tdy) * np.array(
            [-direction[0], -direction[1], direction[0], direction[1]]
        )
        rhs = np.column_stack([k_fr, t_full[free]])
    x, error = model.solve_free(rhs)
    # the forward error of the maps, estimated by one more refinement step whose residual is computed in
    # extended precision (Higham, Accuracy and Stability of Numerical Algorithms, iterative refinement):
    # the correction's size is the error the double-precision solution still carries
    # the correction is applied (mixed-precision refinement: with the residual in extended precision it
    # converges to the correctly rounded solution while cond x eps < 1), and the last one's size is the
    # error estimate: an upper bound of what the applied corrections leave
    k_long = model.k_ff.astype(np.longdouble)
    rhs_long = np.asarray(rhs, dtype=np.longdouble)
    for _ in range(3):
        residual = rhs_long - k_long @ np.asarray(x, np.longdouble)
        correction, _ = model.solve_free(np.asarray(residual, dtype=float))
        forward = float(np.abs(correction).max() / max(float(np.abs(x).max()), 1e-300))
        x = x + correction
        if forward <= 1e-13:
            break
    if not error <= RESIDUAL_RTOL:
        raise AnalysisError(
            f"linear solve of the {model.kind.value} arch is not trustworthy: backward error {error:.2e} "
            f"> {RESIDUAL_RTOL:.0e} (ill-conditioned stiffness)"
        )
    q = nr + (1 if tied else 0)
    a = np.zeros((q, model.dof_count))
    a[:nr, free] = x[:, :nr].T
    a[np.arange(nr), fixed] = -1.0
    movement = k_rr - k_fr.T @ x[:, :nr]
    if tied:
        a[nr, free] = x[:, nr]
        movement = np.vstack([movement, t_full[fixed] - k_fr.T @ x[:, nr]])
    element = a[:, model.element_dofs]  # (q, E, 6)
    basis = np.zeros((4, model.length.size, 2, 2))
    for k in range(4):
        basis[k, :, k // 2, k % 2] = 1.0
    glob = _to_global(_distributed_local(model, basis), model.cos, model.sin)
    dist = np.einsum("qem,kem->qek", element, glob)
    unit = np.ones(1)
    zero = np.zeros(1)
    t_u = _to_global(_thermal_local(model, unit, zero), model.cos, model.sin)[0]
    t_d = _to_global(_thermal_local(model, zero, unit), model.cos, model.sin)[0]
    # a rigid rib's free thermal elongation enters through the constraints: (q, E) per metre of each
    elongation = a[:, model.first_multiplier:]
    thermal_u = (elongation @ (model.section.thermal_expansion_per_C * model.length) if model.axially_rigid
                 else np.zeros(q))
    cond = _condition_estimate(model) if estimate_condition else None
    if cond is not None and cond > ILL_CONDITIONED:
        log.warning("the %s arch's stiffness is ill-conditioned (condition estimate %.1e): results may "
                    "lose digits; check the section's axial and bending stiffness", model.kind.value, cond)
    redundant, completed = _REDUNDANT[model.kind]
    return ResponseMaps(
        element=element,
        dist=dist,
        temperature_uniform=np.einsum("qem,em->q", element, t_u) + thermal_u,
        temperature_difference=np.einsum("qem,em->q", element, t_d),
        movement=movement,
        redundant=redundant,
        completed=completed,
        tie_direction=direction,
        condition_estimate=cond,
        backward_error=error,
        forward_error=forward,
        elongation=elongation,
    )


def _point_element(axis: Axis, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Element index and local parameter t in [0, 1] of abscissae x (a point at a station: t = 0)."""
    e = np.clip(np.searchsorted(axis.x, x, side="right") - 1, 0, axis.count - 2)
    t = (x - axis.x[e]) / (axis.x[e + 1] - axis.x[e])
    return e, np.clip(t, 0.0, 1.0)


_GAUSS3_T = 0.5 + 0.5 * np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])  # 3-point Gauss on [0, 1]: exact to degree 5
_GAUSS3_W = np.array([5.0, 8.0, 5.0]) / 18.0


def _shear_ratio(model: FrameModel) -> np.ndarray:
    """phi = 12 EI / (G As L^2) per element where shear deformation is modelled, else 0."""
    if not model.shear_deformation:
        return np.zeros_like(model.length)
    return 12.0 * model.EI / (model.GAs * model.length**2)


def transverse_shapes(t: np.ndarray, length: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """The element's transverse displacement shapes (..., 4) at parameter t in [0, 1]: end a's
    deflection and rotation, end b's deflection and rotation. They solve the shear-flexible
    (Timoshenko) beam exactly, so loads made work-equivalent with them give exact nodal displacements
    (phi = 12 EI / (G As L^2); phi = 0: the cubic Hermite shapes of the ordinary beam)."""
    t = np.asarray(t, dtype=float)
    k = 1.0 / (1.0 + phi)
    return np.stack([
        k * (1.0 - 3.0 * t**2 + 2.0 * t**3 + phi * (1.0 - t)),
        k * length * (t - 2.0 * t**2 + t**3 + 0.5 * phi * (t - t**2)),
        k * (3.0 * t**2 - 2.0 * t**3 + phi * t),
        k * length * (-(t**2) + t**3 + 0.5 * phi * (t**2 - t)),
    ], axis=-1)


def _distributed_local(model: FrameModel, dist: np.ndarray) -> np.ndarray:
    """Local consistent end loads (states, elements, 6) of element densities (states, elements, 2, 2),
    work-equivalent with the element's own shapes (exact nodal displacements, shear deformation or not)."""
    L, c, s = model.length, model.cos, model.sin
    qa = dist[:, :, 0, :] / L[None, :, None]  # kN per unit t -> kN per metre of chord
    qb = dist[:, :, 1, :] / L[None, :, None]
    pa, pb = qa[..., 0] * c + qa[..., 1] * s, qb[..., 0] * c + qb[..., 1] * s
    wa, wb = -qa[..., 0] * s + qa[..., 1] * c, -qb[..., 0] * s + qb[..., 1] * c
    local = np.empty(dist.shape[:2] + (6,))
    local[..., 0] = L * (2 * pa + pb) / 6
    local[..., 3] = L * (pa + 2 * pb) / 6
    phi = _shear_ratio(model)
    if not np.any(phi):
        local[..., 1] = L * (7 * wa + 3 * wb) / 20
        local[..., 2] = L**2 * (3 * wa + 2 * wb) / 60
        local[..., 4] = L * (3 * wa + 7 * wb) / 20
        local[..., 5] = -(L**2) * (2 * wa + 3 * wb) / 60
        return local
    shapes = transverse_shapes(_GAUSS3_T[:, None], L[None, :], phi[None, :])  # (3 points, E, 4)
    for g, (t, weight) in enumerate(zip(_GAUSS3_T, _GAUSS3_W, strict=True)):
        w = wa * (1.0 - t) + wb * t  # (states, E)
        part = (weight * L)[None, :, None] * w[..., None] * shapes[g][None]  # (states, E, 4)
        if g == 0:
            local[..., [1, 2, 4, 5]] = part
        else:
            local[..., [1, 2, 4, 5]] += part
    return local


def _thermal_local(model: FrameModel, uniform_C: np.ndarray, difference_C: np.ndarray) -> np.ndarray:
    """Local equivalent end loads (states, elements, 6) of temperature as an initial strain."""
    alpha = model.section.thermal_expansion_per_C
    depth = 0.5 * (model.section.depth_m[:-1] + model.section.depth_m[1:])
    local = np.zeros((uniform_C.size, model.length.size, 6))
    axial = model.EA * alpha * uniform_C[:, None]
    bend = model.EI * alpha / depth * difference_C[:, None]
    local[..., 0] = -axial
    local[..., 3] = axial
    local[..., 2] = bend
    local[..., 5] = -bend
    return local


def _point_global(model: FrameModel, loads: StationLoads) -> tuple[np.ndarray, np.ndarray]:
    """Element of each point load and its global consistent end loads (points, 6)."""
    L, c, s = model.length, model.cos, model.sin
    e, t = _point_element(model.axis, loads.point_x)
    Le = L[e]
    a, b = t * Le, (1 - t) * Le
    fx, fy = loads.point_force[:, 0], loads.point_force[:, 1]
    p_ax = fx * c[e] + fy * s[e]
    p_tr = -fx * s[e] + fy * c[e]
    pl = np.empty((loads.point_x.size, 6))
    pl[:, 0] = p_ax * (1 - t)
    pl[:, 3] = p_ax * t
    phi = _shear_ratio(model)[e]
    if np.any(phi):
        pl[:, [1, 2, 4, 5]] = p_tr[:, None] * transverse_shapes(t, Le, phi)
    else:
        pl[:, 1] = p_tr * b**2 * (3 * a + b) / Le**3
        pl[:, 2] = p_tr * a * b**2 / Le**2
        pl[:, 4] = p_tr * a**2 * (a + 3 * b) / Le**3
        pl[:, 5] = -p_tr * a**2 * b / Le**2
    return e, _to_global(pl, c[e], s[e])


def load_vectors(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Consistent global nodal load vectors (states, dofs), kN and kNm, temperature included; for a rigid
    rib the constraint rows hold each element's free thermal elongation (m)."""
    f = np.zeros((loads.count, model.dof_count))
    local = _distributed_local(model, loads.dist)
    local += _thermal_local(model, loads.temperature_uniform_C, loads.temperature_difference_C)
    _add_local(f, model, local)
    if loads.point_x.size:
        e, glob = _point_global(model, loads)
        np.add.at(f, (loads.point_state[:, None], model.element_dofs[e]), glob)
    if model.axially_rigid:  # the constraints' right-hand sides: each element's free thermal elongation (m)
        f[:, model.first_multiplier:] = np.outer(loads.temperature_uniform_C,
                                                 model.section.thermal_expansion_per_C * model.length)
    return f


def _to_global(local: np.ndarray, c: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Rotate local end vectors (..., 6) to global components."""
    g = local.copy()
    for o in (0, 3):
        g[..., o] = c * local[..., o] - s * local[..., o + 1]
        g[..., o + 1] = s * local[..., o] + c * local[..., o + 1]
    return g


def _add_local(f: np.ndarray, model: FrameModel, local: np.ndarray) -> None:
    """Add local element end vectors (states, elements, 6) into global load vectors (states, dofs)."""
    glob = _to_global(local, model.cos, model.sin)
    for j in range(6):
        # within one column every element has a different dof, so fancy-index addition is exact
        f[:, model.element_dofs[:, j]] += glob[:, :, j]


def _prescribed(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Prescribed displacements of the restrained dofs (states, fixed dofs) from support movements."""
    n = model.axis.count
    right = 3 * (n - 1)
    out = np.zeros((loads.count, model.fixed.size))
    for j, dof in enumerate(model.fixed):  # only the restrained dofs: no (states, dofs) temporary
        if dof < 3:
            out[:, j] = loads.support_movement[:, 0, dof]
        elif right <= dof < right + 3:
            out[:, j] = loads.support_movement[:, 1, dof - right]
    return out


def functional_values(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Reactions at every restrained dof, then the tie force if tied, per state (states, functionals).

    Each is a precomputed linear functional of the state's loads (see `ResponseMaps`), so the cost is
    a few multiply-adds per element and state; no solve happens here.
    """
    maps = model.maps
    flat = loads.dist.reshape(loads.count, int(np.prod(loads.dist.shape[1:])))  # also for zero states
    q = maps.dist.shape[0]
    values = flat @ maps.dist.reshape(q, -1).T if flat.any() else np.zeros((loads.count, q))
    values += np.outer(loads.temperature_uniform_C, maps.temperature_uniform)
    values += np.outer(loads.temperature_difference_C, maps.temperature_difference)
    values += _prescribed(model, loads) @ maps.movement.T
    if loads.point_x.size:
        e, glob = _point_global(model, loads)
        contrib = np.einsum("qpm,pm->pq", maps.element[:, e, :], glob)
        for j in range(q):
            values[:, j] += np.bincount(loads.point_state, contrib[:, j], minlength=loads.count)
    return values


def _reaction_array(model: FrameModel, values: np.ndarray) -> np.ndarray:
    n = model.axis.count
    reactions = np.zeros((values.shape[0], 2, 3))
    for j, dof in enumerate(model.fixed):
        side, comp = (0, dof) if dof < 3 else (1, dof - 3 * (n - 1))
        reactions[:, side, comp] = values[:, j]
    return reactions


def _complete_by_statics(model: FrameModel, cuts, reactions_fe: np.ndarray) -> np.ndarray:
    """Reactions: the redundants from the frame model, the rest from the three equations of statics."""
    return _complete(model.axis, model.maps, cuts, reactions_fe)


def _complete(axis: Axis, maps: ResponseMaps, cuts, reactions_fe: np.ndarray) -> np.ndarray:
    xa, ya, xb, yb = axis.x[0], axis.y[0], axis.x[-1], axis.y[-1]
    # rows: sum Fx, sum Fy, sum M about the origin; columns: (left Rx, Ry, M, right Rx, Ry, M)
    coeff = np.array(
        [
            [1.0, 0.0, 0.0, 1.0, 0.0, 0.0],
            [0.0, 1.0, 0.0, 0.0, 1.0, 0.0],
            [-ya, xa, 1.0, -yb, xb, 1.0],
        ]
    )
    rhs = -np.stack([cuts.total_force[:, 0], cuts.total_force[:, 1], cuts.total_moment], axis=1)
    flat = reactions_fe.reshape(-1, 6)
    known = list(maps.redundant)
    unknown = list(maps.completed)
    rhs = rhs - flat[:, known] @ coeff[:, known].T
    solved = np.linalg.solve(coeff[:, unknown], rhs.T).T
    out = np.zeros_like(flat)
    out[:, known] = flat[:, known]
    out[:, unknown] = solved
    return out.reshape(-1, 2, 3)


def solve_displacements(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Full displacement vectors (states, dofs) by one multi-RHS solve, verified by its backward error."""
    f = load_vectors(model, loads)
    u = np.zeros_like(f)
    u_r = _prescribed(model, loads)
    u[:, model.fixed] = u_r
    rhs = f[:, model.free].T - model.stiffness[model.free][:, model.fixed] @ u_r.T
    # subnormal entries (a load 1e-323 m from a support) carry no digits a solve could verify
    rhs = np.where(np.abs(rhs) < np.finfo(float).tiny, 0.0, rhs)
    if loads.count:
        u_f, error = model.solve_free(np.ascontiguousarray(rhs))
        if np.abs(rhs).max() > 0 and not error <= RESIDUAL_RTOL:
            raise AnalysisError(
                f"linear solve of the {model.kind.value} arch is not trustworthy: backward error "
                f"{error:.2e} > {RESIDUAL_RTOL:.0e} (ill-conditioned stiffness)"
            )
        u[:, model.free] = u_f.T
    return u


def _displacements(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """Nodal displacements (states, stations, 3)."""
    u = solve_displacements(model, loads)
    n = model.axis.count
    return np.stack([u[:, 0 : 3 * n : 3], u[:, 1 : 3 * n : 3], u[:, 2 : 3 * n : 3]], axis=-1)


def recover_moments(model: FrameModel, axis: Axis, loads: StationLoads, redundants: np.ndarray) -> np.ndarray:
    """Station moments M (states, stations) on ``axis`` for given redundant values (states, redundants).

    Redundants are the flat reaction components ``maps.redundant`` followed, for a tied arch, by the
    tie force; the other reactions are completed by statics on ``axis`` (which may differ from the
    model's own axis: the sensitivity analysis moves it).
    """
    cuts = cut_resultants(axis, loads)
    flat = np.zeros((loads.count, 6))
    red = list(model.maps.redundant)
    flat[:, red] = redundants[:, : len(red)]
    reactions = _complete(axis, model.maps, cuts, flat.reshape(-1, 2, 3))
    left = reactions[:, 0, :2].copy()
    if model.kind is SupportKind.TIED:
        left += redundants[:, -1:] * model.maps.tie_direction
    return internal_forces(axis, cuts, left, reactions[:, 0, 2])[2]


def redundant_values(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """The redundants (states, redundants) of every state from the response maps."""
    values = functional_values(model, loads)
    flat = _reaction_array(model, values).reshape(-1, 6)[:, list(model.maps.redundant)]
    if model.kind is SupportKind.TIED:
        flat = np.column_stack([flat, values[:, -1]])
    return flat


def solve(model: FrameModel, loads: StationLoads, displacements: bool = True) -> Response:
    """The response of the frame to every load state.

    Reactions and the tie force come from the precomputed response functionals; the redundant ones
    are kept, the others completed by statics, and the frame's own values for those are checked
    against the completion (the equilibrium verification). Station forces follow by exact
    equilibrium of the part left of each cut. ``displacements=False`` skips the full solve for
    nodal displacements (``Response.displacements`` is then None).

    Raises:
        AnalysisError: if the equilibrium verification or the displacement solve's residual fails.
    """
    values = functional_values(model, loads)
    reactions_fe = _reaction_array(model, values)
    tied = model.kind is SupportKind.TIED
    tie_force = values[:, -1] if tied else np.zeros(loads.count)
    cuts = cut_resultants(model.axis, loads)
    reactions = _complete_by_statics(model, cuts, reactions_fe)
    _verify(model, loads, cuts, reactions_fe, reactions)
    left = reactions[:, 0, :2].copy()
    if tied:
        left += tie_force[:, None] * model.maps.tie_direction  # the tie pulls the left springing inwards
    N, V, M, N_left, V_left = internal_forces(model.axis, cuts, left, reactions[:, 0, 2])
    return Response(
        names=loads.names,
        groups=loads.groups,
        x=model.axis.x,
        N=N,
        V=V,
        M=M,
        N_left=N_left,
        V_left=V_left,
        reactions=reactions,
        tie_force=tie_force,
        displacements=_displacements(model, loads) if displacements else None,
        engine="frame",
    )


def _verify(model: FrameModel, loads: StationLoads, cuts, reactions_fe: np.ndarray, reactions: np.ndarray) -> None:
    """The frame's reactions at the completed supports must equal those equilibrium gives."""
    if loads.count == 0:
        return
    flat_fe = reactions_fe.reshape(-1, 6)[:, list(model.maps.completed)]
    flat = reactions.reshape(-1, 6)[:, list(model.maps.completed)]
    lever = max(model.axis.span_m, float(np.ptp(model.axis.y)))
    weights = np.array([1.0 if c % 3 < 2 else 1.0 / lever for c in model.maps.completed])
    thermal = np.abs(model.EA * model.section.thermal_expansion_per_C).max() * np.abs(loads.temperature_uniform_C)
    thermal += (np.abs(model.EI / model.length).max() * model.section.thermal_expansion_per_C
                / model.section.depth_m.min() * np.abs(loads.temperature_difference_C))
    imposed = np.abs(_prescribed(model, loads))
    movement = imposed @ np.abs(model.maps.movement).T
    # reactions of an imposed movement come from K u: they carry rounding of eps |K| |u| even where
    # the movement is a rigid-body motion and the true reactions vanish (a tied arch's settlement)
    stiffness = float(np.abs(model.stiffness.diagonal()).max())
    rounding = 100 * np.finfo(float).eps * stiffness * imposed.max(axis=1, initial=0.0)  # kN, allowed on top
    scale = np.maximum.reduce([
        np.abs(cuts.total_force).max(axis=1),
        np.abs(reactions[:, :, :2]).max(axis=(1, 2)),
        thermal,
        movement.max(axis=1, initial=0.0),
        np.full(loads.count, 1e-300),
    ])
    excess = np.maximum(np.abs(flat_fe - flat) * weights - rounding[:, None], 0.0)
    error = np.max(excess, axis=1) / scale
    worst = float(error.max())
    allowed = model.maps.tolerance()
    if np.isfinite(worst) and worst > allowed and model.maps.condition_estimate is None:
        allowed = model.maps.tolerance(_condition_estimate(model))  # estimated only when it matters
    if not np.isfinite(worst) or worst > allowed:
        k = int(np.argmax(error))
        raise AnalysisError(
            f"frame equilibrium check failed for state {loads.names[k]!r}: reactions differ from statics by "
            f"{worst:.2e} relative (allowed {allowed:.1e})"
        )


def unit_loads(axis: Axis) -> StationLoads:
    """One load state per station: a unit downward force (1 kN) at that station."""
    n = axis.count
    return StationLoads(
        names=tuple(f"unit@{x:.4f}m" for x in axis.x),
        groups=("unit",) * n,
        dist=np.zeros((n, n - 1, 2, 2)),
        point_state=np.arange(n),
        point_x=axis.x.copy(),
        point_force=np.tile([0.0, -1.0], (n, 1)),
        temperature_uniform_C=np.zeros(n),
        temperature_difference_C=np.zeros(n),
        support_movement=np.zeros((n, 2, 3)),
    )


def influence_lines(model: FrameModel) -> Response:
    """Influence lines of every effect for a unit downward load (1 kN) at each station.

    State j of the result is the load at station j: ``M[j, i]`` is the influence ordinate of the
    moment at station i for the load at station j (kNm per kN); likewise N, V, reactions, thrust.
    """
    return solve(model, unit_loads(model.axis), displacements=False)
