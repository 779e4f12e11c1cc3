"""Sensitivity of the station moments to the station ordinates: the Jacobian dM/dy.

For load states whose loads are held fixed (densities per element, point loads at their abscissae),
the moment at station i depends on the ordinates in two ways:

- explicitly, through the lever arms of the equilibrium recovery (the part of the arch left of each
  cut, and the statics that completes the non-redundant reactions), with the redundants held;
- through the redundants R (the thrust of a two-hinged arch, the springing reactions of a fixed
  one, the tie force), which the frame model gives.

The first is differenced on the cheap recovery. The second uses the adjoint of the frame model: with
A the response-map matrix (already solved once per factorisation),

    dR/dy_j = A (df/dy_j - dK/dy_j u),

where only the two elements meeting at station j change, so dK/dy_j and df/dy_j are element
differences and u the states' displacements (one multi-RHS solve). The unit-redundant moment fields
chain them: dM/dy_j = (dM/dy_j)|_R + sum_r m_r dR_r/dy_j.

A three-hinged arch has no redundants: its Jacobian is the difference quotient of the exact statics.
Everything is in kN (kNm per m).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from formfind.analysis.frame import (
    FrameModel,
    _distributed_local,
    _local_stiffness,
    _point_global,
    _thermal_local,
    _to_global,
    recover_moments,
    redundant_values,
    rotation_matrices,
    solve_displacements,
)
from formfind.analysis.statics import three_hinged
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

# Central differences of the span's 1e-5: the two adjoint terms are each much larger than their
# difference, so a forward difference's O(step) error would survive their cancellation.
RELATIVE_STEP = 1e-5


def statics_jacobian(axis: Axis, loads: StationLoads, hinge_station: int, free: np.ndarray) -> np.ndarray:
    """dM/dy (states, stations, stations) of a three-hinged arch by differences of exact statics."""
    eps = RELATIVE_STEP * axis.span_m
    jac = np.zeros((loads.count, axis.count, axis.count))
    for j in np.flatnonzero(free):
        moments = []
        for sign in (1.0, -1.0):
            y = axis.y.copy()
            y[j] += sign * eps
            moments.append(three_hinged(Axis(axis.x, y, axis.theta), loads, hinge_station).M)
        jac[:, :, j] = (moments[0] - moments[1]) / (2 * eps)
    return jac


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


def frame_jacobian(model: FrameModel, loads: StationLoads, free: np.ndarray) -> np.ndarray:
    """dM/dy (states, stations, stations) of the frame model, loads held (module docstring)."""
    axis = model.axis
    n = axis.count
    k_states = loads.count
    span = axis.span_m
    eps = RELATIVE_STEP * span
    u = solve_displacements(model, loads)  # (K, dofs)
    u_e = u[:, model.element_dofs]  # (K, E, 6)
    a_elem = model.maps.element  # (q, E, 6)
    functionals = _redundant_rows(model)
    d_redundant = np.zeros((k_states, len(functionals), n))
    dx, dy = np.diff(axis.x), np.diff(axis.y)
    for end, sign in ((0, -1.0), (1, 1.0)):  # raising the element's start node lowers dy, its end node raises it
        states = []
        for step in (eps, -eps):
            dy_moved = dy + sign * step
            length = np.hypot(dx, dy_moved)
            states.append(_element_state(model, length, dx / length, dy_moved / length, loads))
        (k_plus, f_plus), (k_minus, f_minus) = states
        dg = (f_plus - f_minus) - np.einsum("eab,keb->kea", k_plus - k_minus, u_e)  # (K, E, 6)
        per_element = np.einsum("qem,kem->kqe", a_elem[functionals], dg) / (2 * eps)  # (K, q, E)
        d_redundant[:, :, np.arange(n - 1) + end] += per_element  # the node each element end sits on
    # unit redundant moment fields (state independent) and the explicit part with redundants held
    # unit redundant moment fields: no loads, one redundant at 1
    count = len(functionals)
    units = recover_moments(model, axis, StationLoads.from_densities(np.zeros((count, n - 1, 2, 2)), "unit"),
                            np.eye(count))
    held = redundant_values(model, loads)
    jac = np.einsum("ri,krj->kij", units, d_redundant)
    for j in np.flatnonzero(free):
        moved = []
        for step in (eps, -eps):
            y = axis.y.copy()
            y[j] += step
            moved.append(recover_moments(model, Axis(axis.x, y, axis.theta), loads, held))
        jac[:, :, j] += (moved[0] - moved[1]) / (2 * eps)
    jac[:, :, ~free] = 0.0
    return jac


def _redundant_rows(model: FrameModel) -> list[int]:
    """Indices of the response-map functionals that are the redundants, in `recover_moments` order."""
    n = model.axis.count
    flat_of = []
    for dof in model.fixed:
        flat_of.append(int(dof) if dof < 3 else 3 + int(dof) - 3 * (n - 1))
    rows = [flat_of.index(c) for c in model.maps.redundant]
    if model.maps.element.shape[0] > len(model.fixed):  # the tie force is the last functional
        rows.append(model.maps.element.shape[0] - 1)
    return rows
