"""Deflections and limit states.

Sources:
- Virtual work for curved members (any structural analysis text, e.g. Hibbeler, *Structural Analysis*,
  the unit-load method; from memory): the deflection at a point is the integral along the arch of
  M m / EI + N n / EA, with M, N from the loads and m, n from a unit load there. For a three-hinged
  arch both follow from the beam analogy (M = M0 - H y, H = M0(crown) / f) in closed form; the integral
  is evaluated here by the trapezoidal rule on 40 001 points of the continuous parabola, independent of
  formfind's engines. The frame model uses 201 straight elements, an O(h^2) error: 1e-3 relative.
- Limit states, common practice, no source: strength on ultimate and accidental combinations,
  deflection on serviceability ones.
"""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from formfind.analysis.deflection import deflections
from formfind.analysis.engine import analyse
from formfind.design.check import FAIL, INFO, PASS, check
from formfind.design.governing import governing_groups
from formfind.enums import LimitState
from formfind.model.case import parse_case

L, F, W, Q = 30.0, 6.0, 10.0, 6.0
E, A, I = 210e6, 0.01, 5e-5  # kN/m2, m2, m4
CASE = f"""
[case]
name = "deflect"
[geometry]
span_m = {L}
rise_m = {F}
shape = "parabola"
[supports]
kind = "three_hinged"
[section]
area_m2 = {A}
second_moment_m4 = {I}
depth_m = 0.3
elastic_modulus_MPa = {E / 1000}
unit_weight_kN_m3 = 0
[stations]
count = 201
[[cases]]
name = "dead"
action = "permanent"
  [[cases.loads]]
  type = "line"
  start_kN_m = {W}
[[cases]]
name = "live"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = {L / 2}
  start_kN_m = {Q}
[[combinations]]
name = "ULS"
factors = {{ dead = 1.35, live = 1.5 }}
[[combinations]]
name = "SLS"
factors = {{ dead = 1.0, live = 1.0 }}
limit_state = "serviceability"
"""


def _virtual_work_deflection(a: float) -> float:
    """Downward deflection (m) at x = a of the three-hinged parabola under dead + live (SLS factors)."""
    x = np.linspace(0.0, L, 40001)
    y = 4 * F * x * (L - x) / L**2
    slope = 4 * F * (L - 2 * x) / L**2
    theta = np.arctan(slope)
    ds = np.sqrt(1 + slope**2)
    half = L / 2
    m0 = W * x * (L - x) / 2 + np.where(x <= half, 3 * Q * L / 8 * x - Q * x**2 / 2, Q * L / 8 * (L - x))
    v0 = W * (L / 2 - x) + np.where(x <= half, 3 * Q * L / 8 - Q * x, -Q * L / 8)
    h = (W * L**2 / 8 + Q * L**2 / 16) / F  # M0 at the crown over the rise
    M = m0 - h * y
    N = -(h * np.cos(theta) + v0 * np.sin(theta))
    m0u = np.where(x <= a, (1 - a / L) * x, a * (L - x) / L)
    v0u = np.where(x <= a, 1 - a / L, -a / L)
    h1 = (a * (L - half) / L if a <= half else (1 - a / L) * half) / F
    m = m0u - h1 * y
    n = -(h1 * np.cos(theta) + v0u * np.sin(theta))
    return float(np.trapezoid((M * m / (E * I) + N * n / (E * A)) * ds, x))


@pytest.mark.parametrize("a", [7.5, 22.5])
def test_three_hinged_deflection_equals_virtual_work(a):
    case = parse_case(tomllib.loads(CASE))
    analysis = analyse(case, buckling=False)
    moved = deflections(analysis)
    k = moved.names.index("SLS")
    i = int(np.argmin(np.abs(moved.x - a)))
    assert moved.x[i] == pytest.approx(a, abs=1e-9)
    assert -moved.uy[k, i] == pytest.approx(_virtual_work_deflection(a), rel=1e-3)


def test_serviceability_combinations_are_judged_by_deflection_only():
    data = tomllib.loads(CASE)
    data["check"] = {"compression_limit_MPa": 1.0, "deflection_limit_ratio": 500}  # a stress limit SLS would fail
    data["section"]["second_moment_m4"] = 1e-3  # stiff enough not to buckle under ULS
    case = parse_case(data)
    assert case.limit_state("SLS") is LimitState.SERVICEABILITY and case.limit_state("ULS") is LimitState.ULTIMATE
    assert governing_groups(case) == ("ULS",)  # serviceability combinations do not shape the axis
    result = check(case, analyse(case))
    stress = next(r for r in result.rows if r.name == "compressive stress")
    assert stress.combination == "ULS" and stress.verdict == FAIL
    assert "SLS" not in result.strength_states
    assert not any(r.combination == "SLS" for r in result.rows if r.name == "in-plane buckling factor")
    deflection = next(r for r in result.rows if r.name == "vertical deflection")
    assert deflection.combination == "SLS" and deflection.limit == pytest.approx(L / 500 * 1000)
    assert deflection.verdict == (PASS if deflection.value <= deflection.limit else FAIL)
    moved = result.deflections
    k = moved.names.index("SLS")
    assert deflection.value == pytest.approx(1000 * np.abs(moved.uy[k]).max(), rel=1e-12)


def test_without_serviceability_combinations_the_deflection_is_information():
    data = tomllib.loads(CASE)
    del data["combinations"][1]["limit_state"]
    data["cases"].append({"name": "spread", "action": "accidental",
                          "loads": [{"type": "support_movement", "spread_m": 0.005}]})
    data["combinations"].append({"name": "ACC", "factors": {"dead": 1.0, "spread": 1.0}})
    case = parse_case(data)
    assert case.limit_state("ACC") is LimitState.ACCIDENTAL  # derived from the accidental case
    row = next(r for r in check(case, analyse(case)).rows if r.name == "vertical deflection")
    assert row.verdict == INFO and row.utilisation is None
