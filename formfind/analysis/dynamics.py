"""Natural frequencies and modes of the arch in its plane.

Mass: the permanent load cases' downward loads divided by g (distributed loads as distributed mass,
point loads lumped at their element's ends by the lever rule); where no permanent case holds the rib's
own weight, the rib's weight (unit weight x area) is added. Each element gets the consistent mass
matrix of a beam element (axial: m l / 6 [2 1; 1 2]; bending: the cubic Hermite matrix m l / 420 [...],
e.g. Przemieniecki, *Theory of Matrix Structural Analysis*, or any finite element text; from memory)
on the same frame model and the same degrees of freedom as the stiffness, a crown hinge included.
The generalized eigenproblem K phi = omega^2 M phi on the free degrees of freedom gives the modes.

Units: mass in tonnes (kN s^2 / m), stiffness kN / m, so omega in rad/s; frequencies in Hz. Mode
shapes are scaled to a largest translation of 1; the modal mass phi' M phi (t) is for that scaling.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from formfind.analysis.buckling import _symmetry
from formfind.analysis.frame import FrameModel, rotation_matrices
from formfind.errors import AnalysisError
from formfind.model.loads import StationLoads

G = 9.80665  # m/s2, standard gravity (the kilogram's definition, CGPM 1901)


@dataclass(frozen=True, eq=False)
class Modes:
    """Natural modes in the plane of the arch.

    Attributes:
        frequency_hz: (modes,) ascending.
        shapes: (modes, stations, 3) ux, uy (scaled to a largest translation of 1) and rotation.
        symmetry: per mode, "symmetric", "antisymmetric" or "unsymmetric" about midspan.
        direction: per mode, "vertical" or "horizontal": the translation holding more kinetic energy.
        modal_mass_t: (modes,) phi' M phi for the scaled shapes, t.
        total_mass_t: the mass of the model, t.
    """

    frequency_hz: np.ndarray
    shapes: np.ndarray
    symmetry: tuple[str, ...]
    direction: tuple[str, ...]
    modal_mass_t: np.ndarray
    total_mass_t: float


def _local_mass(length: np.ndarray, mass_per_m: np.ndarray) -> np.ndarray:
    """Consistent local mass matrices (elements, 6, 6), dofs (u1, v1, r1, u2, v2, r2), t and t m2."""
    L, m = length, mass_per_m
    out = np.zeros((L.size, 6, 6))
    a = m * L / 6.0
    out[:, 0, 0] = out[:, 3, 3] = 2 * a
    out[:, 0, 3] = out[:, 3, 0] = a
    b = m * L / 420.0
    block = np.array([[156, 22, 54, -13], [22, 4, 13, -3], [54, 13, 156, -22], [-13, -3, -22, 4]], dtype=float)
    powers = np.array([[0, 1, 0, 1], [1, 2, 1, 2], [0, 1, 0, 1], [1, 2, 1, 2]])  # of L in each entry
    idx = [1, 2, 4, 5]
    for r in range(4):
        for c in range(4):
            out[:, idx[r], idx[c]] = b * block[r, c] * L ** powers[r, c]
    return out


def mass_matrix(model: FrameModel, mass_per_m: np.ndarray, point_mass: np.ndarray) -> sp.csc_matrix:
    """The global consistent mass matrix: ``mass_per_m`` (elements,) t/m of chord, ``point_mass``
    (stations,) t lumped on the translations."""
    local = _local_mass(model.length, mass_per_m)
    t = rotation_matrices(model.cos, model.sin)
    glob = np.einsum("eji,ejk,ekl->eil", t, local, t)
    dofs = model.element_dofs
    rows = np.repeat(dofs, 6, axis=1).ravel()
    cols = np.tile(dofs, (1, 6)).ravel()
    n = model.axis.count
    lumped_rows = np.concatenate([3 * np.arange(n), 3 * np.arange(n) + 1])
    lumped = np.concatenate([point_mass, point_mass])
    size = model.dof_count
    return sp.csc_matrix((np.concatenate([glob.ravel(), lumped]), (np.concatenate([rows, lumped_rows]),
                                                                 np.concatenate([cols, lumped_rows]))),
                         shape=(size, size))


def permanent_mass(model: FrameModel, loads: StationLoads, rib_weight_kN_m: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """Mass per metre of chord (elements,) and lumped at the stations (stations,), t, from the summed
    downward loads of ``loads`` (the permanent cases) and, where given, the rib's weight (kN/m of chord,
    per element)."""
    n = model.axis.count
    fy = loads.dist[:, :, :, 1].sum(axis=0)  # (elements, 2 ends), kN per unit element parameter
    mass = np.maximum(-0.5 * (fy[:, 0] + fy[:, 1]), 0.0) / model.length / G
    if rib_weight_kN_m is not None:
        mass = mass + rib_weight_kN_m / G
    lumped = np.zeros(n)
    x = model.axis.x
    for px, force in zip(loads.point_x, loads.point_force, strict=True):
        down = max(-float(force[1]), 0.0) / G
        e = int(np.clip(np.searchsorted(x, px, side="right") - 1, 0, n - 2))
        t = (px - x[e]) / (x[e + 1] - x[e])
        lumped[e] += (1 - t) * down
        lumped[e + 1] += t * down
    return mass, lumped


def natural_modes(model: FrameModel, mass_per_m: np.ndarray, point_mass: np.ndarray, count: int) -> Modes:
    """The ``count`` lowest natural modes (fewer if the model has fewer free degrees of freedom).

    Raises:
        AnalysisError: if the model has no mass or the eigen-solver fails.
    """
    from scipy.sparse.linalg import ArpackNoConvergence, LinearOperator, eigs, eigsh

    M = mass_matrix(model, mass_per_m, point_mass)
    free = model.free
    m_ff = M[free][:, free].tocsc()
    k_ff = model.k_ff
    total = float(np.sum(mass_per_m * model.length) + point_mass.sum())
    if not total > 0:
        raise AnalysisError("natural frequencies need mass: the permanent cases carry no downward load and the "
                            "rib has no unit weight")
    count = int(min(count, free.size - 2))
    if count < 1:
        raise AnalysisError("natural frequencies: the model has too few free degrees of freedom")
    try:
        # a fixed start vector: ARPACK's default is random, and the outputs must be the same bytes every run
        start = np.linspace(1.0, 2.0, free.size)
        if model.axially_rigid:  # 1 / omega^2 of K_c^-1 M on the constraints' null space (as in buckling)
            nodal = model.nodal_free
            m_nn = m_ff[nodal][:, nodal].tocsr()
            k_inv = model.constrained_inverse()
            op = LinearOperator(k_inv.shape, matvec=lambda v: k_inv.matvec(m_nn @ np.ravel(v)), dtype=float)
            inverse, found = eigs(op, k=min(count, nodal.size - 2), which="LM", v0=start[nodal])
            values = 1.0 / inverse.real
            larger = np.linalg.norm(found.real, axis=0) >= np.linalg.norm(found.imag, axis=0)
            vectors = np.zeros((free.size, values.size))
            vectors[nodal] = np.where(larger, found.real, found.imag)
        else:  # shift-invert at 0 on the model's own factors: no second factorisation of K
            values, vectors = eigsh(k_ff, k=count, M=m_ff, sigma=0.0, which="LM", v0=start,
                                    OPinv=model.constrained_inverse())
    except (ArpackNoConvergence, RuntimeError) as exc:
        raise AnalysisError(f"natural frequencies: the eigen-solver failed ({exc})") from None
    order = np.argsort(values)
    values, vectors = values[order], vectors[:, order]
    n = model.axis.count
    shapes, symmetry, direction, modal = [], [], [], []
    for j in range(values.size):
        full = np.zeros(model.dof_count)
        full[free] = vectors[:, j]
        shape = np.stack([full[0:3 * n:3], full[1:3 * n:3], full[2:3 * n:3]], axis=-1)
        peak = float(np.abs(shape[:, :2]).max()) or 1.0
        k = int(np.argmax(np.abs(shape[:, :2]).max(axis=1)))
        component = int(np.argmax(np.abs(shape[k, :2])))
        sign = 1.0 if shape[k, component] >= 0 else -1.0
        shape = sign * shape / peak
        full = sign * full / peak
        shapes.append(shape)
        symmetry.append(_symmetry(model, shape))
        kinetic_x = float(full[0:3 * n:3] @ (M[0:3 * n:3][:, 0:3 * n:3] @ full[0:3 * n:3]))
        kinetic_y = float(full[1:3 * n:3] @ (M[1:3 * n:3][:, 1:3 * n:3] @ full[1:3 * n:3]))
        direction.append("vertical" if kinetic_y >= kinetic_x else "horizontal")
        modal.append(float(full @ (M @ full)))
    frequency = np.sqrt(np.maximum(values, 0.0)) / (2 * np.pi)
    return Modes(frequency, np.array(shapes), tuple(symmetry), tuple(direction), np.array(modal), total)


def resonant_acceleration(modes: Modes, x: np.ndarray, load_kN_m: float | np.ndarray, damping_ratio: float) -> np.ndarray:
    """Peak vertical acceleration of each mode at resonance under a harmonic vertical line load, m/s2.

    The load (amplitude ``load_kN_m`` per horizontal metre, a number or one value per station) acts
    along the span in phase with each mode's vertical motion (downwards where the mode moves down, the
    adverse placing); one mode at a time, in steady state at its own frequency: the modal amplitude is
    F / (2 zeta K) with K = omega^2 M*, so the peak acceleration is F / (2 zeta M*) x max |phi_y|,
    with F = integral of p |phi_y| dx (trapezoidal rule over the stations) and M* the modal mass.
    (Clough & Penzien, *Dynamics of Structures*, steady-state harmonic response at resonance; from memory.)
    Units: kN, m, t, so accelerations in m/s2.
    """
    if not damping_ratio > 0:
        raise AnalysisError("a resonant acceleration needs a damping ratio > 0")
    p = np.broadcast_to(np.asarray(load_kN_m, dtype=float), x.shape)
    phi_y = np.abs(modes.shapes[:, :, 1])  # (modes, stations)
    f = p * phi_y
    force = 0.5 * ((f[:, 1:] + f[:, :-1]) * np.diff(x)).sum(axis=1)
    return force / (2.0 * damping_ratio * modes.modal_mass_t) * phi_y.max(axis=1)
