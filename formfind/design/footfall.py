"""Footbridge comfort: the peak vertical acceleration of a crowd walking in step with a mode.

The crowd load follows the French footbridge guide (Setra, "Footbridges: assessment of vibrational
behaviour due to pedestrian footfall", technical guide, 2006; values from memory, check them against
the guide you design to):

- one pedestrian's vertical force: 280 N at the walking frequency (first harmonic), 70 N at twice it
  (second harmonic);
- a crowd of density d on a walkway of area S (N = d S pedestrians) acts as n' equivalent pedestrians
  per square metre, all in step with the mode: n' = 10.8 sqrt(zeta N) / S for d < 1 per m2, and
  n' = 1.85 sqrt(N) / S for denser crowds;
- a factor psi for how likely the mode's frequency is as a walking pace: 0 below 1.25 Hz, rising
  linearly to 1 at 1.7 Hz, 1 up to 2.1 Hz, falling to 0 at 2.3 Hz (first harmonic); for the second
  harmonic 0 below 2.5 Hz, 1 from 3.4 Hz to 4.2 Hz, 0 above 4.6 Hz, linear between.

The load per square metre, d' = 280 N x n' x psi, times the walkway width is a line load along the span;
each mode's resonant peak acceleration comes from `formfind.analysis.dynamics.resonant_acceleration`.
The crowd's own mass is not added to the modal mass (the guide adds it where it exceeds 5 % of the
deck's; the estimate is then a little high).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.dynamics import Modes, resonant_acceleration

# (force per pedestrian kN, psi break points Hz: zero below a, one from b to c, zero above d)
HARMONICS = ((0.280, (1.25, 1.7, 2.1, 2.3)), (0.070, (2.5, 3.4, 4.2, 4.6)))


@dataclass(frozen=True)
class CrowdResponse:
    """The governing mode and harmonic of a resonant crowd.

    Attributes:
        acceleration_m_s2: peak vertical acceleration of the walkway, m/s2 (0 when no mode is excited).
        mode: index of the governing mode (None when no mode lies in a walking range).
        frequency_hz: its frequency, Hz.
        harmonic: 1 or 2.
        psi: the frequency factor, dimensionless.
        equivalent_per_m2: n', equivalent in-step pedestrians per m2.
        load_kN_m2: the harmonic load amplitude per m2 of walkway, kN/m2.
    """

    acceleration_m_s2: float
    mode: int | None
    frequency_hz: float
    harmonic: int
    psi: float
    equivalent_per_m2: float
    load_kN_m2: float


def psi(frequency_hz: float, breaks: tuple[float, float, float, float]) -> float:
    """The trapezoidal frequency factor through ``breaks`` (zero, one, one, zero), dimensionless."""
    a, b, c, d = breaks
    return float(np.interp(frequency_hz, [a, b, c, d], [0.0, 1.0, 1.0, 0.0], left=0.0, right=0.0))


def equivalent_pedestrians(density_per_m2: float, area_m2: float, damping_ratio: float) -> float:
    """n', equivalent pedestrians in step per m2, for a crowd of ``density_per_m2`` on ``area_m2``."""
    count = density_per_m2 * area_m2
    if density_per_m2 < 1.0:
        return 10.8 * np.sqrt(damping_ratio * count) / area_m2
    return 1.85 * np.sqrt(count) / area_m2


def crowd_response(modes: Modes, x: np.ndarray, deck_width_m: float, density_per_m2: float,
                   damping_ratio: float) -> CrowdResponse:
    """The largest resonant peak vertical acceleration over the modes and both harmonics."""
    span = float(x[-1] - x[0])
    n_eq = equivalent_pedestrians(density_per_m2, deck_width_m * span, damping_ratio)
    best = CrowdResponse(0.0, None, 0.0, 1, 0.0, n_eq, 0.0)
    per_unit_load = resonant_acceleration(modes, x, 1.0, damping_ratio)  # m/s2 per kN/m, each mode
    for h, (force_kN, breaks) in enumerate(HARMONICS, start=1):
        factors = np.array([psi(f, breaks) for f in modes.frequency_hz])
        load = force_kN * n_eq * factors  # kN/m2 per mode
        if not np.any(load > 0):
            continue
        accel = per_unit_load * load * deck_width_m
        j = int(np.argmax(accel))
        if accel[j] > best.acceleration_m_s2:
            best = CrowdResponse(float(accel[j]), j, float(modes.frequency_hz[j]), h, float(factors[j]), n_eq,
                                 float(load[j]))
    return best
