"""Surface loads spread through the fill to the ring (`spread_slope` of point loads and axle trains).

Sources: a simply supported beam under a uniform load w over a length c centred at mid-span has the
mid-span moment (P / 4) (L - c / 2), P = w c (Roark's Formulas for Stress and Strain, beams, partial
uniform load; from memory); a three-hinged arch's thrust is that beam moment over the rise at the crown
hinge (any statics text). The spread itself, a uniform load over 2 x slope x depth under the load, is
common practice (no source); the depth is measured from the fill's surface to the extrados."""

from __future__ import annotations

import tomllib
from dataclasses import replace

import numpy as np
import pytest

from formfind.analysis.statics import three_hinged
from formfind.errors import CaseError
from formfind.model.case import load_case, parse_case
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import FillLoad, FillSpread, LoadCase, PointLoad, case_station_loads
from formfind.model.section import Section
from tests.conftest import ROOT

SPAN, RISE, DEPTH = 20.0, 4.0, 0.5


def _ring(stations: int = 201):
    curve = Parabola(Chord(SPAN), RISE)
    axis = Axis.from_curve(curve, place_stations(curve, stations))
    return axis, Section.rectangle(1.0, DEPTH, elastic_modulus_kN_m2=1e7).at(axis)


def _resultant(loads, state: int = 0) -> tuple[float, float]:
    """Total downward force (kN) and its abscissa (m) of a state's densities (linear on each element)."""
    x = loads_axis.x
    fa, fb = -loads.dist[state, :, 0, 1], -loads.dist[state, :, 1, 1]
    force = 0.5 * (fa + fb)
    centre = x[:-1] + np.diff(x) * np.where(force != 0, (fa / 6 + fb / 3) / np.where(force != 0, force, 1), 0.5)
    return float(force.sum()), float((force * centre).sum() / force.sum())


loads_axis, _ = _ring()


@pytest.mark.parametrize("cover, slope", [(1.0, 0.5), (0.6, 1.0), (2.0, 0.25)])
def test_a_crown_load_spread_through_the_fill_gives_the_closed_form_thrust(cover, slope):
    axis, section = _ring()
    fill = FillLoad(19.0, cover_m=cover)
    spread = PointLoad(SPAN / 2, 100.0, spread=FillSpread(slope, fill))
    loads = case_station_loads(LoadCase("axle", (spread,)), axis, section)
    assert loads.point_x.size == 0  # it reaches the ring as a distributed load
    width = 2 * slope * cover  # the crown's extrados is the highest point: its depth is the cover
    result = three_hinged(axis, loads, axis.count // 2)
    # 1e-9: the statics engine is exact for loads linear on each element
    assert result.thrust[0] == pytest.approx(100.0 * (SPAN - width / 2) / (4 * RISE), rel=1e-9)
    force, centre = _resultant(loads)
    assert force == pytest.approx(100.0, rel=1e-12) and centre == pytest.approx(SPAN / 2, rel=1e-12)


def test_the_spread_widens_with_the_depth_and_stops_at_the_springings():
    """Under a haunch the fill is deeper, so the spread is wider; near a springing the part beyond it goes
    to the abutment: the ring carries P times the share of the spread that lies over the span."""
    axis, section = _ring()
    fill = FillLoad(19.0, cover_m=0.5)
    surface = float(np.max(axis.extrados(section.depth_m)[:, 1]))  # close to the vertical measure at the crown
    for x0 in (4.0, 0.3):
        loads = case_station_loads(LoadCase("a", (PointLoad(x0, 100.0, spread=FillSpread(0.5, fill)),)), axis,
                                   section)
        loaded = np.flatnonzero(np.abs(loads.dist[0, :, :, 1]).max(axis=1) > 0)
        extrados = axis.y + 0.5 * section.depth_m / np.abs(np.cos(axis.theta))
        width = 2 * 0.5 * (surface + 0.5 - float(np.interp(x0, axis.x, extrados)))
        assert width > 2 * 0.5 * 0.5  # deeper than at the crown
        lo, hi = max(x0 - width / 2, 0.0), min(x0 + width / 2, SPAN)
        assert axis.x[loaded[0]] <= lo + 1e-9 and axis.x[loaded[-1] + 1] >= hi - 1e-9
        force, _ = _resultant(loads)
        assert force == pytest.approx(100.0 * (hi - lo) / width, rel=1e-3)


def test_no_fill_over_the_extrados_leaves_the_point_load_as_it_was():
    """Zero depth of fill: the load reaches the ring as the point load it was, to the last digit."""
    axis, section = _ring()
    fill = FillLoad(19.0, cover_m=0.0)
    spread = case_station_loads(LoadCase("a", (PointLoad(SPAN / 2, 100.0, spread=FillSpread(0.5, fill)),)),
                                axis, section)
    plain = case_station_loads(LoadCase("a", (PointLoad(SPAN / 2, 100.0),)), axis, section)
    hinge = axis.count // 2
    np.testing.assert_array_equal(three_hinged(axis, spread, hinge).M, three_hinged(axis, plain, hinge).M)


def test_the_case_file_takes_the_fill_of_a_permanent_case_as_the_road():
    text = (ROOT / "cases" / "masonry-culvert.toml").read_text()
    data = tomllib.loads(text)
    axles = next(c for c in data["cases"] if c["name"] == "axles")["loads"][0]
    assert axles["spread_slope"] == 0.5
    case = parse_case(data, "ring.toml")
    train = next(c for c in case.cases if c.name == "axles").loads[0]
    fill = next(ld for c in case.cases if c.name == "ring_and_fill" for ld in c.loads if isinstance(ld, FillLoad))
    assert train.spread.fill == fill
    data["cases"] = [c for c in data["cases"] if c["name"] != "ring_and_fill"]
    data["combinations"] = []
    data["check"].pop("collapse_case"), data["check"].pop("crushing_strength_MPa")
    data["find"] = {}
    with pytest.raises(CaseError, match=r"cases\[0\]\.loads\[0\]\.spread_slope: needs a fill load"):
        parse_case(data, "ring.toml")


def test_spreading_the_axles_through_the_fill_raises_the_culvert_collapse_factor():
    """Common practice, no source: a load spread over a length is less severe for a mechanism than the
    same load at a point."""
    from formfind.analysis.engine import analyse
    from formfind.design.check import check

    case = load_case(ROOT / "cases" / "masonry-culvert.toml")
    point = replace(case, cases=tuple(
        replace(c, loads=tuple(replace(ld, spread=None) if hasattr(ld, "spread") else ld for ld in c.loads))
        for c in case.cases))

    def collapse(c):
        return next(r for r in check(c, analyse(c)).rows if r.name == "thrust line: collapse factor").value

    assert collapse(case) > collapse(point)
