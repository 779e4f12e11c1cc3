"""Unreinforced (no-tension) rings: Heyman's safe theorem as linear programs, against published results.

Sources:
- Milankovitch (1907), as quoted by Heyman, *The Masonry Arch* (1982), and by Ochsendorf's and Makris
  & Alexakis's later papers on semicircular arches (from memory): a semicircular ring with radial
  joints under its own weight needs a thickness of t/R = 0.1075 (R: radius of the centre line), and
  at that thickness hinges form at the crown (line of thrust touching the extrados), at the
  springings (extrados) and at about 54.5 degrees from the crown on either side (intrados).
- Heyman, *The Stone Skeleton* (1966): the uniqueness theorem. A load factor that is both statically
  admissible (a line of thrust within the ring) and kinematically admissible (a mechanism whose
  hinges lie where the line touches the faces) is the collapse factor; so the LP's factor must equal
  the virtual-work factor of the mechanism formed by the hinges it reports (common practice for the
  virtual-work computation of a four-hinge mechanism, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from formfind.design.thrust import (
    admissibility,
    collapse_factors,
    joint_forces,
    least_thickness,
    voussoir_weight,
)
from formfind.enums import SupportKind
from formfind.model.geometry import Axis, Chord, CircularSegment, place_stations
from formfind.model.loads import LoadCase, PointLoad, case_station_loads
from formfind.model.section import Section

MILANKOVITCH = 0.1075
THICKNESS_RTOL = 0.01  # the tolerance; measured 3e-4 at 201 joints


def _semicircle(joints: int, radius: float = 5.0) -> Axis:
    phi = np.linspace(np.pi, 0.0, joints)
    return Axis(radius + radius * np.cos(phi), radius * np.sin(phi), phi - np.pi / 2)


def test_least_thickness_of_a_semicircular_ring_is_milankovitch_s():
    radius = 5.0
    axis = _semicircle(201, radius)
    t = least_thickness(axis)
    assert t / radius == pytest.approx(MILANKOVITCH, rel=THICKNESS_RTOL)
    # and it is a sharp limit: 1 % thinner holds no line of thrust
    thinner = voussoir_weight(axis, 0.99 * t, 1.0, 1.0)
    assert not admissibility(axis, thinner, np.full(axis.count, 0.99 * t))[0].admissible


def test_hinges_of_the_semicircle_at_least_thickness_sit_near_54_degrees():
    radius = 5.0
    axis = _semicircle(181, radius)
    t = least_thickness(axis)
    # a tiny point load at the crown on the ring of least thickness collapses it at once; the hinges
    # are the least-thickness mechanism's
    dead = voussoir_weight(axis, t, 1.0, 1.0)
    live = case_station_loads(LoadCase("p", (PointLoad(radius + 0.01, 1.0),)), axis,
                              Section.rectangle(1.0, t, elastic_modulus_kN_m2=1.0).at(axis))
    res = collapse_factors(axis, dead, live, np.full(axis.count, t))[0]
    assert res.factor < 1e-2 * (np.pi * radius * t)  # next to nothing of the ring's own weight
    intrados = [h for h in res.hinges if h.face == "intrados"]
    angles = sorted(np.degrees(np.arccos(np.clip((h.x_m - radius) / radius, -1, 1))) for h in intrados)
    # angles measured from the springing line: 90 - 54.5 = 35.5 deg; 2 degrees = the joint spacing
    # (1 deg) plus the spread of the near-degenerate optimum at least thickness
    assert any(abs(a - 35.5) < 2.0 for a in angles) and any(abs(a - 144.5) < 2.0 for a in angles)


def _virtual_work_factor(axis, dead, live, depth, hinges):
    """Collapse factor of the four-hinge mechanism by virtual work (independent of the LP).

    Blocks: ground | h1-h2 rotating about P1 | h2-h3 about the instantaneous centre I | h3-h4 about
    P4 | ground. Hinge points sit on the face where the line of thrust touches, or inside it by half
    the hinge's crushed depth (finite strength: the block turns about the middle of its stress block).
    """
    pts = []
    for h in hinges:
        sign = 1.0 if h.face == "extrados" else -1.0
        reach = 0.5 * depth - 0.5 * h.crushed_depth_m
        pts.append(np.array([axis.x[h.station], axis.y[h.station]]) + sign * reach * axis.normal[h.station])
    p1, p2, p3, p4 = pts
    # I = intersection of the lines P1P2 and P4P3
    d1, d2 = p2 - p1, p3 - p4
    a = np.array([d1, -d2]).T
    s, _ = np.linalg.solve(a, p4 - p1)
    centre = p1 + s * d1
    w1 = 1.0
    # velocity of P2 on block 1 equals that on block 2: w1 x (P2 - P1) = w2 x (P2 - I)
    w2 = w1 * np.dot(p2 - p1, p2 - centre) / np.dot(p2 - centre, p2 - centre)
    w3 = w2 * np.dot(p3 - centre, p3 - p4) / np.dot(p3 - p4, p3 - p4)
    stations = [h.station for h in hinges]

    def work(loads):
        # vertical velocity of a point q on a block with centre c and rate w: w (qx - cx)
        total = 0.0
        x0, x1 = axis.x[:-1], axis.x[1:]
        fy_a, fy_b = loads.dist[0, :, 0, 1], loads.dist[0, :, 1, 1]
        force = 0.5 * (fy_a + fy_b)
        xbar = x0 + (x1 - x0) * np.where(force != 0, (fy_a / 6 + fy_b / 3) / np.where(force != 0, force, 1), 0.5)
        elem_points = [(xbar[e], force[e], e + 0.5) for e in range(axis.count - 1)]
        for px, f in zip(loads.point_x, loads.point_force[:, 1], strict=True):
            elem_points.append((px, f, float(np.interp(px, axis.x, np.arange(axis.count)))))
        for qx, f, pos in elem_points:
            if stations[0] < pos < stations[1]:
                total += f * w1 * (qx - p1[0])
            elif stations[1] < pos < stations[2]:
                total += f * w2 * (qx - centre[0])
            elif stations[2] < pos < stations[3]:
                total += f * w3 * (qx - p4[0])
        return total

    return -work(dead) / work(live)


@pytest.mark.parametrize("load_x", [1.3, 2.2, 3.1])
def test_collapse_factor_equals_the_virtual_work_of_its_own_mechanism(load_x):
    """Uniqueness theorem (Heyman 1966): lower bound (LP) = upper bound (mechanism by virtual work)."""
    span, rise, depth = 8.0, 2.5, 0.3
    curve = CircularSegment(Chord(span), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 161))
    sec = Section.rectangle(1.0, depth, elastic_modulus_kN_m2=1e6, unit_weight_kN_m3=20.0).at(axis)
    dead = voussoir_weight(axis, depth, 1.0, 20.0)
    live = case_station_loads(LoadCase("p", (PointLoad(load_x + 1e-3, 10.0),)), axis, sec)
    res = collapse_factors(axis, dead, live, sec.depth_m)[0]
    assert 0 < res.factor < 1e3
    assert len(res.hinges) == 4, res.hinges  # a fixed ring collapses with four hinges
    faces = [h.face for h in res.hinges]
    assert all(a != b for a, b in zip(faces, faces[1:], strict=False))  # faces alternate
    upper = _virtual_work_factor(axis, dead, live, depth, res.hinges)
    # 1e-6: both are exact for the same discrete ring; only the LP's own tolerance separates them
    assert upper == pytest.approx(res.factor, rel=1e-6)


def _segment_with_a_point_load(stations: int, depth: float):
    """A segmental ring (8 m span, 2.5 m rise) under its own weight (20 kN/m3) and 10 kN at 2.2 m."""
    curve = CircularSegment(Chord(8.0), 2.5)
    axis = Axis.from_curve(curve, place_stations(curve, stations))
    sec = Section.rectangle(1.0, depth, elastic_modulus_kN_m2=1e6, unit_weight_kN_m3=20.0).at(axis)
    dead = voussoir_weight(axis, depth, 1.0, 20.0)
    live = case_station_loads(LoadCase("p", (PointLoad(2.2 + 1e-3, 10.0),)), axis, sec)
    return axis, sec, dead, live


@pytest.mark.parametrize("strength", [2e4, 5e3, 1e3])
def test_with_finite_strength_the_collapse_factor_is_the_virtual_work_of_the_inset_mechanism(strength):
    """Finite compressive strength f (kN/m2): the hinges turn about the middle of a stress block
    |N| / (f b) deep at the face (Heyman, *The Masonry Arch*; from memory). The uniqueness theorem
    still holds for the ring with its faces moved in: the mechanism through the inset hinge points,
    by virtual work, gives the program's factor (1e-6: the cutting planes stop at 1e-7 of the moment
    capacity). Weaker masonry collapses sooner."""
    depth = 0.3
    axis, sec, dead, live = _segment_with_a_point_load(161, depth)
    rigid = collapse_factors(axis, dead, live, sec.depth_m)[0]
    res = collapse_factors(axis, dead, live, sec.depth_m, strength_kN_m2=strength)[0]
    assert 0 < res.factor < rigid.factor
    assert len(res.hinges) == 4
    for h in res.hinges:  # the block's depth is the hinge's thrust over f b
        assert h.crushed_depth_m == pytest.approx(-res.axial_kN[h.station] / strength, rel=1e-6)
        assert 0 < h.crushed_depth_m < depth
    upper = _virtual_work_factor(axis, dead, live, depth, res.hinges)
    assert upper == pytest.approx(res.factor, rel=1e-6)


def test_as_the_strength_grows_the_collapse_factor_tends_to_the_rigid_block_one_as_one_over_f():
    """The stress block's depth is N / (f b), so the loss of factor falls as 1 / f: doubling a large f
    halves it (within 1 %), and at 1e6 kN/m2 the factor is the rigid-block one within 1e-3."""
    axis, sec, dead, live = _segment_with_a_point_load(81, 0.3)
    rigid = collapse_factors(axis, dead, live, sec.depth_m)[0].factor
    loss = [rigid - collapse_factors(axis, dead, live, sec.depth_m, strength_kN_m2=f)[0].factor for f in (1e5, 2e5)]
    assert loss[0] / loss[1] == pytest.approx(2.0, rel=0.01)
    far = collapse_factors(axis, dead, live, sec.depth_m, strength_kN_m2=1e6)[0].factor
    assert far == pytest.approx(rigid, rel=1e-3)


def test_geometric_factor_is_depth_over_the_thinnest_zone():
    """A ring twice the least thickness has geometric factor 2 (Heyman's definition), up to the
    change of self-weight with depth, which we remove by keeping the loads of the thinner ring."""
    axis = _semicircle(121)
    t = least_thickness(axis)
    loads = voussoir_weight(axis, t, 1.0, 1.0)  # weight of the least ring
    result = admissibility(axis, loads, np.full(axis.count, 2 * t), required_factor=2.0)
    # the zone of the least ring's own shape: weight at its centroid moves slightly with depth, so the
    # thicker ring's zone is not exactly the same problem; 1e-3 covers it
    assert result[0].admissible
    assert result[0].geometric_factor == pytest.approx(2.0, rel=1e-3)


def test_joint_forces_are_affine_in_the_reactions_and_hinges_carry_no_moment():
    axis = _semicircle(41)
    loads = voussoir_weight(axis, 0.5, 1.0, 1.0)
    j = joint_forces(axis, loads, np.full(axis.count, 0.5), SupportKind.TWO_HINGED)
    assert j.hinges == (0, axis.count - 1)
    # the left springing's own moment is the reaction moment: M(0) = -Mz (sign of response.py)
    r = np.array([3.0, 2.0, 0.7])
    assert (j.M[0] + j.A_M @ r)[0] == pytest.approx(-0.7, abs=1e-12)


def test_a_three_hinged_funicular_ring_has_its_line_of_thrust_on_the_axis():
    """A three-hinged parabola under a uniform load per horizontal metre: the line of thrust is the
    axis itself (Hibbeler, three-hinged arches; from memory), so no zone is too thin, while a point
    load pushes it off by M/N, which fixes the geometric factor exactly (statically determinate)."""
    from formfind.model.geometry import Parabola
    from formfind.model.loads import LineLoad

    span, rise, depth = 20.0, 5.0, 0.6
    curve = Parabola(Chord(span), rise)
    axis = Axis.from_curve(curve, place_stations(curve, 41))
    sec = Section.rectangle(1.0, depth, elastic_modulus_kN_m2=1e6).at(axis)
    uniform = case_station_loads(LoadCase("w", (LineLoad(0.0, span, 10.0, 10.0),)), axis, sec)
    hinge = 20
    assert admissibility(axis, uniform, sec.depth_m, 1.0, SupportKind.THREE_HINGED, hinge)[0].geometric_factor == np.inf
    point = case_station_loads(LoadCase("p", (LineLoad(0.0, span, 10.0, 10.0), PointLoad(5.0, 20.0))), axis, sec)
    from formfind.analysis.statics import three_hinged

    r = three_hinged(axis, point, hinge)
    e = np.abs(r.M[0] / np.maximum(r.N[0], r.N_left[0]))  # both sides of a joint: the less compressed one
    expected = (0.5 * depth) / e.max()  # the zone must reach the largest eccentricity
    factor = admissibility(axis, point, sec.depth_m, 1.0, SupportKind.THREE_HINGED, hinge)[0].geometric_factor
    assert factor == pytest.approx(expected, rel=1e-3)  # the bisection's tolerance (1e-4) and N's side
