"""Fabrication geometry: the axis as tangent-continuous circular arcs within a tolerance.

Sources (from memory): the sagitta relation of a circular segment, R = (c^2 / 4 + s^2) / (2 s) for
chord c and rise s; an arc's tangent at a point is normal to the radius there (elementary geometry).
The distance checks use scipy's k-d tree on densely sampled curves, independent of the fitting code.
"""

from __future__ import annotations

import csv
import io

import ezdxf
import numpy as np
import pytest
from scipy.spatial import cKDTree

from formfind.cli import run_cli
from formfind.design.shape import find_shape
from formfind.model.arcs import chain_points, dense_axis, fit_arcs
from formfind.model.case import load_case
from formfind.model.geometry import Chord, CircularSegment, Parabola, axis_through
from tests.conftest import ROOT

SHIPPED = sorted((ROOT / "cases").glob("*.toml"))


def _distance_to_chain(axis, arcs) -> float:
    """The largest distance (m) from the axis, sampled 64 times per station, to the chain sampled
    every ~0.1 mm (so the sampling adds less than 0.05 mm)."""
    points, _ = dense_axis(axis, 64)
    longest = max(a.length_m for a in arcs)
    chain = chain_points(arcs, int(np.ceil(longest / 1e-4)))
    return float(cKDTree(chain).query(points)[0].max())


def _tangent(arc, at_start: bool) -> np.ndarray:
    point = np.array(arc.start if at_start else arc.end)
    if arc.centre is None:
        d = np.array(arc.end) - np.array(arc.start)
        return d / np.linalg.norm(d)
    radial = (point - np.array(arc.centre)) / arc.radius_m
    t = np.array([-radial[1], radial[0]])  # anticlockwise tangent
    return t if arc.turn_deg > 0 else -t


def test_a_circular_axis_is_one_arc_of_its_own_radius():
    span, rise = 20.0, 4.0
    x = np.linspace(0.0, span, 41)
    axis = axis_through(x, CircularSegment(Chord(span), rise).ordinate(x))
    arcs = fit_arcs(axis, 0.005)
    assert len(arcs) == 1
    radius = (span**2 / 4 + rise**2) / (2 * rise)  # sagitta relation
    assert arcs[0].radius_m == pytest.approx(radius, rel=1e-3)  # the spline between stations: ~1 mm
    assert arcs[0].centre == pytest.approx((span / 2, rise - radius), abs=0.02)


@pytest.fixture(scope="module")
def found_axes():
    return {path.stem: find_shape(load_case(path)).axis for path in SHIPPED}


@pytest.mark.parametrize("path", SHIPPED, ids=[p.stem for p in SHIPPED])
@pytest.mark.parametrize("tolerance_mm", [2.0, 5.0, 20.0])
def test_arcs_of_every_shipped_axis_stay_within_tolerance_and_join_smoothly(found_axes, path, tolerance_mm):
    axis = found_axes[path.stem]
    arcs = fit_arcs(axis, tolerance_mm / 1000)
    assert _distance_to_chain(axis, arcs) <= tolerance_mm / 1000
    assert arcs[0].start == pytest.approx((axis.x[0], axis.y[0]), abs=1e-12)
    assert arcs[-1].end == pytest.approx((axis.x[-1], axis.y[-1]), abs=1e-9)
    for a, b in zip(arcs, arcs[1:], strict=False):
        assert a.end == pytest.approx(b.start, abs=1e-12)  # continuous
        assert np.dot(_tangent(a, False), _tangent(b, True)) == pytest.approx(1.0, abs=1e-9)  # tangent
        assert a.end_station == b.start_station
    assert all(a.max_deviation_m <= tolerance_mm / 1000 for a in arcs)


def test_a_looser_tolerance_needs_fewer_arcs():
    x = np.linspace(0.0, 30.0, 61)
    axis = axis_through(x, Parabola(Chord(30.0), 7.5).ordinate(x))
    counts = [len(fit_arcs(axis, tol)) for tol in (0.001, 0.005, 0.05)]
    assert counts[0] > counts[1] > counts[2] >= 1, counts


def test_arcs_are_written_as_a_table_and_as_dxf_arcs(tmp_path, found_axes):
    assert run_cli(["run", str(ROOT / "cases" / "timber-roof.toml"), "--out", str(tmp_path), "--no-buckling",
                    "-q"]) in (0, 7)
    folder = tmp_path / "timber-roof"
    rows = list(csv.DictReader(io.StringIO((folder / "arcs.csv").read_text(encoding="utf-8"))))
    doc = ezdxf.readfile(folder / "axis.dxf")
    drawn = doc.modelspace().query('ARC LINE[layer=="FF_ARCS"]')
    assert len(drawn) == len(rows) >= 1
    assert doc.header["$INSUNITS"] == 4  # millimetres
    axis = found_axes["timber-roof"]
    samples, _ = dense_axis(axis, 1000)  # ~0.5 mm apart: a nearest sample is within 0.3 mm of the nearest point
    tree = cKDTree(samples * 1000.0)
    for entity in drawn:  # every drawn arc lies on the axis within the tolerance (5 mm by default)
        points = np.array([(v.x, v.y) for v in entity.flattening(0.01)] if entity.dxftype() == "ARC"
                          else [entity.dxf.start[:2], entity.dxf.end[:2]])
        assert tree.query(points)[0].max() <= 5.0 + 0.3
    assert float(rows[-1]["end_x_m"]) == pytest.approx(axis.x[-1], abs=5e-4)
