"""Results by name and place (`formfind.analysis.query`): values at any abscissa against closed forms
and against the station values, point loads between stations, reactions in words, named envelopes,
and buckling of the load cases of a case without combinations."""

from __future__ import annotations

import numpy as np
import pytest

import formfind
from formfind import build
from formfind.errors import ArgumentError

Q, L, F = 20.0, 30.0, 6.0


def arch(kind: str = "three_hinged", loads=None, combinations=(), stations: int = 21, **extra):
    loads = loads or [build.load_case("deck", [build.line(start_kN_m=Q)], action="permanent")]
    return build.case("query", geometry=build.geometry(span_m=L, rise_m=F),
                      supports=build.supports(kind=kind, **extra),
                      section=build.section(depth_m=0.5, width_m=0.4, elastic_modulus_MPa=30000.0),
                      stations=build.stations(count=stations), cases=loads, combinations=list(combinations))


def test_moment_between_stations_is_the_beam_analogy_on_the_chord_polygon():
    """Three-hinged arch, uniform load q per horizontal metre: M(x) = q x (L - x) / 2 - H y(x), H = q L^2 /
    (8 f) (beam analogy; e.g. Megson, Structural and Stress Analysis, three-hinged arches; from memory),
    with y(x) the chord polygon between stations (the engine's axis). 1e-9 of q L^2: exact statics."""
    result = formfind.analyse(arch())
    H = Q * L**2 / (8 * F)
    rng = np.random.default_rng(3)
    for x in np.concatenate([rng.uniform(0, L, 40), [0.0, L, 15.0, 0.75]]):
        at = result.at("deck", x)
        y = float(np.interp(x, result.axis.x, result.axis.y))
        assert at.y_m == pytest.approx(y, abs=1e-12)
        assert at.M_kNm == pytest.approx(Q * x * (L - x) / 2 - H * y, abs=1e-9 * Q * L**2)
        assert at.N_kN == at.N_left_kN and at.V_kN == at.V_left_kN  # no point load here


def test_station_values_are_returned_at_stations_and_approached_between_them():
    case = arch("two_hinged", loads=[
        build.load_case("deck", [build.line(start_kN_m=Q), build.line(from_x_m=3.0, to_x_m=12.0, start_kN_m=5.0,
                                                                    end_kN_m=15.0)], action="permanent"),
        build.load_case("gust", [build.line(start_kN_m=2.0, direction="right", per="arc")])],
        combinations=[build.combination("ULS", {"deck": 1.35, "gust": 1.5})])
    result = formfind.analyse(case, displacements=True)
    r = result.combinations
    for i in range(result.axis.count):
        at = result.at("ULS", result.axis.x[i])
        assert (at.N_kN, at.V_kN, at.M_kNm) == (r.N[0, i], r.V[0, i], r.M[0, i])
        assert (at.ux_m, at.uy_m) == tuple(r.displacements[0, i, :2])
    # the exact field of each element ends on the next station's values (the frame's stations are in
    # equilibrium with the element loads between them); N, V resolved on a tangent turning by O(eps)
    scale = np.abs(r.M).max()
    eps = 1e-7
    for i in range(1, result.axis.count):
        near = result.at("ULS", result.axis.x[i] - eps)
        assert near.M_kNm == pytest.approx(r.M[0, i], abs=1e-7 * scale)
        assert near.N_kN == pytest.approx(r.N_left[0, i], abs=1e-5 * np.abs(r.N).max())
        assert near.ux_m == pytest.approx(r.displacements[0, i, 0], abs=1e-9)


def test_a_point_load_between_stations_gives_both_sides():
    """A point load P at x_p between stations of a three-hinged arch: the shear jumps by P cos(theta) and
    N by P sin(theta) across it, M is continuous and equals the beam analogy M0 - H y with H = P x_p / (2 f)
    for x_p < L / 2 (closed form, as above)."""
    P, xp = 50.0, 7.3  # 21 stations at 1.5 m: 7.3 m lies between two of them
    case = arch(loads=[build.load_case("axle", [build.point(x_m=xp, down_kN=P)])])
    result = formfind.analyse(case)
    assert not np.isclose(result.axis.x, xp).any()
    at = result.at("axle", xp)
    H = P * xp / (2 * F)
    y = float(np.interp(xp, result.axis.x, result.axis.y))
    assert at.M_kNm == pytest.approx(P * (L - xp) / L * xp - H * y, rel=1e-10)
    i = int(np.searchsorted(result.axis.x, xp)) - 1
    t = (xp - result.axis.x[i]) / (result.axis.x[i + 1] - result.axis.x[i])
    theta = result.axis.theta[i] + t * (result.axis.theta[i + 1] - result.axis.theta[i])
    assert at.V_left_kN - at.V_kN == pytest.approx(P * np.cos(theta), rel=1e-10)
    assert at.N_left_kN - at.N_kN == pytest.approx(-P * np.sin(theta), rel=1e-10)
    before, after = result.at("axle", xp - 1e-6), result.at("axle", xp + 1e-6)
    assert before.M_kNm == pytest.approx(at.M_kNm, abs=1e-3) and after.M_kNm == pytest.approx(at.M_kNm, abs=1e-3)


