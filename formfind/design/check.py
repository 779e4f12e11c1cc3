"""Design checks of an analysed axis: a verdict per check with its governing combination and station.

Checks (limits from the case file's ``[check]`` table; formfind ships none):

- extreme-fibre stresses sigma = N/A -+ M/W (compression negative) against the compression and tension
  limits, over every state of every combination;
- eccentricity e = |M / N| against the kern (W/A, depth/6 for a rectangle) or the section boundary
  (depth/2), for ribs that must not crack or must not hinge;
- the in-plane buckling factor of every combination against a required minimum;
- second-order effects: where a combination's buckling factor alpha is below ``second_order_below``
  (10 is common practice for elastic analysis, e.g. EN 1993-1-1 clause 5.2.1), its moments are
  amplified by 1 / (1 - 1/alpha) in the stress and eccentricity checks, and the row says so;
- the thrust the abutments must take, per combination (reported, no limit).

The envelope of a patterned live load (placed wherever an influence line is adverse) is
`patterned_envelope`; moving axle trains are enveloped over their positions by the analysis itself.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.response import Response
from formfind.enums import EccentricityLimit
from formfind.model.case import Case

FAIL, PASS, INFO = "fail", "pass", "info"


@dataclass(frozen=True)
class CheckRow:
    """One check: its value and limit (same unit), utilisation value/limit, where it governs."""

    name: str
    value: float
    limit: float | None
    unit: str
    utilisation: float | None
    combination: str
    state: str
    station: int | None
    x_m: float | None
    verdict: str
    note: str = ""


@dataclass(frozen=True, eq=False)
class CheckResult:
    """The verdict table and the arrays behind it.

    Attributes:
        rows: one per check (and one thrust row per combination).
        stress_max, stress_min: (states, stations) extreme-fibre stresses of the combination states,
            kN/m2, tension positive (after any second-order amplification).
        amplification: (states,) moment amplification applied to each combination state (1 = none).
    """

    rows: tuple[CheckRow, ...]
    stress_max: np.ndarray
    stress_min: np.ndarray
    amplification: np.ndarray

    @property
    def passed(self) -> bool:
        """True when no row fails."""
        return all(r.verdict != FAIL for r in self.rows)

    @property
    def worst(self) -> CheckRow | None:
        """The row of largest utilisation."""
        rated = [r for r in self.rows if r.utilisation is not None]
        return max(rated, key=lambda r: r.utilisation) if rated else None


def _amplification(case: Case, analysis: CaseAnalysis, response: Response) -> tuple[np.ndarray, dict[str, float]]:
    """Per state: 1 / (1 - 1/alpha) where the group's buckling factor alpha is below the threshold."""
    alpha = {b.group: b.critical_factor for b in analysis.buckling}
    factors = np.ones(response.count)
    for k, group in enumerate(response.groups):
        a = alpha.get(group, np.inf)
        if a < case.check.second_order_below:
            factors[k] = 1.0 / (1.0 - 1.0 / a) if a > 1.0 else np.inf
    return factors, alpha


def _where(response: Response, values: np.ndarray, x: np.ndarray) -> tuple[str, str, int, float]:
    k, i = np.unravel_index(int(np.nanargmax(values)), values.shape)
    return response.groups[k], response.names[k], int(i), float(x[i])


