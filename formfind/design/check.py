"""Design checks of an analysed axis: a verdict per check with its governing combination and station.

Checks (limits from the case file's ``[check]`` table; formfind ships none):

- extreme-fibre stresses sigma = N/A -+ M/W (compression negative) against the compression and tension
  limits, over every state of every combination;
- eccentricity e = |M / N| against the kern (W/A, depth/6 for a rectangle) or the section boundary
  (depth/2), for ribs that must not crack or must not hinge;
- the in-plane buckling factor of every combination against a required minimum;
- second-order effects: where a combination's buckling factor alpha is below ``second_order_below``
  (10 is common practice for elastic analysis, e.g. EN 1993-1-1 clause 5.2.1), its states are solved
  again on the deflected arch (P-Delta, `formfind.analysis.second_order`) or, if the case asks for it,
  their moments are amplified by 1 / (1 - 1/alpha); the rows say which;
- a patterned live load (``patterned_load_kN_m``): for every station and effect the loaded lengths
  where the influence line is adverse; its envelope is reported on its own and added, times its
  factor, to the combinations named in ``patterned_factors``. Fibre stresses are linear in the
  loads, so their patterned envelopes come from the stresses' own influence lines (exact on the
  station grid); the eccentricity verdict uses the linear margin |M| + N b <= 0 (b: kern or half
  depth), also exact, and reports the ratio e/b of the pattern that governs that margin;
- the thrust the abutments must take, per combination (reported, no limit);
- unreinforced ribs (``unreinforced = true``): a line of thrust within the ring (reduced by
  ``min_geometric_factor``) for every state of every combination, the geometric factor of safety,
  and the collapse load factor of ``collapse_case`` with the hinges of the mechanism
  (`formfind.design.thrust`).

Moving axle trains are enveloped over their positions by the analysis itself (one state per position).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from formfind.analysis import statics
from formfind.analysis.deflection import Deflections, deflections
from formfind.analysis.engine import CaseAnalysis
from formfind.analysis.frame import influence_lines, unit_loads
from formfind.analysis.lateral import properties_known, state_lateral
from formfind.analysis.long_term import LongTerm, long_term
from formfind.analysis.response import EFFECTS, Response
from formfind.analysis.stability import design_moments
from formfind.design.footfall import CrowdResponse, crowd_response
from formfind.enums import ActionKind, EccentricityLimit, LimitState, SupportKind, Verdict
from formfind.model.case import Case
from formfind.model.loads import StationLoads

FAIL, PASS, INFO = Verdict.FAIL, Verdict.PASS, Verdict.INFO
PATTERN = "patterned live load"


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
    verdict: Verdict
    note: str = ""


@dataclass(frozen=True, eq=False)
class PatternEnvelope:
    """Envelopes of a uniform load (kN per horizontal metre, downwards) placed wherever adverse.

    Attributes:
        load_kN_m: the intensity.
        x: station abscissae (m).
        contributions: (3 effects [N kN, V kN, M kNm], load stations, stations): the effect at station
            i of the load lumped at station j; its positive entries are the pattern of the maximum.
        maximum, minimum: (3, stations) the envelopes (sums of the positive / negative contributions).
        thrust_max_kN, thrust_min_kN: envelope of the thrust H.
        reaction_max, reaction_min: (2 supports, 3 [Rx kN, Ry kN, Mz kNm]) envelopes of the reactions.
        influence_M: (load stations, stations) influence ordinates of M, kNm per kN of downward load.
    """

    load_kN_m: float
    x: np.ndarray
    contributions: np.ndarray
    maximum: np.ndarray
    minimum: np.ndarray
    thrust_max_kN: float
    thrust_min_kN: float
    reaction_max: np.ndarray
    reaction_min: np.ndarray
    influence_M: np.ndarray

    def loaded_lengths(self, effect: str, station: int, largest: bool = True) -> list[tuple[float, float]]:
        """The loaded lengths [(from m, to m), ...] of the pattern giving the max (or min) of ``effect``
        ('N', 'V' or 'M') at ``station``."""
        c = self.contributions[EFFECTS.index(effect), :, station]
        return loaded_lengths(self.x, c > 0 if largest else c < 0)


def loaded_lengths(x: np.ndarray, loaded: np.ndarray) -> list[tuple[float, float]]:
    """Runs of loaded stations as abscissa intervals, each station standing for its tributary length."""
    edges = np.concatenate([[x[0]], 0.5 * (x[:-1] + x[1:]), [x[-1]]])
    out = []
    j = 0
    while j < loaded.size:
        if loaded[j]:
            k = j
            while k + 1 < loaded.size and loaded[k + 1]:
                k += 1
            out.append((float(edges[j]), float(edges[k + 1])))
            j = k + 1
        else:
            j += 1
    return out


def _lengths_text(lengths: list[tuple[float, float]]) -> str:
    return ", ".join(f"{a:.2f}-{b:.2f} m" for a, b in lengths) or "nowhere"


@dataclass(frozen=True)
class ThrustLineRow:
    """Thrust-line admissibility of one state of an unreinforced rib (see `formfind.design.thrust`)."""

    group: str
    state: str
    admissible: bool
    geometric_factor: float


@dataclass(frozen=True, eq=False)
class CheckResult:
    """The verdict table and the arrays behind it.

    Attributes:
        rows: one per check (and one thrust row per combination).
        stress_max, stress_min: (states, stations) extreme-fibre stresses of the combination states,
            kN/m2, tension positive (second-order where applied; patterned load not included).
        amplification: (states,) ratio of the design (imperfect, second-order) to the first-order peak |M|
            of each state (1 = first order, perfect arch).
        second_order: (states,) how each state's moments were found (`formfind.analysis.stability`):
            "first-order", "imperfect first-order", "p-delta", "amplification" or "beyond buckling".
        pattern: the patterned live load's envelopes, or None.
        patterned_groups: (group, factor) of the combinations the patterned load was added to.
        thrust_lines: admissibility of every state (unreinforced ribs only).
        collapse: collapse load factors of ``collapse_case`` per position (unreinforced ribs only).
        imperfections: the initial imperfection of each combination (`formfind.analysis.stability`).
        deflections: station displacements of every combination state (`formfind.analysis.deflection`).
        strength_states: the states the strength arrays hold (ultimate and accidental combinations; the
            serviceability ones are judged by their deflection).
        long_term: the permanent load after creep and shrinkage (`formfind.analysis.long_term`), or None.
        crowd: a footbridge's resonant crowd response (`formfind.design.footfall`), or None.
        lateral: out-of-plane buckling of each strength combination (`formfind.analysis.lateral`).
    """

    rows: tuple[CheckRow, ...]
    stress_max: np.ndarray
    stress_min: np.ndarray
    amplification: np.ndarray
    second_order: tuple[str, ...] = ()
    pattern: PatternEnvelope | None = None
    patterned_groups: tuple[tuple[str, float], ...] = ()
    thrust_lines: tuple[ThrustLineRow, ...] = ()
    collapse: tuple = ()
    imperfections: tuple = ()
    deflections: Deflections | None = None
    strength_states: tuple[str, ...] = ()
    long_term: LongTerm | None = None
    crowd: CrowdResponse | None = None
    lateral: tuple = ()

    @property
    def passed(self) -> bool:
        """True when no row fails."""
        return all(r.verdict != FAIL for r in self.rows)

    @property
    def worst(self) -> CheckRow | None:
        """The row of largest utilisation."""
        rated = [r for r in self.rows if r.utilisation is not None]
        return max(rated, key=lambda r: r.utilisation) if rated else None


def pattern_envelope(case: Case, analysis: CaseAnalysis, load_kN_m: float) -> PatternEnvelope:
    """Envelopes of N, V, M, the thrust and the reactions under a patterned uniform load."""
    lines = unit_influence(case, analysis)
    x = analysis.axis.x
    w = load_kN_m * tributary(x)[:, None]
    n_mid = 0.5 * (lines.N + lines.N_left)  # a distributed load makes no jump at the station
    v_mid = 0.5 * (lines.V + lines.V_left)
    contributions = np.stack([n_mid * w, v_mid * w, lines.M * w])
    thrust = lines.thrust * w[:, 0]
    reac = lines.reactions * w[:, :, None]
    return PatternEnvelope(
        load_kN_m, x, contributions,
        np.clip(contributions, 0.0, None).sum(axis=1), np.clip(contributions, None, 0.0).sum(axis=1),
        float(np.clip(thrust, 0.0, None).sum()), float(np.clip(thrust, None, 0.0).sum()),
        np.clip(reac, 0.0, None).sum(axis=0), np.clip(reac, None, 0.0).sum(axis=0), lines.M,
    )


def unit_influence(case: Case, analysis: CaseAnalysis) -> Response:
    """Influence lines of every effect for a unit downward load at each station (state j: load at j)."""
    if analysis.frame is not None and case.supports.kind is not SupportKind.THREE_HINGED:
        return influence_lines(analysis.frame)
    axis = analysis.axis
    return statics.three_hinged(axis, unit_loads(axis), case.hinge_station(axis))


def tributary(x: np.ndarray) -> np.ndarray:
    """Tributary length (m) of each station along x."""
    trib = np.zeros(x.size)
    trib[:-1] += 0.5 * np.diff(x)
    trib[1:] += 0.5 * np.diff(x)
    return trib


def _where(response: Response, values: np.ndarray, x: np.ndarray) -> tuple[str, str, int, float]:
    k, i = np.unravel_index(int(np.nanargmax(values)), values.shape)
    return response.groups[k], response.names[k], int(i), float(x[i])


def check(case: Case, analysis: CaseAnalysis) -> CheckResult:
    """Run every check on the combinations of ``analysis`` (the cases if there are none).

    Raises:
        ArgumentError: if ``case`` is not a Case or ``analysis`` not a CaseAnalysis.
    """
    from formfind import arguments

    arguments.case(case, "check")
    arguments.instance(analysis, CaseAnalysis, "check", "analysis")
    settings = case.check
    everything = analysis.combinations if analysis.combinations.count else analysis.cases
    all_loads = analysis.loads.combinations if analysis.combinations.count else analysis.loads.cases
    # strength and stability on the ultimate and accidental combinations; deflection on the serviceability ones
    strength = [k for k, g in enumerate(everything.groups) if case.limit_state(g) is not LimitState.SERVICEABILITY]
    response = everything.select(strength)
    sec = analysis.section
    x = analysis.axis.x
    design = design_moments(case, analysis, response, all_loads.select(strength))
    M, N_right, N_left, method, alpha = design.M, design.N, design.N_left, design.method, design.alpha
    N = np.minimum(N_right, N_left) if response.count else N_right  # the more compressive side
    A, W = sec.area_m2[None, :], sec.section_modulus_m3[None, :]
    with np.errstate(invalid="ignore"):
        fibre_a = N / A + M / W  # intrados (M > 0 puts it in tension; tension positive)
        fibre_b = N / A - M / W  # extrados
    s_max = np.maximum(fibre_a, fibre_b)
    s_min = np.minimum(fibre_a, fibre_b)
    pattern = None
    added: dict[str, float] = dict(settings.patterned_factors)
    if settings.patterned_load_kN_m is not None:
        pattern = pattern_envelope(case, analysis, settings.patterned_load_kN_m)
    rows: list[CheckRow] = []
    used = sorted(set(method) - {"first-order", "imperfect first-order", "beyond buckling"})
    note = ""
    if used:
        note = f"second-order moments by {' and '.join(used)} where alpha < {settings.second_order_below:g}"
    if design.imperfections:
        first = next(iter(design.imperfections.values()))
        amplitude = first.describe(analysis.axis.span_m).split(", sign")[0].split("amplitude ")[1]
        note = "; ".join(t for t in (note, f"on the arch with an initial imperfection in each combination's lowest "
                                           f"buckling mode, amplitude {amplitude}, sign adverse") if t)
    if "beyond buckling" in method:
        note = "; ".join(t for t in (note, "some states are at or beyond their buckling load (alpha <= 1): no "
                                           "equilibrium exists there and their first-order values do not hold") if t)
    if pattern is not None:
        rows += _pattern_rows(pattern, settings.patterned_load_kN_m)
    to_mpa = 1e-3
    terms = _pattern_terms(pattern, added, response, design.amplified, alpha)
    low, high = _stress_sets(response, fibre_a, fibre_b, pattern, terms, sec)
    if settings.compression_limit_kN_m2 is not None:
        limit = settings.compression_limit_kN_m2
        value, group, state, i = _worst(-low, response)
        rows.append(CheckRow("compressive stress", value * to_mpa, limit * to_mpa, "MPa", value / limit, group,
                             state, i, float(x[i]), PASS if value <= limit else FAIL, note))
    if settings.tension_limit_kN_m2 is not None:
        limit = settings.tension_limit_kN_m2
        value, group, state, i = _worst(high, response)
        value = max(value, 0.0)
        util = value / limit if limit > 0 else None  # a zero limit has no ratio: the value is judged
        zero = "limit 0: no utilisation, judged by the value" if limit <= 0 else ""
        rows.append(CheckRow("tensile stress", value * to_mpa, limit * to_mpa, "MPa", util, group, state, i,
                             float(x[i]), PASS if value <= limit else FAIL, "; ".join(t for t in (note, zero) if t)))
    if settings.eccentricity_limit is not EccentricityLimit.NONE:
        rows.append(_eccentricity_row(settings.eccentricity_limit, response, M, N, sec, pattern, terms, x, note))
    for group, a in alpha.items():
        if case.limit_state(group) is LimitState.SERVICEABILITY:
            continue
        util = settings.min_buckling_factor / a if np.isfinite(a) and a > 0 else None
        so = f"second-order by {_group_method(response, method, group)}" if a < settings.second_order_below else ""
        if group in design.imperfections:
            so = "; ".join(t for t in (so, design.imperfections[group].describe(analysis.axis.span_m)) if t)
        if a <= 1.0:
            so = "at or beyond its buckling load: no equilibrium exists under this combination"
        if not np.isfinite(a):
            so = "no compression to buckle under: no factor, no utilisation"
        rows.append(CheckRow("in-plane buckling factor", float(a) if np.isfinite(a) else float("inf"),
                             settings.min_buckling_factor, "-", util, group, group, None, None,
                             PASS if a >= settings.min_buckling_factor else FAIL, so))
    if analysis.accuracy is not None and analysis.accuracy.condition is not None:
        rows.append(_accuracy_row(analysis.accuracy, case.analysis.accuracy))
    sideways: tuple = ()
    if case.lateral.check and not settings.unreinforced and properties_known(case.section) and response.count:
        sideways = _lateral(case, analysis, response, all_loads.select(strength))
        rows += _lateral_rows(sideways, case)
    for group in dict.fromkeys(response.groups):
        idx = [k for k, g in enumerate(response.groups) if g == group]
        thrust = response.thrust[idx]
        k = idx[int(np.argmax(np.abs(thrust)))]
        value = float(response.thrust[k])
        text = ""
        if pattern is not None and group in added:
            f = added[group]
            extra = f * (pattern.thrust_max_kN if value >= 0 else pattern.thrust_min_kN)
            value += extra
            text = f"with {f:g} x the patterned load ({extra:.4g} kN)"
        rows.append(CheckRow("thrust on the abutments", value, None, "kN", None, group,
                             response.names[k], None, None, INFO, text))
    moved = deflections(analysis, combinations=analysis.combinations.count > 0)
    rows += _deflection_rows(case, moved, analysis.axis.span_m)
    crowd = None
    if analysis.modes is not None:
        rows += _frequency_rows(analysis.modes, settings.pedestrian_bridge, settings.deck_width_m is not None)
        if settings.pedestrian_bridge and settings.deck_width_m is not None:
            crowd = crowd_response(analysis.modes, analysis.axis.x, settings.deck_width_m,
                                   settings.crowd_density_per_m2, settings.damping_ratio)
            rows.append(_crowd_row(crowd, settings))
    lasting = None
    if case.long_term.active:
        lasting = long_term(analysis)
        rows += _long_term_rows(lasting, analysis.axis.span_m, settings.min_buckling_factor)
    thrust_rows: tuple[ThrustLineRow, ...] = ()
    collapse: tuple = ()
    if settings.unreinforced:
        thrust_rows, collapse, extra_rows = _unreinforced(case, analysis)
        rows = [_as_information(r) for r in rows]
        rows += extra_rows
    first = np.abs(response.M).max(axis=1) if response.count else np.zeros(0)
    ratio = np.divide(np.abs(M).max(axis=1) if response.count else np.zeros(0), first, out=np.ones_like(first),
                      where=first > 0)
    return CheckResult(tuple(rows), s_max, s_min, ratio, method, pattern, tuple(added.items()), thrust_rows, collapse,
                       tuple(design.imperfections.values()), moved, response.names, lasting, crowd, sideways)


def _accuracy_row(accuracy, tolerance: float) -> CheckRow:
    """The frame's estimated relative error against the case's tolerance."""
    good = accuracy.forward_error <= tolerance
    note = (f"relative error of the frame's forces estimated by a refinement step in extended precision: about "
            f"{max(accuracy.digits, 0):.0f} good digits (condition estimate {accuracy.condition:.1e}, backward "
            f"error {accuracy.backward_error:.1e})")
    if not good:
        note += ("; the stiffness is ill-conditioned (a huge area making the rib nearly rigid? [analysis] "
                 "axially_rigid = true holds the lengths without it): the results cannot be trusted to the "
                 "digits reported")
    return CheckRow("numerical accuracy", accuracy.forward_error, tolerance, "-", accuracy.forward_error / tolerance,
                    "all", "frame solve", None, None, PASS if good else FAIL, note)


def _lateral(case: Case, analysis: CaseAnalysis, response: Response, loads) -> tuple:
    """Out-of-plane buckling of each combination, for the state its in-plane buckling took as reference
    (its largest thrust)."""
    reference = {b.group: b.state for b in analysis.buckling}
    out = []
    for group in dict.fromkeys(response.groups):
        idx = [k for k, g in enumerate(response.groups) if g == group]
        named = reference.get(group)
        k = response.names.index(named) if named in response.names else idx[int(np.argmax(response.thrust[idx]))]
        out.append(state_lateral(case, analysis, response, loads, k))
    return tuple(out)


def _lateral_rows(results: tuple, case: Case) -> list[CheckRow]:
    least = case.lateral.min_factor if case.lateral.min_factor is not None else case.check.min_buckling_factor
    rows = []
    for b in results:
        a = b.critical_factor
        if not np.isfinite(a):
            rows.append(CheckRow("out-of-plane buckling factor", float("inf"), least, "-", None, b.group, b.state, None,
                                 None, PASS, "no compression to buckle under: no factor, no utilisation"))
            continue
        symmetric = _lateral_symmetry(b.modes[0][:, 0])
        rows.append(CheckRow("out-of-plane buckling factor", a, least, "-", least / a, b.group, b.state, None, None,
                             PASS if a >= least else FAIL,
                             f"lateral bending and twist of the rib ({symmetric} mode); {b.restraint}; linear"
                             + ("" if case.section.warping_constant_m6 else
                                ", no warping stiffness (none given for this section)")))
    return rows


def _lateral_symmetry(w: np.ndarray) -> str:
    norm = float(np.dot(w, w))
    if norm == 0.0:
        return "twisting"
    corr = float(np.dot(w, w[::-1])) / norm
    return "symmetric" if corr > 0.9 else "antisymmetric" if corr < -0.9 else "unsymmetric"


def _group_method(response: Response, method: tuple[str, ...], group: str) -> str:
    return ", ".join(sorted({method[k] for k, g in enumerate(response.groups) if g == group}))


def _pattern_rows(pattern: PatternEnvelope, load: float) -> list[CheckRow]:
    """Info rows: the largest patterned-load effects on their own, with their loaded lengths."""
    rows = []
    for e, effect in enumerate(EFFECTS):
        for largest, arr in ((True, pattern.maximum[e]), (False, pattern.minimum[e])):
            i = int(np.argmax(arr) if largest else np.argmin(arr))
            unit = "kNm" if effect == "M" else "kN"
            lengths = _lengths_text(pattern.loaded_lengths(effect, i, largest))
            rows.append(CheckRow(f"patterned load: {'largest' if largest else 'least'} {effect}", float(arr[i]), None,
                                 unit, None, PATTERN, f"{load:g} kN/m on {lengths}", i, float(pattern.x[i]), INFO))
    return rows


def _pattern_amplification(response: Response, amplified: np.ndarray, alpha: dict[str, float], k: int) -> float:
    """Second-order factor on the patterned load's moments in state k's group: 1 / (1 - 1/alpha)."""
    if not amplified[k]:
        return 1.0
    a = alpha.get(response.groups[k], np.inf)
    return 1.0 / (1.0 - 1.0 / a) if a > 1.0 else 1.0


def _pattern_terms(pattern, added, response, amplified, alpha):
    """Per state: (factor f, moment amplification) of the patterned load added, or None."""
    if pattern is None or not added:
        return [None] * response.count
    return [None if response.groups[k] not in added else
            (added[response.groups[k]], _pattern_amplification(response, amplified, alpha, k))
            for k in range(response.count)]


def _stress_sets(response, fibre_a, fibre_b, pattern, terms, sec):
    """Lowest and highest fibre stress (states, stations), the patterned load's envelope added where asked.

    The pattern's stresses come from the fibres' own influence lines: sigma_a = N/A + M/W and
    sigma_b = N/A - M/W per unit load at each station, lumped by tributary length; one envelope per
    distinct (factor, amplification).
    """
    lo = np.minimum(fibre_a, fibre_b)
    hi = np.maximum(fibre_a, fibre_b)
    if pattern is None:
        return lo, hi
    na = pattern.contributions[0] / sec.area_m2  # (load stations, stations), kN/m2
    mw = pattern.contributions[2] / sec.section_modulus_m3
    na_total, mw_total = na.sum(0), mw.sum(0)

    def split(sign: float, amp: float) -> tuple[np.ndarray, np.ndarray]:
        # sums of the negative and positive contributions of N/A + sign amp M/W: the total is known,
        # so only the positive part needs a pass over the matrix
        c = na + (sign * amp) * mw
        positive = np.maximum(c, 0.0, out=c).sum(0)
        return na_total + sign * amp * mw_total - positive, positive

    for key in {t for t in terms if t is not None}:
        f, amp = key
        rows = [k for k, t in enumerate(terms) if t == key]
        (a_neg, a_pos), (b_neg, b_pos) = split(1.0, amp), split(-1.0, amp)
        if f < 0:  # a negative factor turns the adverse pattern round
            a_neg, a_pos, b_neg, b_pos = a_pos, a_neg, b_pos, b_neg
        lo[rows] = np.minimum(fibre_a[rows] + f * a_neg, fibre_b[rows] + f * b_neg)
        hi[rows] = np.maximum(fibre_a[rows] + f * a_pos, fibre_b[rows] + f * b_pos)
    return lo, hi


def _worst(values: np.ndarray, response: Response) -> tuple[float, str, str, int]:
    k, i = np.unravel_index(int(np.nanargmax(values)), values.shape)
    return float(values[k, i]), response.groups[k], response.names[k], int(i)


def _eccentricity_row(limit_kind, response, M, N, sec, pattern, terms, x, note) -> CheckRow:
    bound = sec.kern_m if limit_kind is EccentricityLimit.KERN else 0.5 * sec.depth_m
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio_e = np.where(N < 0, np.abs(M / N), np.inf) / bound[None, :]  # no compression: cannot be placed
    masks: dict = {}
    chosen = np.full(ratio_e.shape, -1)  # which sign's pattern governs, per state and station
    if pattern is not None:
        n_c, m_c = pattern.contributions[0], pattern.contributions[2]
        n_b = n_c * bound[None, :]
        for key in {t for t in terms if t is not None}:
            # the pattern maximising the margin |M| + N b (linear in the loads) governs; its e/b is reported
            f, amp = key
            rows = [k for k, t in enumerate(terms) if t == key]
            best = np.full((len(rows), x.size), -np.inf)
            for s, sign in enumerate((1.0, -1.0)):
                mask = f * (n_b + (sign * amp) * m_c) > 0
                masks[key, s] = mask
                m_tot = M[rows] + (f * amp) * np.einsum("ji,ji->i", m_c, mask)
                n_tot = N[rows] + f * np.einsum("ji,ji->i", n_c, mask)
                with np.errstate(divide="ignore", invalid="ignore"):
                    r = np.where(n_tot < 0, np.abs(m_tot / n_tot), np.inf) / bound
                chosen[rows] = np.where(r > best, s, chosen[rows])
                best = np.maximum(best, r)
            ratio_e[rows] = best
    k, i = np.unravel_index(int(np.nanargmax(ratio_e)), ratio_e.shape)
    worst = float(ratio_e[k, i])
    state = response.names[k]
    if chosen[k, i] >= 0:
        f = terms[k][0]
        lengths = _lengths_text(loaded_lengths(x, masks[terms[k], int(chosen[k, i])][:, i]))
        state += f" + {f:g} x patterned load on {lengths}"
    name = f"eccentricity within the {limit_kind.value}"
    return CheckRow(name, worst * float(bound[i]), float(bound[i]), "m", worst, response.groups[k], state, int(i),
                    float(x[i]), PASS if worst <= 1.0 else FAIL, note)


ELASTIC_ROWS = ("compressive stress", "tensile stress", "eccentricity within the kern", "eccentricity within the boundary")
UNREINFORCED_NOTE = ("information only: an unreinforced ring cracks instead of taking tension, so it is judged by its "
                     "lines of thrust (Heyman's safe theorem) and its collapse mechanism (with crushing at the hinges "
                     "where [check] crushing_strength_MPa is given)")


def _deflection_rows(case: Case, moved: Deflections, span_m: float) -> list[CheckRow]:
    """The largest vertical deflection of the serviceability combinations against span / ratio; where
    there are none, the largest of all states for information."""
    if not moved.names:
        return []
    limit = span_m / case.check.deflection_limit_ratio
    service = [k for k, g in enumerate(moved.groups) if case.limit_state(g) is LimitState.SERVICEABILITY]
    chosen = service or list(range(len(moved.names)))
    size = np.abs(moved.uy[chosen])
    j, i = np.unravel_index(int(np.argmax(size)), size.shape)
    k = chosen[j]
    value = float(size[j, i])
    signed = "down" if moved.uy[k, i] < 0 else "up"
    ratio = f"span/{span_m / value:.0f}" if value > 0 else "none"
    rule = f"limit span/{case.check.deflection_limit_ratio:g} (an example unless the case sets it)"
    if not service:
        return [CheckRow("vertical deflection", value * 1000, limit * 1000, "mm", None, moved.groups[k], moved.names[k],
                         int(i), float(moved.x[i]), INFO,
                         f"no serviceability combination (limit_state): the largest of all states, {signed}, "
                         f"{ratio}, for information; {rule}")]
    return [CheckRow("vertical deflection", value * 1000, limit * 1000, "mm", value / limit, moved.groups[k],
                     moved.names[k], int(i), float(moved.x[i]), PASS if value <= limit else FAIL,
                     f"serviceability combinations, first order: {signed}, {ratio}; {rule}")]


# where walking people excite a footbridge, vertically and longitudinally (Setra, "Footbridges: assessment
# of vibrational behaviour due to pedestrian footfall", technical guide, 2006; values from memory)
PEDESTRIAN_RANGES = ((1.7, 2.1, "the range of maximum risk"), (1.0, 1.7, "a range of medium risk"),
                     (2.1, 2.6, "a range of medium risk"), (2.6, 5.0, "the range of low risk (second harmonic)"))


def _frequency_rows(modes, pedestrian: bool, accelerations: bool) -> list[CheckRow]:
    """The lowest natural frequency of each direction in the plane, for information; on a footbridge,
    whether it lies where walking excites a deck (the acceleration check is the designer's)."""
    rows = []
    for direction in ("vertical", "horizontal"):
        found = [j for j, d in enumerate(modes.direction) if d == direction]
        if not found:
            continue
        j = found[0]
        f = float(modes.frequency_hz[j])
        note = f"mode {j + 1} of {len(modes.direction)}, {modes.symmetry[j]}, modal mass {modes.modal_mass_t[j]:.4g} t"
        if pedestrian:
            hit = next((text for lo, hi, text in PEDESTRIAN_RANGES if lo <= f < hi), None)
            then = ("see the acceleration row" if accelerations else
                    "give [check] deck_width_m for an estimate of the accelerations")
            note += (f"; inside {hit} for pedestrian excitation (Setra 2006 guide, from memory): {then}" if hit else "; outside the ranges of pedestrian excitation (Setra 2006 guide, "
                     "from memory)")
        rows.append(CheckRow(f"natural frequency, lowest {direction} mode", f, None, "Hz", None, "permanent",
                             f"mode {j + 1}", None, None, INFO, note))
    return rows


def _crowd_row(crowd: CrowdResponse, settings) -> CheckRow:
    """The footbridge's peak vertical acceleration under a crowd in step with its worst mode."""
    limit = settings.acceleration_limit_m_s2
    source = "crowd load of the Setra 2006 footbridge guide, from memory"
    if crowd.mode is None:
        return CheckRow("pedestrian vertical acceleration", 0.0, limit, "m/s2", 0.0, "crowd", "no mode", None, None,
                        PASS, f"no natural mode lies where walking excites a deck (1.25-2.3 Hz, 2.5-4.6 Hz; {source})")
    a = crowd.acceleration_m_s2
    note = (f"mode {crowd.mode + 1} at {crowd.frequency_hz:.3g} Hz, harmonic {crowd.harmonic}, psi {crowd.psi:.3g}; "
            f"{settings.crowd_density_per_m2:g} pedestrians/m2 on a {settings.deck_width_m:g} m walkway act as "
            f"{crowd.equivalent_per_m2:.3g} in step per m2 ({crowd.load_kN_m2 * 1000:.3g} N/m2); damping "
            f"{settings.damping_ratio:g} of critical; {source}; the crowd's own mass left out")
    return CheckRow("pedestrian vertical acceleration", a, limit, "m/s2", a / limit, "crowd",
                    f"mode {crowd.mode + 1}", None, None, PASS if a <= limit else FAIL, note)


def _long_term_rows(lasting: LongTerm, span_m: float, min_factor: float) -> list[CheckRow]:
    """Creep and shrinkage of the permanent load: thrust, crown deflection, shrinkage bending (information)
    and the buckling factor with the creep-reduced modulus (verdict)."""
    phi, chi = lasting.creep_coefficient, lasting.ageing_coefficient
    modulus = f"E_eff = E / (1 + chi phi) = {lasting.effective_modulus_ratio:.4g} E (phi {phi:g}, chi {chi:g})"
    shrink = (f"shrinkage {lasting.shrinkage_strain:g} as a uniform drop of {lasting.shrinkage_drop_C:.4g} degC under "
              f"E_eff" if lasting.shrinkage_strain > 0 else "no shrinkage")
    rows = [CheckRow("long-term thrust", lasting.thrust_kN, None, "kN", None, "permanent", "long term", None, None,
                     INFO, f"permanent cases unfactored {lasting.thrust_permanent_kN:.5g} kN (unchanged by creep of "
                     f"a rib that creeps alike) + shrinkage {lasting.thrust_shrinkage_kN:.4g} kN; {shrink}; {modulus}")]
    d = lasting.crown_deflection_m
    ratio = f"span/{span_m / abs(d):.0f}" if d != 0 else "none"
    rows.append(CheckRow("long-term crown deflection", d * 1000, None, "mm", None, "permanent", "long term",
                         lasting.crown_station, float(lasting.x[lasting.crown_station]), INFO,
                         f"(1 + phi) x {lasting.uy_elastic_m[lasting.crown_station] * 1000:.4g} mm at loading, plus "
                         f"shrinkage; {ratio}; positive up"))
    if lasting.shrinkage_strain > 0:
        peak = int(np.argmax(np.abs(lasting.moment_shrinkage_kNm)))
        equivalent = lasting.shrinkage_drop_C * lasting.effective_modulus_ratio
        rows.append(CheckRow("bending from shrinkage", float(lasting.moment_shrinkage_kNm[peak]), None, "kNm", None,
                             "permanent", "shrinkage", peak, float(lasting.x[peak]), INFO,
                             f"{shrink}; to carry it into the strength combinations add a load case with a uniform "
                             f"temperature change of {-equivalent:.4g} degC (the same forces with E)"))
    factor = lasting.buckling_long_term
    if factor is None:
        rows.append(CheckRow("long-term buckling factor", float("inf"), min_factor, "-", None,
                             "permanent", "long term", None, None, INFO, "no compression under the permanent load"))
        return rows
    elastic = lasting.buckling_elastic
    rows.append(CheckRow("long-term buckling factor", factor, min_factor, "-", min_factor / factor,
                         "permanent", "long term", None, None, PASS if factor >= min_factor else FAIL,
                         f"unfactored permanent cases with the creep-reduced modulus E / (1 + phi) = "
                         f"{1 / (1 + phi):.4g} E; {elastic:.4g} with E at loading"))
    return rows


def _as_information(row: CheckRow) -> CheckRow:
    """An elastic row of an unreinforced ring, kept for information (its verdict is not the ring's)."""
    if row.name not in ELASTIC_ROWS:
        return row
    note = "; ".join(t for t in (UNREINFORCED_NOTE, row.note) if t)
    return replace(row, verdict=INFO, utilisation=None, note=note)


def _unreinforced(case: Case, analysis: CaseAnalysis):
    """Thrust-line rows of a no-tension rib: admissibility per combination, collapse of collapse_case."""
    from formfind.design.thrust import admissibility, collapse_factors, joint_forces, least_friction

    settings = case.check
    axis = analysis.axis
    depth = analysis.section.depth_m
    kind = case.supports.kind
    hinge = case.hinge_station(axis) if kind is SupportKind.THREE_HINGED else None
    use_combos = analysis.combinations.count > 0
    loads = analysis.loads.combinations if use_combos else analysis.loads.cases
    response = analysis.combinations if use_combos else analysis.cases
    with np.errstate(divide="ignore", invalid="ignore"):
        guess = np.nan_to_num(np.abs(response.M) / np.maximum(-response.N, 0.0) / (0.5 * depth), nan=np.inf).max(axis=1)
    pressure = None
    if settings.fill_pressure:
        at_rest = _fill_pressure(case, analysis, "none")
        loads = replace(loads, dist=loads.dist + at_rest.dist[0][None])
        pressure = "with the fill's pressure at rest on both haunches"
    results = admissibility(axis, loads, depth, settings.min_geometric_factor, kind, hinge, np.argsort(-guess))
    joints = joint_forces(axis, loads, depth, kind, hinge)
    table = tuple(ThrustLineRow(g, r.state, r.admissible, r.geometric_factor)
                  for g, r in zip(loads.groups, results, strict=True))
    rows = []
    for group in dict.fromkeys(loads.groups):
        mine = [r for r in table if r.group == group]
        failing = [r for r in mine if not r.admissible]
        rated = [r for r in mine if not np.isnan(r.geometric_factor)] or mine
        governing = min(rated, key=lambda r: r.geometric_factor)
        value = governing.geometric_factor
        need = settings.min_geometric_factor
        util = need / value if value > 0 else None  # no line fits at all: judged by the value, no ratio
        rows.append(CheckRow("thrust line: geometric factor", value, need, "-", util, group,
                             (failing[0] if failing else governing).state, None, None,
                             FAIL if failing else PASS,
                             "; ".join(t for t in (
                                 f"{len(failing)} of {len(mine)} states have no line of thrust within depth/{need:g}"
                                 if failing else f"all {len(mine)} states hold a line of thrust within depth/{need:g}",
                                 pressure) if t)))
        k = loads.names.index(governing.state)
        ring = np.isfinite(value) and value >= need
        fraction = 1.0 / need if ring else 1.0  # within depth/need if the ring has one there, else the ring
        friction, joint = least_friction(joints, k, fraction)
        mu = settings.friction_coefficient
        where = (f"at x = {axis.x[joint]:.2f} m" if joint >= 0 else "no line of thrust within the zone")
        rows.append(CheckRow("thrust line: sliding", friction, mu, "-", friction / mu if np.isfinite(friction) else None,
                             group, governing.state, joint if joint >= 0 else None,
                             float(axis.x[joint]) if joint >= 0 else None,
                             PASS if friction <= mu else FAIL,
                             f"the least shear-to-normal ratio that a line of thrust within depth/{1 / fraction:g} needs "
                             f"at every joint (joints normal to the axis), {where}"))
    collapse: tuple = ()
    if settings.collapse_case:
        permanent = [i for i, c in enumerate(case.cases) if c.action is ActionKind.PERMANENT]
        dead = _sum_states(analysis.loads.cases, [case.cases[i].name for i in permanent])
        live = analysis.loads.cases.select(analysis.loads.cases.group_states(settings.collapse_case))
        strength = {"strength_kN_m2": settings.crushing_strength_kN_m2, "width_m": float(case.section.width_m)}
        if settings.fill_pressure:
            collapse = _collapse_with_fill(case, analysis, dead, live, kind, hinge, strength)
        else:
            collapse = collapse_factors(axis, dead, live, depth, kind, hinge, **strength)
        worst = min(collapse, key=lambda c: c.factor)
        need = settings.min_collapse_factor
        hinges = "; ".join(f"{h.x_m:.2f} m ({h.face}" + (f", crushed {1000 * h.crushed_depth_m:.0f} mm" if
                                                        h.crushed_depth_m else "") + ")" for h in worst.hinges)
        base = "on the unfactored permanent cases"
        if settings.crushing_strength_kN_m2 is not None:
            base += (f"; masonry crushing at {settings.crushing_strength_kN_m2 / 1000:g} MPa over the ring's "
                     f"{float(case.section.width_m):g} m width (hinges inside the faces by half the crushed depth)")
        if settings.fill_pressure:
            base += (f" and the fill's pressure (at rest, and {settings.passive_fraction:g} of the passive excess "
                     f"on the haunch away from the load; fill friction {settings.fill_friction_deg:g} deg)")
        if worst.factor > 0 and np.isfinite(worst.factor):
            util, note = need / worst.factor, base
        elif worst.factor > 0:
            util, note = 0.0, f"{base}; no collapse of the live load at any factor"
        else:
            util, note = None, "no line of thrust fits the ring under the permanent cases alone: no utilisation"
        rows.append(CheckRow("thrust line: collapse factor", worst.factor, need, "-", util, settings.collapse_case,
                             worst.state, None, None, PASS if worst.factor >= need else FAIL,
                             f"{note}; hinges at {hinges}" if hinges else note))
    return table, collapse, rows


def _fill_pressure(case: Case, analysis: CaseAnalysis, passive_side: str) -> StationLoads:
    """The horizontal pressure of the permanent cases' fills on the extrados (one state): at rest on both
    haunches, plus ``passive_fraction`` of the passive excess on ``passive_side`` ("left", "right" or
    "none"). Coefficients: K0 = 1 - sin(phi) (Jaky), Kp = (1 + sin(phi)) / (1 - sin(phi)) (Rankine)."""
    from formfind.model.loads import FillLoad, fill_pressure_loads
    from formfind.model.section import crown_abscissa

    settings = case.check
    phi = np.radians(settings.fill_friction_deg)
    k0 = 1.0 - np.sin(phi)
    kp = (1.0 + np.sin(phi)) / (1.0 - np.sin(phi))
    extra = settings.passive_fraction * (kp - k0)
    left = k0 + (extra if passive_side == "left" else 0.0)
    right = k0 + (extra if passive_side == "right" else 0.0)
    axis = analysis.axis
    crown = crown_abscissa(axis)
    total = np.zeros((1, axis.count - 1, 2, 2))
    for c in case.cases:
        if c.action is ActionKind.PERMANENT:
            for ld in c.loads:
                if isinstance(ld, FillLoad):
                    total += fill_pressure_loads(ld, axis, analysis.section, left, right, crown).dist
    return StationLoads.from_densities(total, group="fill pressure")


def _collapse_with_fill(case: Case, analysis: CaseAnalysis, dead: StationLoads, live: StationLoads, kind, hinge,
                        strength: dict | None = None):
    """Collapse factors with the fill's pressure in the dead load: for each live position the passive excess
    acts on the haunch away from the live load's resultant (the side the ring sways into)."""
    from formfind.design.thrust import collapse_factors
    from formfind.model.section import crown_abscissa

    axis = analysis.axis
    crown = crown_abscissa(axis)
    cuts = statics.cut_resultants(axis, live)
    with np.errstate(divide="ignore", invalid="ignore"):
        centre = np.where(np.abs(cuts.total_force[:, 1]) > 0,
                          cuts.total_moment / np.where(cuts.total_force[:, 1] != 0, cuts.total_force[:, 1], 1.0),
                          crown)  # the x of the resultant of a vertical live load: moment / force about O
    results: list = [None] * live.count
    for side in ("left", "right"):
        mine = [k for k in range(live.count) if (centre[k] > crown) == (side == "left")]
        if not mine:
            continue
        pressure = _fill_pressure(case, analysis, side)
        loaded = replace(dead, dist=dead.dist + pressure.dist)
        for k, result in zip(mine, collapse_factors(axis, loaded, live.select(mine), analysis.section.depth_m,
                                                    kind, hinge, **(strength or {})), strict=True):
            results[k] = result
    return tuple(results)


def _sum_states(loads: StationLoads, groups: list[str]) -> StationLoads:
    """One state: the sum of the (single-state) groups named, each with factor 1."""
    spans = [loads.group_states(g)[0] for g in groups]
    if not spans:
        return StationLoads.from_densities(np.zeros((1,) + loads.dist.shape[1:]), "permanent")
    return loads.combine("permanent", [(s, 1.0) for s in spans])


def patterned_envelope(influence: np.ndarray, x: np.ndarray, load_kN_m: float) -> tuple[np.ndarray, np.ndarray]:
    """Largest and smallest effect at every station from a uniform load placed where adverse.

    ``influence`` (load positions, stations): the effect at station i for a 1 kN load at station j
    (e.g. `formfind.analysis.frame.influence_lines(...).M`). The load per horizontal metre is lumped
    to the stations by tributary length, so the result is exact for influence lines linear between
    stations. Returns (maximum, minimum), each (stations,).
    """
    contribution = influence * (load_kN_m * tributary(x)[:, None])
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
