"""A Case written back as its case file (`formfind.model.writer`, `Case.to_toml`): the round trip
file -> Case -> file -> Case is the identity for every shipped case and every valid case of the corpus."""

from __future__ import annotations

import dataclasses
import tomllib
from enum import Enum
from pathlib import Path

import numpy as np
import pytest

from formfind.model.case import load_case, parse_case

ROOT = Path(__file__).resolve().parents[1]
SHIPPED = sorted((ROOT / "cases").glob("*.toml"))

# A case that sets as many keys as one case can hold, most away from their defaults (scenario of our own).
EVERYTHING = """
[case]
name = "all-keys"
title = "Every key"
description = "A tapered tied rib with every kind of load."
project = "Test"
job_number = "T-1"
revision = "B"
drawn_by = "ab"
checked_by = "cd"
issue_date = 2026-12-04
[geometry]
span_m = 40.0
rise_m = 9.0
shape = "m_curve"
m = 2.5
springing_left_m = 0.0
springing_right_m = 0.0
[supports]
kind = "tied"
tie_area_m2 = 0.004
tie_modulus_MPa = 200000.0
[section]
variation = "tapered"
depth_m = 0.8
springing_depth_m = 1.1
width_m = 0.5
elastic_modulus_MPa = 33000.0
unit_weight_kN_m3 = 25.0
thermal_expansion_per_C = 1.0e-5
shear_area_factor = 0.85
poisson_ratio = 0.18
[stations]
count = 61
spacing = "arc"
[analysis]
shear_deformation = true
buckling_modes = 3
natural_modes = 2
pressure_follows_axis = true
[find]
objective = "rms"
governing = ["ULS"]
rise_min_m = 8.0
rise_max_m = 10.0
fair = false
concave = false
clearance_x_m = [5.0, 35.0]
clearance_y_m = [2.0, 2.0]
max_slope = 2.0
max_curvature_per_m = 0.2
solver = "clarabel"
max_iterations = 80
tolerance_m = 1.0e-5
optimality_gap = 1.0e-5
step_limit_m = 0.5
[check]
compression_limit_MPa = 25.0
tension_limit_MPa = 2.5
eccentricity_limit = "boundary"
min_buckling_factor = 2.5
second_order_below = 8.0
imperfection_over_span = 0.001
deflection_limit_ratio = 400.0
second_order = "amplification"
patterned_load_kN_m = 5.0
patterned_factors = { ULS = 1.5 }
[lateral]
springings = "fixed"
brace_x_m = [10.0, 20.0, 30.0]
brace_stiffness_kN_m = 500.0
deck_level_m = -1.0
min_factor = 2.5
[long_term]
creep_coefficient = 2.2
ageing_coefficient = 0.75
shrinkage_strain = 0.00025
[study]
rise_over_span = [0.2, 0.25]
span_m = [40.0]
[outputs]
drawing_unit = "m"
dxf_version = "R2018"
setting_out_interval_m = 0.5
station_label_interval_m = 4.0
arc_tolerance_mm = 3.0
[[cases]]
name = "dead"
action = "permanent"
description = "Rib and deck."
  [[cases.loads]]
  type = "self_weight"
  factor = 1.05
  [[cases.loads]]
  type = "line"
  from_x_m = 2.0
  to_x_m = 38.0
  start_kN_m = 30.0
  end_kN_m = 35.0
  [[cases.loads]]
  type = "line"
  start_kN_m = 2.0
  direction = "right"
  per = "arc"
  [[cases.loads]]
  type = "point"
  x_m = 12.0
  down_kN = 50.0
  right_kN = -5.0
  [[cases.loads]]
  type = "pressure"
  inward_kN_m = 3.0
  from_x_m = 0.0
  to_x_m = 20.0
  [[cases.loads]]
  type = "fill"
  unit_weight_kN_m3 = 19.0
  width_m = 2.0
  cover_m = 0.5
  measured_to = "axis"
  surcharge_kPa = 10.0
[[cases]]
name = "heat"
  [[cases.loads]]
  type = "temperature"
  uniform_C = 25.0
  difference_C = -5.0
[[cases]]
name = "spread"
action = "accidental"
  [[cases.loads]]
  type = "support_movement"
  spread_m = 0.01
  settlement_left_m = 0.002
  settlement_right_m = -0.001
  rotation_left_rad = 0.001
  rotation_right_rad = -0.001
[[cases]]
name = "truck"
  [[cases.loads]]
  type = "axle_train"
  offsets_m = [0.0, 1.5, 4.0]
  loads_kN = [60.0, 60.0, 40.0]
  step_m = 2.0
  direction = "left_to_right"
[[combinations]]
name = "ULS"
factors = { dead = 1.35, heat = 0.9, truck = 1.5 }
description = "Example factors only."
[[combinations]]
name = "SLS"
factors = { dead = 1.0, truck = 1.0 }
limit_state = "serviceability"
[[combinations]]
name = "ACC"
factors = { dead = 1.0, spread = 1.0 }
[[combinations]]
name = "ACC-as-ULS"
factors = { dead = 1.0, spread = 1.0 }
limit_state = "ultimate"
"""
IGNORED = {"source", "defaults_used"}  # where the case came from, and which keys it left out


