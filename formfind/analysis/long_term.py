"""Creep and shrinkage of a concrete rib: the long-term state of the permanent load.

The method is the age-adjusted effective modulus (Trost; Bazant, "Prediction of concrete creep effects
using age-adjusted effective modulus method", ACI Journal 69, 1972; Ghali, Favre & Elbadry, *Concrete
Structures: Stresses and Deformations*; from memory), on a rib whose concrete creeps alike everywhere:

- Loads held from the age of loading: the forces of a rib that creeps alike everywhere do not change
  (every compatibility condition scales by the same 1 + phi), and its displacements grow to
  (1 + phi) times the elastic ones.
- Imposed deformations that build up gradually (shrinkage): forces from the elastic model with the
  age-adjusted effective modulus E / (1 + chi phi), so 1 / (1 + chi phi) times the elastic forces.
  The free shrinkage strain acts as a uniform temperature drop of strain / thermal expansion.
- Buckling under the permanent load held for good: the creep-reduced modulus E / (1 + phi) (the
  "effective creep" modulus of the concrete codes' slender-member rules, with the whole of the
  permanent load sustained).

The permanent state is the sum of the permanent load cases, unfactored. Units: kN, m, degC.
Displacements positive up (vertical) and right (horizontal).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from formfind.analysis.buckling import buckle
from formfind.analysis.engine import CaseAnalysis, frame_model
from formfind.analysis.frame import solve
from formfind.enums import ActionKind
from formfind.errors import AnalysisError
from formfind.model.loads import StationLoads
from formfind.model.section import SectionAlong, crown_abscissa


@dataclass(frozen=True, eq=False)
class LongTerm:
    """The permanent load's state at the end of creep and shrinkage.

    Attributes:
        creep_coefficient, ageing_coefficient, shrinkage_strain: the case's phi, chi and strain.
        shrinkage_drop_C: the uniform temperature drop equivalent to the shrinkage strain, degC (>= 0).
        effective_modulus_ratio: 1 / (1 + chi phi), E_eff / E.
        x: station abscissae, m.
        crown_station: the station nearest the geometric crown.
        thrust_permanent_kN: horizontal thrust of the permanent state, kN (the same at loading and for
            good), positive pushing the springings apart as `Response.thrust`.
        thrust_shrinkage_kN: thrust of the shrinkage under E_eff, kN, same sign (a two-hinged or fixed
            arch loses thrust as it shortens: negative).
        thrust_kN: long-term thrust, permanent plus shrinkage, kN.
        moment_shrinkage_kNm: bending from shrinkage at every station, kNm (sign as `Response.M`).
        uy_elastic_m: vertical displacement of the permanent state at loading, m (stations,).
        uy_long_term_m: (1 + phi) x elastic plus shrinkage, m (stations,).
        ux_long_term_m: the same, horizontal, m (stations,).
        buckling_elastic: least buckling factor of the permanent state with E, or None (no compression).
        buckling_long_term: the same with E / (1 + phi), or None.
    """

    creep_coefficient: float
    ageing_coefficient: float
    shrinkage_strain: float
    shrinkage_drop_C: float
    effective_modulus_ratio: float
    x: np.ndarray
    crown_station: int
    thrust_permanent_kN: float
    thrust_shrinkage_kN: float
    thrust_kN: float
    moment_shrinkage_kNm: np.ndarray
    uy_elastic_m: np.ndarray
    uy_long_term_m: np.ndarray
    ux_long_term_m: np.ndarray
    buckling_elastic: float | None
    buckling_long_term: float | None

    @property
    def crown_deflection_m(self) -> float:
        """Long-term vertical displacement of the crown, m (negative: down)."""
        return float(self.uy_long_term_m[self.crown_station])


def scaled_section(section: SectionAlong, factor: float) -> SectionAlong:
    """The section with its elastic and shear moduli multiplied by ``factor`` (creep-adjusted moduli)."""
    return replace(section, elastic_modulus_kN_m2=section.elastic_modulus_kN_m2 * factor,
                   shear_modulus_kN_m2=section.shear_modulus_kN_m2 * factor)


def permanent_state(analysis: CaseAnalysis) -> StationLoads:
    """The sum of the case's permanent load cases, unfactored, as one load state named "permanent".

    Raises:
        AnalysisError: if the case has no permanent load case.
    """
    cases = analysis.loads.cases
    permanent = [c.name for c in analysis.case.cases if c.action is ActionKind.PERMANENT]
    first = [cases.groups.index(name) for name in permanent if name in cases.groups]
    if not first:
        raise AnalysisError("creep and shrinkage need a permanent load case (action = \"permanent\")")
    return cases.combine("permanent", [(i, 1.0) for i in first])


def shrinkage_state(element_count: int, drop_C: float) -> StationLoads:
    """One load state: a uniform temperature change of -``drop_C`` degC and nothing else."""
    state = StationLoads.from_densities(np.zeros((1, element_count, 2, 2)), "shrinkage")
    return replace(state, names=("shrinkage",), temperature_uniform_C=np.array([-drop_C]))


def long_term(analysis: CaseAnalysis, buckling_modes: int = 1) -> LongTerm:
    """The long-term state of the analysed case's permanent load (see the module's notes).

    Raises:
        AnalysisError: if the case has no permanent load case or a model fails.
    """
    case, axis, section = analysis.case, analysis.axis, analysis.section
    settings = case.long_term
    phi, chi, strain = settings.creep_coefficient, settings.ageing_coefficient, settings.shrinkage_strain
    alpha = section.thermal_expansion_per_C
    if strain > 0 and not alpha > 0:
        raise AnalysisError("shrinkage needs [section] thermal_expansion_per_C > 0 (it acts as a temperature drop)")
    drop = strain / alpha if strain > 0 else 0.0
    ratio = 1.0 / (1.0 + chi * phi)

    elastic = analysis.frame if analysis.frame is not None else frame_model(case, axis, section)
    permanent = permanent_state(analysis)
    at_loading = solve(elastic, permanent, displacements=True)
    u_perm = at_loading.displacements[0]  # (stations, 3)

    effective = frame_model(case, axis, scaled_section(section, ratio), estimate_condition=False)
    shrink = solve(effective, shrinkage_state(axis.count - 1, drop), displacements=True)
    u_shrink = shrink.displacements[0]

    uy = (1.0 + phi) * u_perm[:, 1] + u_shrink[:, 1]
    ux = (1.0 + phi) * u_perm[:, 0] + u_shrink[:, 0]

    def least(model) -> float | None:
        result = buckle(model, permanent, 0, modes=buckling_modes, follow_axis=case.analysis.pressure_follows_axis)
        return float(result.factors[0]) if result.factors.size else None

    b_elastic = least(elastic)
    creeping = frame_model(case, axis, scaled_section(section, 1.0 / (1.0 + phi)), estimate_condition=False)
    b_long = least(creeping) if phi > 0 else b_elastic
    crown = int(np.argmin(np.abs(axis.x - crown_abscissa(axis))))
    thrust_perm = float(at_loading.thrust[0])
    thrust_shrink = float(shrink.thrust[0])
    return LongTerm(phi, chi, strain, drop, ratio, axis.x, crown, thrust_perm, thrust_shrink,
                    thrust_perm + thrust_shrink, shrink.M[0].copy(), u_perm[:, 1].copy(), uy, ux,
                    b_elastic, b_long)