def check(case: Case, analysis: CaseAnalysis) -> CheckResult:
    """Run every check on the combinations of ``analysis`` (the cases if there are none)."""
    settings = case.check
    response = analysis.combinations if analysis.combinations.count else analysis.cases
    sec = analysis.section
    x = analysis.axis.x
    factors, alpha = _amplification(case, analysis, response)
    M = response.M * factors[:, None]
    N = np.minimum(response.N, response.N_left) if response.count else response.N  # the more compressive side
    A, W = sec.area_m2[None, :], sec.section_modulus_m3[None, :]
    fibre_a = N / A + M / W  # intrados (M > 0 puts it in tension; tension positive)
    fibre_b = N / A - M / W  # extrados
    s_max = np.maximum(fibre_a, fibre_b)
    s_min = np.minimum(fibre_a, fibre_b)
    rows: list[CheckRow] = []
    amplified = bool(np.any(factors > 1.0))
    note = f"moments amplified by 1/(1 - 1/alpha) where alpha < {settings.second_order_below:g}" if amplified else ""
    to_mpa = 1e-3
    if settings.compression_limit_kN_m2 is not None:
        limit = settings.compression_limit_kN_m2
        group, state, i, xi = _where(response, -s_min, x)
        value = float(-s_min.min())
        rows.append(CheckRow("compressive stress", value * to_mpa, limit * to_mpa, "MPa", value / limit, group,
                             state, i, xi, PASS if value <= limit else FAIL, note))
    if settings.tension_limit_kN_m2 is not None:
        limit = settings.tension_limit_kN_m2
        group, state, i, xi = _where(response, s_max, x)
        value = float(max(s_max.max(), 0.0))
        util = value / limit if limit > 0 else (0.0 if value <= 0 else np.inf)
        rows.append(CheckRow("tensile stress", value * to_mpa, limit * to_mpa, "MPa", util, group, state, i, xi,
                             PASS if value <= limit else FAIL, note))
    if settings.eccentricity_limit is not EccentricityLimit.NONE:
        with np.errstate(divide="ignore", invalid="ignore"):
            e = np.where(N < 0, np.abs(M / N), np.inf)  # no compression: the thrust cannot be placed
        bound = sec.kern_m if settings.eccentricity_limit is EccentricityLimit.KERN else 0.5 * sec.depth_m
        ratio = e / bound[None, :]
        group, state, i, xi = _where(response, ratio, x)
        worst = float(ratio.max())
        k = response.names.index(state)
        rows.append(CheckRow(f"eccentricity within the {settings.eccentricity_limit.value}", float(e[k, i]),
                             float(bound[i]), "m", worst, group, state, i, xi, PASS if worst <= 1.0 else FAIL, note))
    for group, a in alpha.items():
        util = settings.min_buckling_factor / a if np.isfinite(a) and a > 0 else 0.0
        so = " (second-order amplification applied)" if a < settings.second_order_below else ""
        rows.append(CheckRow("in-plane buckling factor", float(a) if np.isfinite(a) else float("inf"),
                             settings.min_buckling_factor, "-", util, group, group, None, None,
                             PASS if a >= settings.min_buckling_factor else FAIL, so.strip()))
    for group in dict.fromkeys(response.groups):
        idx = [k for k, g in enumerate(response.groups) if g == group]
        thrust = response.thrust[idx]
        k = idx[int(np.argmax(np.abs(thrust)))]
        rows.append(CheckRow("thrust on the abutments", float(response.thrust[k]), None, "kN", None, group,
                             response.names[k], None, None, INFO))
    return CheckResult(tuple(rows), s_max, s_min, factors)


def patterned_envelope(influence: np.ndarray, x: np.ndarray, load_kN_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Largest and smallest effect at every station from a uniform load placed where adverse.

    ``influence`` (load positions, stations): the effect at station i for a 1 kN load at station j
    (e.g. `formfind.analysis.frame.influence_lines(...).M`). The load per horizontal metre is lumped
    to the stations by tributary length, so the result is exact for influence lines linear between
    stations. Returns (maximum, minimum), each (stations,).
    """
    trib = np.zeros(x.size)
    trib[:-1] += 0.5 * np.diff(x)
    trib[1:] += 0.5 * np.diff(x)
    weights = load_kN_m * trib[:, None]
    contribution = influence * weights
    return np.clip(contribution, 0.0, None).sum(axis=0), np.clip(contribution, None, 0.0).sum(axis=0)


def cracked_stress(N_kN: float, e_m: float, width_m: float, depth_m: float) -> float:
    """Peak compressive stress (kN/m2, positive) of a no-tension rectangular section.

    Within the middle third (|e| <= depth/6) the linear distribution N/A (1 + 6 e/d) holds; beyond it
    the section cracks and a triangular block of length 3 (d/2 - |e|) carries the thrust, so the peak
    is 2 N / (3 b (d/2 - |e|)). At |e| >= d/2 no block can carry it (infinite).
    """
    n = abs(N_kN)
    e = abs(e_m)
    if e <= depth_m / 6.0:
        return n / (width_m * depth_m) * (1.0 + 6.0 * e / depth_m)
    if e >= depth_m / 2.0:
        return float("inf")
    return 2.0 * n / (3.0 * width_m * (depth_m / 2.0 - e))