def test_reactions_in_words():
    """Two-hinged and fixed arches under a symmetric load: each springing carries half the load upwards
    and the same inward thrust (statics); a fixed springing's moment is the rib's M there."""
    for kind in ("two_hinged", "fixed"):
        result = formfind.analyse(arch(kind))
        r = result.reactions_of("deck")
        assert r.left.up_kN == pytest.approx(Q * L / 2, rel=1e-9)
        assert r.right.up_kN == pytest.approx(Q * L / 2, rel=1e-9)
        assert r.left.thrust_kN == pytest.approx(r.right.thrust_kN, rel=1e-9) and r.left.thrust_kN > 0
        assert r.thrust_kN == pytest.approx(r.left.thrust_kN, rel=1e-12)
        assert r.left.moment_kNm == result.cases.M[0, 0]
        if kind == "two_hinged":
            assert r.left.moment_kNm == pytest.approx(0.0, abs=1e-9 * Q * L**2)


def test_states_by_name_and_named_envelopes():
    case = arch("two_hinged", loads=[
        build.load_case("deck", [build.line(start_kN_m=Q)], action="permanent"),
        build.load_case("truck", [build.axle_train(offsets_m=[0.0, 3.0], loads_kN=[60.0, 60.0], step_m=1.5)])],
        combinations=[build.combination("ULS", {"deck": 1.35, "truck": 1.5})])
    result = formfind.analyse(case)
    with pytest.raises(ArgumentError, match="holds .* states .*name one of them"):
        result.at("ULS", 10.0)
    with pytest.raises(ArgumentError, match="no load state, case or combination called 'ULT'"):
        result.state("ULT")
    with pytest.raises(ArgumentError, match="within the span"):
        result.at("deck", 31.0)
    group = result.group("ULS")
    assert group.count > 10
    one = result.state(group.names[3])
    assert np.array_equal(one.M[0], group.M[3])
    env = result.envelope_of("ULS")
    assert np.array_equal(env.M_max_kNm, group.M.max(axis=0))
    assert np.array_equal(env.M_min_kNm, group.M.min(axis=0))
    assert np.array_equal(env.N_min_kN, np.minimum(group.N, group.N_left).min(axis=0))


def test_cases_buckle_when_there_is_no_combination():
    """Without combinations every load case gets its buckling factor (not an empty tuple); a combination
    holding the case once gives the same eigenproblem, so the same factor (1e-9)."""
    alone = formfind.analyse(arch("two_hinged"))
    assert [b.group for b in alone.buckling] == ["deck"]
    combined = formfind.analyse(arch("two_hinged", combinations=[build.combination("once", {"deck": 1.0})]))
    assert alone.buckling[0].critical_factor == pytest.approx(combined.buckling[0].critical_factor, rel=1e-9)


def test_figures_on_demand_are_figures_with_something_drawn():
    """formfind.figures returns matplotlib Figures (not shown, not written) with ink on them."""
    from matplotlib.figure import Figure

    case = arch("two_hinged", combinations=[build.combination("ULS", {"deck": 1.35})])
    result = formfind.analyse(case)
    figs = formfind.figures(result, formfind.check(case, result))
    assert {"fig-axis", "fig-moment-along", "fig-envelope-M", "fig-buckling"} <= set(figs)
    for name, fig in figs.items():
        assert isinstance(fig, Figure), name
        fig.canvas.draw()
        pixels = np.asarray(fig.canvas.buffer_rgba())[..., :3]
        assert (pixels < 200).mean() > 0.005, f"{name} is blank"
    with pytest.raises(ArgumentError, match="figures: analysis: expected a CaseAnalysis"):
        formfind.figures(case)


def test_least_thickness_is_public_with_its_centroid_option():
    """formfind.least_thickness: a semicircular ring under its own weight needs t/R = 0.1075 (Milankovitch
    1907, as quoted by Ochsendorf, "The masonry arch on spreading supports", 2006; from memory; the
    reference test in tests/reference/test_thrust_lines.py holds it to 1 %); the weights at the chord
    midpoints give nearly the same, and the kinds are named by their case-file words."""
    from formfind.model.geometry import Axis

    r = 5.0
    phi = np.linspace(np.pi, 0.0, 121)
    axis = Axis(r + r * np.cos(phi), r * np.sin(phi), phi - np.pi / 2)
    at_centroids = formfind.least_thickness(axis, "fixed")
    at_midpoints = formfind.least_thickness(axis, "fixed", at_centroid=False)
    assert at_centroids / r == pytest.approx(0.1075, rel=0.01)
    assert at_midpoints / r == pytest.approx(at_centroids / r, rel=0.01) and at_midpoints != at_centroids
    with pytest.raises(ArgumentError, match="least_thickness: kind: expected one of"):
        formfind.least_thickness(axis, "glued")
    with pytest.raises(ArgumentError, match="least_thickness: axis: expected an Axis"):
        formfind.least_thickness([0, 1, 2])


def test_to_frame_gives_one_row_per_state_and_station():
    """Response.to_frame (pandas, optional): the table holds exactly the arrays, long format."""
    pd = pytest.importorskip("pandas")
    case = arch("two_hinged", combinations=[build.combination("ULS", {"deck": 1.35})])
    result = formfind.analyse(case, displacements=True)
    frame = result.combinations.to_frame()
    assert isinstance(frame, pd.DataFrame)
    assert len(frame) == result.combinations.count * result.axis.count
    assert np.array_equal(frame["M_kNm"].to_numpy(), result.combinations.M.ravel())
    assert np.array_equal(frame["uy_m"].to_numpy(), result.combinations.displacements[:, :, 1].ravel())
    assert set(frame["group"]) == {"ULS"}