def same(a, b, path="case") -> None:
    """Assert two values of a Case are equal: dataclasses field by field, arrays exactly."""
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), path
        for f in dataclasses.fields(a):
            if f.name in IGNORED:
                continue
            same(getattr(a, f.name), getattr(b, f.name), f"{path}.{f.name}")
    elif isinstance(a, np.ndarray):
        assert np.array_equal(a, b), path
    elif isinstance(a, tuple | list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and isinstance(b, float) and np.isnan(a):
        assert np.isnan(b), path
    else:
        assert a == b and (type(a) is type(b) or isinstance(a, Enum) or {type(a), type(b)} <= {int, float}), \
            f"{path}: {a!r} != {b!r}"


@pytest.fixture(scope="module")
def everything(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("writer") / "all-keys.toml"
    path.write_text(EVERYTHING)
    return path


@pytest.mark.parametrize("name", [p.name for p in SHIPPED] + ["all-keys.toml"])
def test_round_trip_is_the_identity(name, tmp_path, everything):
    path = everything if name == "all-keys.toml" else ROOT / "cases" / name
    case = load_case(path)
    text = case.to_toml()
    written = tmp_path / path.name
    written.write_text(text)
    again = load_case(written)
    same(case, again)
    assert again.to_toml() == text  # and the written form is stable


def test_written_file_leaves_defaults_out_and_keeps_units():
    case = load_case(ROOT / "cases" / "footbridge.toml")
    table = tomllib.loads(case.to_toml("Written back by a test.\nSecond line."))
    assert table["section"]["material"] == "steel" and "elastic_modulus_MPa" not in table["section"]  # preset's
    assert table["section"]["profile"] == "tube" and "area_m2" not in table["section"]  # computed from it
    assert table["check"]["compression_limit_MPa"] == pytest.approx(250.0)  # MPa, as the file says
    road = tomllib.loads(load_case(ROOT / "cases" / "road-bridge.toml").to_toml())
    assert road["section"]["elastic_modulus_MPa"] == pytest.approx(35000.0)  # overrides the preset, in MPa
    assert "analysis" not in table  # every analysis setting is its default
    assert "variation" not in table["section"]
    text = case.to_toml("Written back by a test.\nSecond line.")
    assert text.startswith("# Written back by a test.\n# Second line.\n")


def test_a_changed_case_is_written_as_it_now_is():
    case = load_case(ROOT / "cases" / "road-bridge.toml")
    changed = dataclasses.replace(case, geometry=dataclasses.replace(case.geometry, rise_m=10.0))
    again = parse_case(tomllib.loads(changed.to_toml()), "<written>")
    same(changed, again)  # the find's rise bounds stay the case's own 12 m: written as such
    assert again.geometry.rise_m == 10.0 and again.find.rise_max_m == 12.0


NEAREST = """
[case]
name = "drawn"
[geometry]
span_m = 20.0
shape = "points"
points_x_m = [0.0, 5.0, 10.0, 15.0, 20.0]
points_y_m = [0.0, 3.0, 4.0, 3.2, 0.5]
[supports]
kind = "fixed"
[section]
depth_m = 0.4
area_m2 = 0.02
second_moment_m4 = 4.0e-4
elastic_modulus_MPa = 210000.0
[find]
objective = "nearest"
moment_limit_kNm = 80.0
deviation = "rms"
{reference}
envelope_x_m = [0.0, 20.0]
envelope_y_m = [6.0, 6.0]
[[cases]]
name = "deck"
  [[cases.loads]]
  type = "line"
  start_kN_m = 10.0
"""


@pytest.mark.parametrize("reference", ["points", "file"])
def test_round_trip_of_a_drawn_axis_and_a_reference_curve(tmp_path, reference):
    (tmp_path / "curve.csv").write_text("x,y\n0,0\n4,2.6\n10,4.1\n16,2.9\n20,0.5\n")
    lines = ('reference_x_m = [0.0, 10.0, 20.0]\nreference_y_m = [0.0, 4.2, 0.5]' if reference == "points"
             else 'reference_file = "curve.csv"')
    path = tmp_path / "drawn.toml"
    path.write_text(NEAREST.replace("{reference}", lines))
    case = load_case(path)
    elsewhere = tmp_path / "saved"
    elsewhere.mkdir()
    written = elsewhere / "drawn.toml"
    written.write_text(case.to_toml())
    same(case, load_case(written))  # a file reference is named by its absolute path: found from anywhere
