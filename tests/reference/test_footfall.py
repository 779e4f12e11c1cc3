"""Footbridge comfort: resonant accelerations under a crowd (formfind.analysis.dynamics,
formfind.design.footfall).

Sources:
- Steady-state resonance of a damped mode (Clough & Penzien, *Dynamics of Structures*, harmonic loading;
  from memory): amplitude F / (2 zeta K*), so peak acceleration F / (2 zeta M*). For a simply supported
  beam of mass m per metre under a uniform harmonic load p per metre in phase with its first mode
  (a sine): F = 2 p L / pi, M* = m L / 2, so a = 2 p / (pi zeta m). A two-hinged arch whose rise is tiny
  against the rib's radius of gyration vibrates as that beam.
- Setra, "Footbridges: assessment of vibrational behaviour due to pedestrian footfall", 2006 (from memory):
  280 N per pedestrian (first harmonic), 70 N (second); n' = 10.8 sqrt(zeta N) / S below 1 pedestrian per
  m2, 1.85 sqrt(N) / S above; psi rising from 0 at 1.25 Hz to 1 at 1.7 Hz, 1 to 2.1 Hz, 0 at 2.3 Hz.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from formfind.analysis.dynamics import natural_modes, resonant_acceleration
from formfind.analysis.engine import analyse
from formfind.analysis.frame import build_frame
from formfind.design.check import check
from formfind.design.footfall import HARMONICS, crowd_response, equivalent_pedestrians, psi
from formfind.enums import SupportKind
from formfind.model.case import load_case
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.section import Section
from tests.conftest import ROOT


def test_a_flat_arch_under_a_resonant_uniform_load_accelerates_as_a_simply_supported_beam():
    span, m, zeta, p = 20.0, 0.5, 0.01, 0.3  # m, t/m, -, kN/m
    curve = Parabola(Chord(span), 0.001)
    axis = Axis.from_curve(curve, place_stations(curve, 101))
    model = build_frame(axis, Section(0.01, 5e-5, 0.2, 2.1e8).at(axis), SupportKind.TWO_HINGED)
    modes = natural_modes(model, np.full(100, m), np.zeros(101), 3)
    a = resonant_acceleration(modes, axis.x, p, zeta)
    # 1e-4: the modal mass of 100 cubic elements and the trapezoidal integral of |sin| (O(h^2))
    assert a[0] == pytest.approx(2 * p / (np.pi * zeta * m), rel=1e-4)
    # the antisymmetric second mode: both half-waves loaded adversely, F = 2 p L / pi again
    assert a[1] == pytest.approx(2 * p / (np.pi * zeta * m), rel=1e-3)


def test_the_crowd_model_of_the_guide():
    # sparse crowd, 0.5 per m2 on 3 m x 36 m, 0.5 % damping: N = 54, n' = 10.8 sqrt(0.27) / 108
    assert equivalent_pedestrians(0.5, 108.0, 0.005) == pytest.approx(10.8 * np.sqrt(0.27) / 108, rel=1e-15)
    assert equivalent_pedestrians(1.0, 108.0, 0.005) == pytest.approx(1.85 * np.sqrt(108.0) / 108, rel=1e-15)
    first, second = (b for _, b in HARMONICS)
    assert [psi(f, first) for f in (1.0, 1.25, 1.475, 1.7, 2.0, 2.1, 2.2, 2.3, 3.0)] == pytest.approx(
        [0, 0, 0.5, 1, 1, 1, 0.5, 0, 0])
    assert [psi(f, second) for f in (2.5, 2.95, 3.4, 4.2, 4.4, 4.6)] == pytest.approx([0, 0.5, 1, 1, 0.5, 0])


def test_the_footbridge_acceleration_row_is_the_hand_calculation_on_its_modes():
    case = load_case(ROOT / "cases" / "footbridge.toml")
    case = replace(case, check=replace(case.check, deck_width_m=3.0, crowd_density_per_m2=0.5, damping_ratio=0.005))
    analysis = analyse(case)
    modes, x = analysis.modes, analysis.axis.x
    n_eq = 10.8 * np.sqrt(0.005 * 0.5 * 3.0 * 36.0) / (3.0 * 36.0)
    hand = []
    for force, breaks in HARMONICS:
        for j, f in enumerate(modes.frequency_hz):
            load = force * n_eq * psi(f, breaks) * 3.0  # kN/m along the span
            phi = np.abs(modes.shapes[j, :, 1])
            integral = np.sum(0.5 * (phi[1:] + phi[:-1]) * np.diff(x))
            hand.append(load * integral / (2 * 0.005 * modes.modal_mass_t[j]) * phi.max())
    crowd = crowd_response(modes, x, 3.0, 0.5, 0.005)
    assert crowd.acceleration_m_s2 == pytest.approx(max(hand), rel=1e-12)
    assert crowd.acceleration_m_s2 > 0
    row = next(r for r in check(case, analysis).rows if r.name == "pedestrian vertical acceleration")
    assert row.value == pytest.approx(crowd.acceleration_m_s2)
    assert row.utilisation == pytest.approx(crowd.acceleration_m_s2 / case.check.acceleration_limit_m_s2)
    # twice the damping halves a sparse crowd's resonance but raises n' by sqrt(2): a net 1/sqrt(2)
    damped = crowd_response(modes, x, 3.0, 0.5, 0.01)
    assert damped.acceleration_m_s2 == pytest.approx(crowd.acceleration_m_s2 / np.sqrt(2), rel=1e-12)
