"""Station moments linearised in the station ordinates: the Jacobian dM/dy, held in structured form.

Both engines recover the moment at station i of state k from the loads left of the cut and the left
reaction (`formfind.analysis.statics.internal_forces`):

    M_ki = x_i Sy_ki - y_i Sx_ki - MO_ki - (xa Ry_k - ya Rx_k + ML_k),    Sx = FX + Rx,  Sy = FY + Ry,

with FX, FY, MO the running force and moment about the origin of the loads up to the cut and
(Rx, Ry, ML) the left reaction (a tie's pull included). Moving the ordinates by dy, springings held:

    dM_ki = -Sx_ki dy_i + x_i dFY_ki - y_i dFX_ki - dMO_ki + (x_i - xa) dRy_k - (y_i - ya) dRx_k - dML_k.

The running terms are sums over the steps between cuts of what each step adds: an element's loads
and the point loads that enter at the next cut. A step's change depends on its own two stations
only (the lever arms of horizontal components; the loads' own shape dependence given by
`formfind.model.loads.density_derivative`), so all steps together are a sparse matrix with a few
entries per row. The reactions' change is one dense row per state and component: for the
three-hinged arch from the statics of the hinge, for the frame from the adjoint of its stiffness
(the redundants, `frame_reaction_rates`) and the statics that completes the rest.

So the Jacobian of K states at n stations is held in O(K n) numbers (`MomentModel`), never as a
(K, n, n) array; products with it and with its transpose cost O(K n), and a linear program uses it
through running-sum variables (`formfind.design.program`). Everything is in kN (kNm per m).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np
import scipy.sparse as sp

from formfind.analysis.frame import (
    FrameModel,
    _distributed_local,
    _local_stiffness,
    _point_global,
    _thermal_local,
    _to_global,
    rotation_matrices,
    solve_displacements,
)
from formfind.analysis.response import Response
from formfind.analysis.statics import cut_resultants
from formfind.enums import SupportKind
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

FX, FY, MO = 0, 1, 2  # the components of a step: force x, force y (kN), moment about the origin (kNm)

# Central differences of the span's 1e-5 for the frame's element matrices: the two adjoint terms are
# each much larger than their difference, so a one-sided difference's O(step) error would survive.
RELATIVE_STEP = 1e-5


@dataclass(frozen=True, eq=False)
class MomentModel:
    """Station moments of K states linearised about the ordinates ``y0``: M(y) = M0 + J (y - y0).

    Attributes:
        x, y0: station abscissae and the ordinates linearised about (n,), m.
        M0: (K, n) moments at y0, kNm.
        sx: (K, n) horizontal component of the resultant left of each station (loads and left
            reaction), kN; dM_ki/dy_i contains -sx_ki.
        steps: sparse (K (n-1) 3, n): row (k (n-1) + e) 3 + c is the rate of change, per metre of
            each ordinate, of component c (FX, FY, MO) of what step e adds between cuts e and e+1; None
            when no step changes (vertical loads of fixed magnitude).
        reaction: (K, 3, n) rates of the left reaction (Rx, Ry kN, ML kNm) per metre of each ordinate,
            or None when the reactions do not change (a three-hinged arch with its hinge held).
    """

    x: np.ndarray
    y0: np.ndarray
    M0: np.ndarray
    sx: np.ndarray
    steps: sp.csr_matrix | None
    reaction: np.ndarray | None

    @property
    def states(self) -> int:
        """K, the number of load states."""
        return int(self.M0.shape[0])

    @property
    def stations(self) -> int:
        """n, the number of stations."""
        return int(self.x.size)

    @classmethod
    def diagonal(cls, x: np.ndarray, y0: np.ndarray, M0: np.ndarray, h: np.ndarray) -> MomentModel:
        """The exact model of a three-hinged arch with its hinge held under vertical loads of fixed
        magnitude: M = M0 - h (y - y0), h the thrust (kN) at every station."""
        return cls(np.asarray(x, float), np.asarray(y0, float), np.asarray(M0, float),
                   np.asarray(h, float), None, None)

    @cached_property
    def step_components(self) -> np.ndarray:
        """(K, 3) bool: which step components change at all, per state."""
        if self.steps is None:
            return np.zeros((self.states, 3), dtype=bool)
        nonzero = np.abs(self.steps).sum(axis=1).A.ravel() > 0
        return nonzero.reshape(self.states, self.stations - 1, 3).any(axis=1)

    @cached_property
    def step_twins(self) -> np.ndarray:
        """(K,) for each state the first state with exactly the same steps (itself if none earlier):
        the positions of a moving vehicle share their running sums, since only vertical point loads
        move and those change no step."""
        out = np.arange(self.states)
        if self.steps is None:
            return out
        rows = (self.stations - 1) * 3
        indptr = self.steps.indptr
        seen: dict[bytes, int] = {}
        for k in range(self.states):
            lo, hi = indptr[k * rows], indptr[(k + 1) * rows]
            key = (np.diff(indptr[k * rows:(k + 1) * rows + 1]).tobytes() + self.steps.indices[lo:hi].tobytes()
                   + self.steps.data[lo:hi].tobytes())
            out[k] = seen.setdefault(key, k)
        return out

    def running(self, dy: np.ndarray) -> np.ndarray:
        """(K, n, 3) changes of FX, FY, MO at every cut for an ordinate change dy (n,)."""
        k, n = self.states, self.stations
        out = np.zeros((k, n, 3))
        if self.steps is not None:
            per_step = (self.steps @ dy).reshape(k, n - 1, 3)
            np.cumsum(per_step, axis=1, out=out[:, 1:, :])
        return out

    def delta(self, dy: np.ndarray) -> np.ndarray:
        """Moment change (K, n), kNm, for an ordinate change dy (n,), m, the springings held (dy = 0 there)."""
        dy = np.asarray(dy, dtype=float)
        dm = -self.sx * dy[None, :]
        if self.steps is not None:
            run = self.running(dy)
            dm += self.x * run[:, :, FY] - self.y0 * run[:, :, FX] - run[:, :, MO]
        if self.reaction is not None:
            dr = self.reaction @ dy  # (K, 3)
            dm += (self.x - self.x[0]) * dr[:, 1:2] - (self.y0 - self.y0[0]) * dr[:, 0:1] - dr[:, 2:3]
        return dm

    def moments(self, y: np.ndarray) -> np.ndarray:
        """M (K, n), kNm, of the linear model at ordinates y (n,), m."""
        return self.M0 + self.delta(np.asarray(y, dtype=float) - self.y0)

    def gradient(self, coeff: np.ndarray) -> np.ndarray:
        """sum over (k, i) of coeff[k, i] dM[k, i]/dy, shape (n,) (the transposed product)."""
        coeff = np.asarray(coeff, dtype=float)
        k, n = self.states, self.stations
        grad = -np.sum(coeff * self.sx, axis=0)
        if self.steps is not None:
            # a step e feeds every cut i > e: reverse running sums of the cut weights
            weights = np.zeros((k, n - 1, 3))
            tail = lambda a: np.cumsum(a[:, ::-1], axis=1)[:, ::-1][:, 1:]  # noqa: E731 - sum over i > e
            weights[:, :, FY] = tail(coeff * self.x)
            weights[:, :, FX] = -tail(coeff * self.y0)
            weights[:, :, MO] = -tail(coeff)
            grad += self.steps.T @ weights.ravel()
        if self.reaction is not None:
            lever = np.stack([-(coeff * (self.y0 - self.y0[0])).sum(axis=1), (coeff * (self.x - self.x[0])).sum(axis=1),
                              -coeff.sum(axis=1)], axis=1)  # (K, 3)
            grad += np.einsum("kc,kcj->j", lever, self.reaction)
        return grad

    def dense(self) -> np.ndarray:
        """The full Jacobian (K, n, n), kN, springing columns zero: for tests and small problems only."""
        n = self.stations
        jac = np.zeros((self.states, n, n))
        for j in range(1, n - 1):
            jac[:, :, j] = self.delta(np.eye(n)[j])
        return jac


# ------------------------------------------------------------------------------------- the steps
def step_rates(axis: Axis, loads: StationLoads, density_rates: sp.csr_matrix | None = None) -> sp.csr_matrix | None:
    """The sparse step matrix of `MomentModel` for ``loads`` on ``axis``.

    ``density_rates``: sparse (K (n-1) 4, n), the rates of every state's element densities per metre
    of each ordinate (rows as `StationLoads.dist` flattened), or None if the loads do not move with
    the shape. Point loads keep their abscissae and forces; only their height moves.
    """
    n = axis.count
    e_count = n - 1
    k_count = loads.count
    rows: list[np.ndarray] = []
    cols: list[np.ndarray] = []
    vals: list[np.ndarray] = []
    states = np.arange(k_count)[:, None]
    elements = np.arange(e_count)[None, :]
    base = (states * e_count + elements) * 3  # (K, E)
    # the lever arm of horizontal densities: d MO / dy of the element's two stations, densities held
    fax, fbx = loads.dist[:, :, 0, 0], loads.dist[:, :, 1, 0]
    if np.any(fax) or np.any(fbx):
        for node_offset, rate in ((0, -(fax / 3 + fbx / 6)), (1, -(fax / 6 + fbx / 3))):
            rows.append((base + MO).ravel())
            cols.append(np.broadcast_to(elements + node_offset, (k_count, e_count)).ravel())
            vals.append(rate.ravel())
    # point loads with a horizontal component: their height follows the chord they sit on
    if loads.point_x.size and np.any(loads.point_force[:, 0]):
        tol = 1e-9 * axis.span_m
        cut = np.clip(np.searchsorted(axis.x, loads.point_x - tol, side="left"), 0, n - 1)
        inner = cut > 0  # a load at the left springing enters cut 0 and its height never moves
        cut, px, fx, state = cut[inner], loads.point_x[inner], loads.point_force[inner, 0], loads.point_state[inner]
        step = cut - 1
        t = np.clip((px - axis.x[step]) / (axis.x[cut] - axis.x[step]), 0.0, 1.0)
        row = (state * e_count + step) * 3 + MO
        rows += [row, row]
        cols += [step, cut]
        vals += [-fx * (1 - t), -fx * t]
    matrix = None
    if rows:
        matrix = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                               shape=(k_count * e_count * 3, n))
    if density_rates is not None:
        combine = _density_to_steps(axis, k_count)
        moved = (combine @ density_rates).tocsr()
        matrix = moved if matrix is None else (matrix + moved).tocsr()
    if matrix is not None:
        matrix.eliminate_zeros()
        if matrix.nnz == 0:
            return None
    return matrix


def _density_to_steps(axis: Axis, states: int) -> sp.csr_matrix:
    """Sparse (K E 3, K E 4): element densities (a x, a y, b x, b y) to the step's FX, FY and moment
    about the origin, the element's geometry held (the resultant and first moment of a linear density)."""
    x0, y0 = axis.x[:-1], axis.y[:-1]
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    e_count = dx.size
    block = np.zeros((e_count, 3, 4))
    block[:, FX, 0] = block[:, FX, 2] = 0.5
    block[:, FY, 1] = block[:, FY, 3] = 0.5
    block[:, MO, 0] = -0.5 * y0 - dy / 6
    block[:, MO, 1] = 0.5 * x0 + dx / 6
    block[:, MO, 2] = -0.5 * y0 - dy / 3
    block[:, MO, 3] = 0.5 * x0 + dx / 3
    k, e, c, f = np.meshgrid(np.arange(states), np.arange(e_count), np.arange(3), np.arange(4), indexing="ij")
    values = np.broadcast_to(block[None], (states, e_count, 3, 4))
    return sp.csr_matrix((values.ravel(), (((k * e_count + e) * 3 + c).ravel(), ((k * e_count + e) * 4 + f).ravel())),
                         shape=(states * e_count * 3, states * e_count * 4))


