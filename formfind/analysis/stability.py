"""The moments a design check must use where stability matters: an initial imperfection shaped like the
lowest buckling mode, and second-order effects where a combination's buckling factor is low.

An arch is never built perfect, and a perfect arch under a symmetric load never excites its
antisymmetric buckling mode (usually the lowest of a two-hinged or fixed arch): a second-order analysis
of the perfect arch then returns its first-order moments, which is unconservative. Design practice
therefore analyses the arch with an initial imperfection affine to the governing buckling mode, of an
amplitude the designer's code sets (``[check] imperfection_over_span`` x span; the default is an example,
not a code value), with its sign chosen adversely. Per combination with a buckling result:

1. the axis is displaced by the lowest mode (translations scaled to the amplitude, tangents turned by
   the mode's rotations), both signs are analysed to first order on that geometry, and the sign giving
   the larger peak |M| of the combination is kept;
2. where the buckling factor alpha is below ``second_order_below`` the states are solved again on the
   imperfect arch by P-Delta (`formfind.analysis.second_order`, the ``P_DELTA_STATES`` of largest moment
   per combination) or their imperfect first-order moments are amplified by 1 / (1 - 1/alpha); where
   it is above, the imperfect first-order moments are the design moments.

For a load whose buckling mode is the imperfection, the second-order moment tends to the first-order
imperfection moment times 1 / (1 - 1/alpha) (Timoshenko & Gere, *Theory of Elastic Stability*, the
amplification of an initial deflection affine to the mode), and as the amplitude tends to zero the
results tend to the perfect arch's. States at or beyond their buckling load (alpha <= 1) keep their
first-order values, marked.

`formfind.design.check` judges the numbers returned here; nothing here is a verdict.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.analysis.buckling import BucklingResult
from formfind.analysis.engine import CaseAnalysis, frame_model, respond
from formfind.analysis.response import Response
from formfind.enums import SecondOrderMethod, SupportKind
from formfind.errors import AnalysisError
from formfind.model.case import Case
from formfind.model.geometry import Axis
from formfind.model.loads import StationLoads

P_DELTA_STATES = 8  # P-Delta solves per combination at most; its other states (train positions) are amplified


@dataclass(frozen=True, eq=False)
class Imperfection:
    """The initial imperfection applied to one combination.

    Attributes:
        group: the combination.
        amplitude_m: the largest initial displacement (m), ``imperfection_over_span`` x span.
        sign: +1 or -1 on the buckling mode (the adverse one).
        symmetry: the mode's symmetry about midspan ("symmetric", "antisymmetric", "unsymmetric").
        buckling_factor: the combination's in-plane buckling factor alpha.
        displacement: (stations, 3) the initial displacement (ux m, uy m, rotation rad).
    """

    group: str
    amplitude_m: float
    sign: int
    symmetry: str
    buckling_factor: float
    displacement: np.ndarray

    def describe(self, span_m: float) -> str:
        """The imperfection in words, for the verdict rows and the report."""
        ratio = self.amplitude_m / span_m
        return (f"initial imperfection: the lowest buckling mode ({self.symmetry}), amplitude "
                f"{1000 * self.amplitude_m:.0f} mm = span/{1 / ratio:.0f}, sign adverse")


@dataclass(frozen=True, eq=False)
class DesignMoments:
    """The moments and axial forces a check uses, per state (states, stations), and how they were found.

    Attributes:
        M, N, N_left: kNm and kN (N just right and just left of each station).
        method: per state: "first-order", "imperfect first-order", "p-delta", "amplification" or
            "beyond buckling".
        amplified: per state, whether second-order effects were included (a patterned load added to
            the state is then amplified by 1 / (1 - 1/alpha) too).
        alpha: the buckling factor of each combination that has one.
        imperfections: the imperfection applied to each combination (empty where none).
    """

    M: np.ndarray
    N: np.ndarray
    N_left: np.ndarray
    method: tuple[str, ...]
    amplified: np.ndarray
    alpha: dict[str, float]
    imperfections: dict[str, Imperfection]


def imperfect_axis(axis: Axis, displacement: np.ndarray) -> Axis:
    """``axis`` with every station moved by (ux, uy) and its tangent turned by the rotation."""
    return Axis(axis.x + displacement[:, 0], axis.y + displacement[:, 1], axis.theta + displacement[:, 2])


def design_moments(case: Case, analysis: CaseAnalysis, response: Response,
                   loads: StationLoads | None = None) -> DesignMoments:
    """The design moments of ``response``'s states (the analysis's combinations, or its cases if there
    are none, or a selection of either with its ``loads``), following the module docstring."""
    settings = case.check
    alpha = {b.group: b.critical_factor for b in analysis.buckling}
    M, N, N_left = response.M.copy(), response.N.copy(), response.N_left.copy()
    method = ["first-order"] * response.count
    amplified = np.zeros(response.count, dtype=bool)
    imperfections: dict[str, Imperfection] = {}
    if loads is None:
        loads = analysis.loads.combinations if analysis.combinations.count else analysis.loads.cases
    ratio = settings.imperfection_over_span
    buckled = {b.group: b for b in analysis.buckling}
    imperfect_models: dict[str, object] = {}
    # P-Delta needs the rib's axial stiffness: a rigid rib is amplified instead
    p_delta_possible = (settings.second_order is SecondOrderMethod.P_DELTA and analysis.frame is not None
                        and not analysis.frame.axially_rigid)
    for group in dict.fromkeys(response.groups):
        b = buckled.get(group)
        states = [k for k, g in enumerate(response.groups) if g == group]
        if b is None or not ratio or not b.modes.size or not (np.isfinite(b.critical_factor) and b.critical_factor > 1):
            continue
        p_delta = b.critical_factor < settings.second_order_below and p_delta_possible
        chosen = _adverse(case, analysis, loads.select(states), b, ratio * analysis.axis.span_m, p_delta)
        if chosen is None:
            continue
        imperfection, first, model = chosen
        imperfections[group] = imperfection
        imperfect_models[group] = model
        for j, k in enumerate(states):
            M[k], N[k], N_left[k] = first.M[j], first.N[j], first.N_left[j]
            method[k] = "imperfect first-order"
    low = [k for k, g in enumerate(response.groups) if alpha.get(g, np.inf) < settings.second_order_below]
    for k in low:
        if alpha[response.groups[k]] <= 1.0:  # at or above the buckling load: no equilibrium exists
            method[k] = "beyond buckling"
    usable = [k for k in low if method[k] != "beyond buckling"]
    solved: list[int] = []
    if usable and p_delta_possible:
        from formfind.analysis.second_order import second_order

        for group in dict.fromkeys(response.groups[k] for k in usable):
            mine = [k for k in usable if response.groups[k] == group]
            peaks = np.abs(M[mine]).max(axis=1)
            picked = sorted(mine[j] for j in np.argsort(-peaks, kind="stable")[:P_DELTA_STATES])
            model = imperfect_models.get(group, analysis.frame)
            try:
                result = second_order(model, loads.select(picked)).response
            except AnalysisError:  # the imperfect arch has no equilibrium near its buckling load
                for k in mine:
                    method[k] = "beyond buckling"
                continue
            for j, k in enumerate(picked):
                M[k], N[k], N_left[k] = result.M[j], result.N[j], result.N_left[j]
                method[k] = "p-delta"
                amplified[k] = True
            solved += picked
    for k in usable:
        if k in solved or method[k] == "beyond buckling":
            continue
        a = alpha[response.groups[k]]
        M[k] = M[k] / (1.0 - 1.0 / a)
        method[k] = "amplification"
        amplified[k] = True
    return DesignMoments(M, N, N_left, tuple(method), amplified, alpha, imperfections)


def _adverse(case: Case, analysis: CaseAnalysis, loads: StationLoads, b: BucklingResult, amplitude_m: float,
             p_delta: bool = True):
    """The imperfection of the adverse sign for one combination: (Imperfection, first-order response of
    its states on the imperfect axis, its frame model or None), or None if the mode cannot be applied.
    The sign is chosen on the combination's buckling reference state (its largest thrust), whose mode
    it is; its other states (train positions) are then analysed with that sign only. A three-hinged arch
    is answered by exact statics, so its imperfect frame model is built only where a P-Delta solve
    (``p_delta``) will need it."""
    statics_only = case.supports.kind is SupportKind.THREE_HINGED
    mode = b.modes[0]
    largest = float(np.abs(mode[:, :2]).max())
    if not largest > 0:
        return None
    reference = [loads.names.index(b.state)] if b.state in loads.names else list(range(loads.count))
    best = None
    for sign in (1, -1):
        displacement = sign * amplitude_m / largest * mode
        axis = imperfect_axis(analysis.axis, displacement)
        if not np.all(np.diff(axis.x) > 0):
            return None  # an amplitude this large folds the arch over: no meaningful imperfection
        model = (frame_model(case, axis, case.section.at(axis), estimate_condition=False)
                 if analysis.frame is not None and not statics_only else None)
        peak = float(np.abs(respond(case, axis, loads.select(reference), model).M).max())
        if best is None or peak > best[0]:
            best = (peak, Imperfection(b.group, amplitude_m, sign, b.symmetry[0], b.critical_factor, displacement),
                    axis, model)
    _, imperfection, axis, model = best
    if statics_only and p_delta:
        model = frame_model(case, axis, case.section.at(axis), estimate_condition=False)
    return imperfection, respond(case, axis, loads, model), model
