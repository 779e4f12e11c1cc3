"""Natural frequencies in the plane.

Sources:
- A simply supported beam (Clough & Penzien, *Dynamics of Structures*; Timoshenko, *Vibration Problems in
  Engineering*; from memory): f_n = n^2 pi / (2 L^2) sqrt(EI / m), modal mass m L / 2 for a sine shape of
  unit amplitude. A two-hinged arch whose rise is tiny against the rib's radius of gyration bends as
  that beam (its axial restraint does not change linear frequencies).
- An independent generalized eigensolution: the stiffness and consistent mass of plane beam elements
  (Przemieniecki, *Theory of Matrix Structural Analysis*, from memory) assembled densely here, with
  scipy.linalg.eigh, for a shallow and a steep arch.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from formfind.analysis.dynamics import G, natural_modes
from formfind.analysis.engine import analyse
from formfind.analysis.frame import build_frame
from formfind.design.check import check
from formfind.enums import SupportKind
from formfind.model.case import load_case
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.section import Section
from tests.conftest import ROOT

E, I, A, MASS = 2.1e8, 5e-5, 0.01, 0.5  # kN/m2, m4, m2, t/m


def _model(span, rise, count, kind=SupportKind.TWO_HINGED):
    curve = Parabola(Chord(span), rise)
    axis = Axis.from_curve(curve, place_stations(curve, count))
    return build_frame(axis, Section(A, I, 0.2, E).at(axis), kind)


def test_a_flat_two_hinged_arch_vibrates_as_a_simply_supported_beam():
    span = 20.0
    model = _model(span, 0.001, 101)  # rise / radius of gyration = 0.014: no arch action
    modes = natural_modes(model, np.full(model.axis.count - 1, MASS), np.zeros(model.axis.count), 4)
    beam = [n * n * np.pi / (2 * span**2) * np.sqrt(E * I / MASS) for n in range(1, 5)]
    np.testing.assert_allclose(modes.frequency_hz, beam, rtol=1e-4)  # 100 cubic elements
    # shapes are scaled to a largest station translation of 1: a sine whose crest falls between
    # stations is scaled by the largest sampled value
    x = model.axis.x
    peaks = [np.abs(np.sin(n * np.pi * x / span)).max() for n in range(1, 5)]
    np.testing.assert_allclose(modes.modal_mass_t, MASS * span / 2 / np.square(peaks), rtol=1e-4)
    assert modes.symmetry == ("symmetric", "antisymmetric", "symmetric", "antisymmetric")
    assert modes.total_mass_t == pytest.approx(MASS * span, rel=1e-6)


def _dense(axis: Axis, kind: SupportKind):
    """K and M of the arch, built here from the element formulas (pinned or fixed ends)."""
    n = axis.count
    K = np.zeros((3 * n, 3 * n))
    M = np.zeros((3 * n, 3 * n))
    for e in range(n - 1):
        dx, dy = axis.x[e + 1] - axis.x[e], axis.y[e + 1] - axis.y[e]
        L = float(np.hypot(dx, dy))
        c, s = dx / L, dy / L
        k = np.zeros((6, 6))
        k[np.ix_([0, 3], [0, 3])] = E * A / L * np.array([[1, -1], [-1, 1]])
        b = E * I / L**3 * np.array([[12, 6 * L, -12, 6 * L], [6 * L, 4 * L * L, -6 * L, 2 * L * L],
                                     [-12, -6 * L, 12, -6 * L], [6 * L, 2 * L * L, -6 * L, 4 * L * L]])
        k[np.ix_([1, 2, 4, 5], [1, 2, 4, 5])] = b
        m = np.zeros((6, 6))
        m[np.ix_([0, 3], [0, 3])] = MASS * L / 6 * np.array([[2, 1], [1, 2]])
        m[np.ix_([1, 2, 4, 5], [1, 2, 4, 5])] = MASS * L / 420 * np.array(
            [[156, 22 * L, 54, -13 * L], [22 * L, 4 * L * L, 13 * L, -3 * L * L],
             [54, 13 * L, 156, -22 * L], [-13 * L, -3 * L * L, -22 * L, 4 * L * L]])
        T = np.zeros((6, 6))
        for o in (0, 3):
            T[o:o + 3, o:o + 3] = [[c, s, 0], [-s, c, 0], [0, 0, 1]]
        idx = list(range(3 * e, 3 * e + 6))
        K[np.ix_(idx, idx)] += T.T @ k @ T
        M[np.ix_(idx, idx)] += T.T @ m @ T
    fixed = [0, 1, 3 * n - 3, 3 * n - 2] + ([2, 3 * n - 1] if kind is SupportKind.FIXED else [])
    free = [d for d in range(3 * n) if d not in fixed]
    return K[np.ix_(free, free)], M[np.ix_(free, free)]


@pytest.mark.parametrize("rise,kind", [(2.0, SupportKind.TWO_HINGED), (8.0, SupportKind.TWO_HINGED),
                                       (5.0, SupportKind.FIXED)])
def test_frequencies_equal_an_independent_dense_eigensolution(rise, kind):
    model = _model(24.0, rise, 41, kind)
    modes = natural_modes(model, np.full(model.axis.count - 1, MASS), np.zeros(model.axis.count), 5)
    K, M = _dense(model.axis, kind)
    omega2 = scipy.linalg.eigh(K, M, eigvals_only=True)[:5]
    np.testing.assert_allclose(modes.frequency_hz, np.sqrt(omega2) / (2 * np.pi), rtol=1e-8)


def test_the_default_case_reports_frequencies_and_deflections():
    case = load_case(ROOT / "cases" / "footbridge.toml")
    analysis = analyse(case)
    modes = analysis.modes
    assert modes is not None and modes.frequency_hz.size == case.analysis.natural_modes
    assert np.all(np.diff(modes.frequency_hz) >= 0)
    # the mass is the permanent cases' downward load over g (their self-weight case holds the rib)
    permanent = [k for k, g in enumerate(analysis.loads.cases.groups) if g == "dead"]
    weight = -analysis.loads.cases.select(permanent).total_force()[:, 1].sum()
    assert modes.total_mass_t == pytest.approx(weight / G, rel=1e-9)
    rows = {r.name: r for r in check(case, analysis).rows}
    assert "natural frequency, lowest vertical mode" in rows
    assert rows["natural frequency, lowest vertical mode"].value == pytest.approx(modes.frequency_hz[0])
    assert "pedestrian excitation" in rows["natural frequency, lowest vertical mode"].note
    assert "vertical deflection" in rows


def test_a_half_ring_with_sliding_clamped_ends_has_the_inextensional_frequencies_of_a_complete_ring():
    """Hoppe (1871), in-plane flexural modes of a complete thin ring (Blevins, *Formulas for Natural
    Frequency and Mode Shape*, ring in-plane modes; Love, *Mathematical Theory of Elasticity*; from
    memory): omega_n = sqrt(E I / (m R^4)) n (n^2 - 1) / sqrt(n^2 + 1), n = 2, 3, ...

    One mode of each pair is symmetric about a diameter: across it the tangential displacement and the
    rotation vanish while the radial one is free. So a half ring between the ends of that diameter,
    held vertically and against rotation but free to slide horizontally, vibrates with every n >= 2
    (and a rigid horizontal slide, omega = 0). Our own mass and stiffness matrices, with those end
    conditions applied here; the rib is slender (R / r = 141), so the stretching that Hoppe neglects
    shifts the frequencies by less than 1e-4; 240 cubic elements add less than that.
    """
    radius, count = 10.0, 241
    t = np.linspace(0.0, np.pi, count)
    axis = Axis(radius * (1 - np.cos(t)), radius * np.sin(t), np.pi / 2 - t)
    model = build_frame(axis, Section(A, I, 0.2, E).at(axis), SupportKind.FIXED)
    from formfind.analysis.dynamics import mass_matrix

    M = mass_matrix(model, np.full(count - 1, MASS), np.zeros(count)).toarray()
    K = model.stiffness.toarray()
    held = [1, 2, 3 * count - 2, 3 * count - 1]  # vertical translation and rotation of both ends
    free = [d for d in range(3 * count) if d not in held]
    omega2 = scipy.linalg.eigh(K[np.ix_(free, free)], M[np.ix_(free, free)], eigvals_only=True)[:6]
    assert abs(omega2[0]) < 1e-6 * omega2[1]  # the rigid slide
    n = np.arange(2, 7)
    hoppe = np.sqrt(E * I / (MASS * radius**4)) * n * (n**2 - 1) / np.sqrt(n**2 + 1)
    np.testing.assert_allclose(np.sqrt(omega2[1:]), hoppe, rtol=3e-4)


def _companion(omega_sq: float) -> np.ndarray:
    """d/dtheta of (u, u', ..., u^v) under the inextensional arch equation (next helper)."""
    C = np.zeros((6, 6))
    C[:5, 1:] = np.eye(5)
    C[5, 0], C[5, 2], C[5, 4] = -omega_sq, omega_sq - 1.0, -2.0
    return C


def _inextensional_determinant(omega_sq: float, opening: float, ends: str) -> float:
    """Boundary determinant of the inextensional circular arch (u tangential displacement, theta angle):
    u^vi + 2 u^iv + u'' = Omega^2 (u'' - u), Omega^2 = m omega^2 R^4 / (E I); pinned ends hold u, u' and
    the moment (u''' = 0 there), clamped ends u, u' and the rotation (u'' = 0 there). Integrated exactly
    over the opening with the matrix exponential of the equation's companion matrix."""
    transfer = scipy.linalg.expm(_companion(omega_sq) * opening)
    held = [0, 1, 3] if ends == "pinned" else [0, 1, 2]
    started = [k for k in range(6) if k not in held]
    return float(np.linalg.det(transfer[np.ix_(held, started)]))


def _inextensional_frequencies(opening: float, ends: str, count: int) -> np.ndarray:
    """The ``count`` lowest Omega = omega R^2 sqrt(m / (E I)): roots of the determinant, bracketed on a
    grid and refined by Brent's method."""
    import scipy.optimize

    grid = np.linspace(1e-3, (6 * np.pi / opening) ** 2, 4001) ** 2
    values = np.array([_inextensional_determinant(w, opening, ends) for w in grid])
    roots = [scipy.optimize.brentq(_inextensional_determinant, grid[k], grid[k + 1], args=(opening, ends),
                                   xtol=1e-13, rtol=1e-14)
             for k in np.nonzero(np.sign(values[:-1]) != np.sign(values[1:]))[0][:count]]
    return np.sqrt(roots)


@pytest.mark.parametrize("degrees", [60.0, 120.0, 180.0])
@pytest.mark.parametrize("ends", ["pinned", "clamped"])
def test_circular_arches_vibrate_as_the_inextensional_arch_equation_says(degrees, ends):
    """In-plane flexural vibration of a uniform circular arch with an inextensible axis (Love,
    *Mathematical Theory of Elasticity*, thin rods; Den Hartog, "The lowest natural frequency of circular
    arcs", Phil. Mag. 1928; the equation as in the test's helper, from memory). Published tables
    (Veletsos et al., ASCE J. Eng. Mech. 1972; Blevins, circular arcs) were not at hand, so the equation
    is solved here exactly instead of read from them; it reproduces Hoppe's ring for u = sin(n theta).

    Our model with the axially rigid rib (the same assumption) agrees to the h^2 error of 240 cubic
    elements (< 5e-5). The ordinary, extensible rib (R / r = 141) changes the lowest mode, antisymmetric
    and inextensional in nature, by less than 1e-3.
    """
    radius, count, opening = 10.0, 241, np.radians(degrees)
    phi = np.linspace(-opening / 2, opening / 2, count)
    axis = Axis(radius * (np.sin(phi) + np.sin(opening / 2)), radius * (np.cos(phi) - np.cos(opening / 2)), -phi)
    kind = SupportKind.TWO_HINGED if ends == "pinned" else SupportKind.FIXED
    exact = _inextensional_frequencies(opening, ends, 4)
    assert exact.size == 4
    for n in (2, 3, 4):  # the equation itself: a ring's u = sin(n theta) at Hoppe's frequency solves it
        hoppe_sq = n**2 * (n**2 - 1) ** 2 / (n**2 + 1)
        derivatives = np.array([np.sin(n * 0.3 + k * np.pi / 2) * n**k for k in range(7)])
        np.testing.assert_allclose(_companion(hoppe_sq) @ derivatives[:6], derivatives[1:], atol=1e-9 * n**6)
    scale = np.sqrt(MASS * radius**4 / (E * I))  # Omega per omega (s)
    section = Section(A, I, 0.2, E).at(axis)
    mass = np.full(count - 1, MASS)
    rigid = natural_modes(build_frame(axis, section, kind, axially_rigid=True), mass, np.zeros(count), 4)
    np.testing.assert_allclose(2 * np.pi * rigid.frequency_hz * scale, exact, rtol=5e-5)
    assert rigid.symmetry[0] == "antisymmetric"
    elastic = natural_modes(build_frame(axis, section, kind), mass, np.zeros(count), 1)
    assert 2 * np.pi * elastic.frequency_hz[0] * scale == pytest.approx(exact[0], rel=1e-3)