def _totals(steps: sp.csr_matrix | None, states: int, stations: int, upto: int | None = None) -> np.ndarray:
    """(K, 3, n) rates of the running FX, FY, MO summed over the steps before cut ``upto`` (all: None)."""
    out = np.zeros((states, 3, stations))
    if steps is None:
        return out
    e_count = stations - 1
    last = e_count if upto is None else upto
    k, e, c = np.meshgrid(np.arange(states), np.arange(last), np.arange(3), indexing="ij")
    rows = ((k * e_count + e) * 3 + c).ravel()
    summing = sp.csr_matrix((np.ones(rows.size), ((k * 3 + c).ravel(), rows)), shape=(states * 3, steps.shape[0]))
    return np.asarray((summing @ steps).todense()).reshape(states, 3, stations)


# ------------------------------------------------------------------------------ three-hinged arch
def statics_model(axis: Axis, loads: StationLoads, response: Response, hinge_station: int,
                  density_rates: sp.csr_matrix | None = None) -> MomentModel:
    """The linearised moments of a three-hinged arch (exact statics, module docstring).

    ``response`` is the statics engine's result for ``loads`` on ``axis``; the hinge's ordinate may
    move with the others (its row of the reaction rates then carries the change of the hinge's height).
    """
    n = axis.count
    k_count = loads.count
    steps = step_rates(axis, loads, density_rates)
    xa, ya, xb, yb = axis.x[0], axis.y[0], axis.x[-1], axis.y[-1]
    c = hinge_station
    xc, yc = axis.x[c], axis.y[c]
    a = np.array([[1.0, 0.0, 1.0, 0.0], [0.0, 1.0, 0.0, 1.0], [-ya, xa, -yb, xb], [-(yc - ya), xc - xa, 0.0, 0.0]])
    total = _totals(steps, k_count, n)
    at_hinge = _totals(steps, k_count, n, upto=c)
    cuts = cut_resultants(axis, loads)
    rhs = np.zeros((k_count, 4, n))
    rhs[:, 0] = -total[:, FX]
    rhs[:, 1] = -total[:, FY]
    rhs[:, 2] = -total[:, MO]
    rhs[:, 3] = at_hinge[:, MO] - (xc * at_hinge[:, FY] - yc * at_hinge[:, FX])
    # the hinge's own height: in the hinge equation's lever (-cross(xc, yc, Fc)) and its matrix row
    rhs[:, 3, c] += cuts.fx_right[:, c] + response.reactions[:, 0, 0]
    rates = np.linalg.solve(a, rhs)  # (K, 4, n): RAx, RAy, RBx, RBy
    reaction = np.zeros((k_count, 3, n))
    reaction[:, 0] = rates[:, 0]
    reaction[:, 1] = rates[:, 1]
    sx = cuts.fx_right + response.reactions[:, 0, 0:1]
    return MomentModel(axis.x.copy(), axis.y.copy(), response.M.copy(), sx, steps, reaction)


