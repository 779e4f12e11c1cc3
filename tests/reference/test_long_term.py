"""Creep and shrinkage of a concrete rib (formfind.analysis.long_term).

Sources:
- The age-adjusted effective modulus method (Trost 1967; Bazant, ACI Journal 69, 1972; Ghali, Favre &
  Elbadry, *Concrete Structures: Stresses and Deformations*; from memory): an imposed deformation that
  builds up gradually gives forces 1 / (1 + chi phi) times the elastic ones (E_eff = E / (1 + chi phi));
  loads held from the age of loading leave a rib that creeps alike everywhere with its forces and
  (1 + phi) times its elastic displacements (Dischinger's result for homogeneous structures).
- Timoshenko & Young, *Theory of Structures*, two-hinged arch by the flexibility method (from memory):
  a free shortening e of the span gives H = -e L / (int y^2 ds / (E I) + int cos^2 ds / (E A)); for
  I = I_c sec, A = A_c sec the integrals are 8 f^2 L / (15 E I_c) and int cos^2 dx / (E A_c).
- Shrinkage acts as the uniform temperature drop eps / alpha: a definition (common practice, no source).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import quad

from formfind.analysis.engine import analyse
from formfind.analysis.long_term import long_term
from formfind.design.check import check
from formfind.model.case import LongTermSettings, load_case

SPAN, RISE, E_MPA, IC, AC, ALPHA = 40.0, 8.0, 35000.0, 0.2, 1.5, 1.0e-5
PHI, CHI, EPS = 2.2, 0.8, 3.0e-4

CASE = f"""
[case]
name = "creeping-rib"
[geometry]
span_m = {SPAN}
rise_m = {RISE}
shape = "parabola"
[supports]
kind = "KIND"
[section]
variation = "secant"
area_m2 = {AC}
second_moment_m4 = {IC}
depth_m = 1.2
elastic_modulus_MPa = {E_MPA}
thermal_expansion_per_C = {ALPHA}
[stations]
count = 201
[long_term]
creep_coefficient = {PHI}
ageing_coefficient = {CHI}
shrinkage_strain = {EPS}
[[cases]]
name = "dead"
action = "permanent"
  [[cases.loads]]
  type = "line"
  start_kN_m = 60.0
  [[cases.loads]]
  type = "point"
  x_m = 12.0
  down_kN = 150.0
[[cases]]
name = "cold"
action = "variable"
  [[cases.loads]]
  type = "temperature"
  uniform_C = -{EPS / ALPHA}
"""


def _case(tmp_path, kind="two_hinged", **changes):
    path = tmp_path / f"{kind}.toml"
    path.write_text(CASE.replace("KIND", kind))
    case = load_case(path)
    if changes:
        case = replace(case, long_term=replace(case.long_term, **changes))
    return case


def _with_modulus(case, factor):
    return replace(case, section=replace(case.section, elastic_modulus_kN_m2=case.section.elastic_modulus_kN_m2 * factor))


def _state(response, group):
    return response.select([response.groups.index(group)])


def test_shrinkage_is_the_temperature_drop_under_the_effective_modulus(tmp_path):
    case = _case(tmp_path)
    lasting = long_term(analyse(case))
    assert lasting.shrinkage_drop_C == pytest.approx(EPS / ALPHA, rel=1e-15)
    ratio = 1 / (1 + CHI * PHI)
    assert lasting.effective_modulus_ratio == pytest.approx(ratio, rel=1e-15)
    # the case's own "cold" load case (a drop of eps/alpha) on a rib of modulus E_eff, built independently
    cold = _state(analyse(_with_modulus(case, ratio), buckling=False).cases, "cold")
    scale = np.abs(cold.M).max()
    np.testing.assert_allclose(lasting.moment_shrinkage_kNm, cold.M[0], rtol=0, atol=1e-12 * scale)
    assert lasting.thrust_shrinkage_kN == pytest.approx(float(cold.thrust[0]), rel=1e-12)
    # and 1 / (1 + chi phi) times the forces of the same drop with the modulus at loading; two
    # factorisations of a stiffness of condition ~1e7 agree to ~1e-9, so 1e-8 of the peak
    elastic = _state(analyse(case, buckling=False).cases, "cold")
    np.testing.assert_allclose(lasting.moment_shrinkage_kNm, ratio * elastic.M[0], rtol=0, atol=1e-8 * scale)


def test_shrinkage_thrust_of_a_two_hinged_parabola_by_the_flexibility_method(tmp_path):
    lasting = long_term(analyse(_case(tmp_path)))
    e_eff = E_MPA * 1000 / (1 + CHI * PHI)
    slope = lambda x: 4 * RISE / SPAN * (1 - 2 * x / SPAN)  # noqa: E731
    axial = quad(lambda x: 1 / (1 + slope(x) ** 2), 0, SPAN)[0] / (e_eff * AC)
    bending = 8 * RISE**2 * SPAN / (15 * e_eff * IC)
    expected = -EPS * SPAN / (bending + axial)
    # 1e-3: the chord polygon of 200 elements approximates the integrals to O(h^2)
    assert lasting.thrust_shrinkage_kN == pytest.approx(expected, rel=1e-3)


@pytest.mark.parametrize("kind", ["two_hinged", "fixed", "three_hinged"])
def test_creep_keeps_the_forces_and_multiplies_the_deflections(tmp_path, kind):
    case = _case(tmp_path, kind, shrinkage_strain=0.0)
    analysis = analyse(case)
    lasting = long_term(analysis)
    # a rib of modulus E / (1 + phi) under the same loads: the creep-only state, built independently
    crept = analyse(_with_modulus(case, 1 / (1 + PHI)), displacements=True)
    dead = _state(crept.cases, "dead")
    assert lasting.thrust_kN == pytest.approx(float(dead.thrust[0]), rel=1e-9)
    assert lasting.thrust_permanent_kN == pytest.approx(float(_state(analysis.cases, "dead").thrust[0]), rel=1e-9)
    if dead.displacements is not None:  # the frame engine gives displacements (three-hinged: statics)
        uy = dead.displacements[0][:, 1]
        np.testing.assert_allclose(lasting.uy_long_term_m, uy, rtol=0, atol=1e-9 * np.abs(uy).max())
    np.testing.assert_allclose(lasting.uy_long_term_m, (1 + PHI) * lasting.uy_elastic_m, rtol=1e-12, atol=1e-15)
    # buckling is linear in E when the forces do not depend on it
    assert lasting.buckling_long_term == pytest.approx(lasting.buckling_elastic / (1 + PHI), rel=1e-6)
    assert lasting.crown_station == 100


def test_no_creep_no_shrinkage_no_rows_and_the_check_states_the_long_term_rows(tmp_path):
    case = _case(tmp_path)
    rows = {r.name: r for r in check(case, analyse(case)).rows}
    for name in ("long-term thrust", "long-term crown deflection", "bending from shrinkage",
                 "long-term buckling factor"):
        assert name in rows
    held = rows["long-term buckling factor"]
    assert held.utilisation == pytest.approx(held.limit / held.value)
    quiet = replace(case, long_term=LongTermSettings())
    names = {r.name for r in check(quiet, analyse(quiet)).rows}
    assert not any("long-term" in n or "held" in n or "shrinkage" in n for n in names)