# ---------------------------------------------------------------------------------------- frames
def _element_state(model: FrameModel, length: np.ndarray, cos: np.ndarray, sin: np.ndarray, loads: StationLoads):
    """Global element stiffness (E, 6, 6) and consistent load vectors (states, E, 6) for a geometry."""
    moved = replace(model, length=length, cos=cos, sin=sin)
    k_local = _local_stiffness(length, model.EA, model.EI, model.GAs, model.shear_deformation)
    t = rotation_matrices(cos, sin)
    k_glob = np.matmul(np.matmul(t.transpose(0, 2, 1), k_local), t)  # batched T^T k T
    local = _distributed_local(moved, loads.dist)
    local += _thermal_local(moved, loads.temperature_uniform_C, loads.temperature_difference_C)
    f = _to_global(local, cos, sin)
    if loads.point_x.size:
        e, glob = _point_global(moved, loads)
        np.add.at(f, (loads.point_state, e), glob)
    return k_glob, f


def frame_reaction_rates(model: FrameModel, loads: StationLoads) -> np.ndarray:
    """(K, q, n): rates of the redundants (the functionals `redundant_rows` picks) per metre of each
    ordinate, loads held, by the adjoint of the stiffness: dR/dy_j = A (df/dy_j - dK/dy_j u), A the
    response maps, u the states' displacements (one multi-right-hand-side solve). Only the two
    elements meeting at station j change, so all columns come from four batched element evaluations."""
    axis = model.axis
    n = axis.count
    eps = RELATIVE_STEP * axis.span_m
    u = solve_displacements(model, loads)  # (K, dofs)
    u_e = u[:, model.element_dofs]  # (K, E, 6)
    functionals = redundant_rows(model)
    a_elem = model.maps.element[functionals]  # (q, E, 6)
    out = np.zeros((loads.count, len(functionals), n))
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    for end, sign in ((0, -1.0), (1, 1.0)):  # raising the element's start node lowers dy, its end node raises it
        states = []
        for step in (eps, -eps):
            dy_moved = dy + sign * step
            length = np.hypot(dx, dy_moved)
            states.append(_element_state(model, length, dx / length, dy_moved / length, loads))
        (k_plus, f_plus), (k_minus, f_minus) = states
        dg = (f_plus - f_minus) - np.einsum("eab,keb->kea", k_plus - k_minus, u_e)  # (K, E, 6)
        if model.axially_rigid:  # the constraints move too: C^T lambda in the nodal rows, C u in their own
            d_c, d_length = _constraint_change(dx, dy, sign * eps)
            dg -= u[:, model.first_multiplier:, None] * d_c[None]
            d_rows = (np.outer(loads.temperature_uniform_C, model.section.thermal_expansion_per_C * d_length)
                      - np.einsum("em,kem->ke", d_c, u_e))
            out[:, :, np.arange(n - 1) + end] += np.einsum(
                "qe,ke->kqe", model.maps.elongation[functionals], d_rows) / (2 * eps)
        out[:, :, np.arange(n - 1) + end] += np.einsum("qem,kem->kqe", a_elem, dg) / (2 * eps)
    return out


def _constraint_change(dx: np.ndarray, dy: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Change of each element's constraint row (E, 6) and chord length (E,) between dy + step and
    dy - step (a rigid rib: the row is the elongation along the chord, (-c, -s, 0, c, s, 0))."""
    rows, lengths = [], []
    for moved in (dy + step, dy - step):
        length = np.hypot(dx, moved)
        c, s = dx / length, moved / length
        zero = np.zeros_like(c)
        rows.append(np.stack([-c, -s, zero, c, s, zero], axis=1))
        lengths.append(length)
    return rows[0] - rows[1], lengths[0] - lengths[1]


def redundant_rows(model: FrameModel) -> list[int]:
    """Indices of the response-map functionals that are the redundants: the flat reaction components
    ``maps.redundant`` in order, then the tie force of a tied arch."""
    n = model.axis.count
    flat_of = []
    for dof in model.fixed:
        flat_of.append(int(dof) if dof < 3 else 3 + int(dof) - 3 * (n - 1))
    rows = [flat_of.index(c) for c in model.maps.redundant]
    if model.kind is SupportKind.TIED:  # the tie force is the last functional
        rows.append(model.maps.element.shape[0] - 1)
    return rows


def frame_model_moments(model: FrameModel, loads: StationLoads, response: Response,
                        density_rates: sp.csr_matrix | None = None) -> MomentModel:
    """The linearised moments of a two-hinged, fixed or tied arch (module docstring).

    ``response`` is the frame's result for ``loads``; ``density_rates`` as in `step_rates`.
    """
    axis = model.axis
    n = axis.count
    k_count = loads.count
    steps = step_rates(axis, loads, density_rates)
    maps = model.maps
    redundant = frame_reaction_rates(model, loads)  # (K, q, n), loads held
    if density_rates is not None:  # the redundants also answer the loads' own change
        q = redundant.shape[1]
        per_state = sp.csr_matrix(maps.dist[redundant_rows(model)].reshape(q, -1))
        redundant += (sp.kron(sp.identity(k_count, format="csr"), per_state) @ density_rates).toarray().reshape(
            k_count, q, n)
    # the statics that completes the reactions: sum Fx, sum Fy and the moment about the origin
    xa, ya, xb, yb = axis.x[0], axis.y[0], axis.x[-1], axis.y[-1]
    coeff = np.array([[1.0, 0.0, 0.0, 1.0, 0.0, 0.0], [0.0, 1.0, 0.0, 0.0, 1.0, 0.0],
                      [-ya, xa, 1.0, -yb, xb, 1.0]])
    total = _totals(steps, k_count, n)  # (K, 3, n)
    known = list(maps.redundant)
    unknown = list(maps.completed)
    flat = np.zeros((k_count, 6, n))
    flat[:, known] = redundant[:, : len(known)]
    rhs = -total - np.einsum("ck,bkn->bcn", coeff[:, known], flat[:, known])
    flat[:, unknown] = np.einsum("uc,bcn->bun", np.linalg.inv(coeff[:, unknown]), rhs)
    reaction = flat[:, 0:3].copy()
    if model.kind is SupportKind.TIED:
        reaction[:, 0:2] += redundant[:, -1:, :] * maps.tie_direction[None, :, None]
    cuts = cut_resultants(axis, loads)
    left_x = response.reactions[:, 0, 0] + response.tie_force * maps.tie_direction[0]
    sx = cuts.fx_right + left_x[:, None]
    return MomentModel(axis.x.copy(), axis.y.copy(), response.M.copy(), sx, steps, reaction)
