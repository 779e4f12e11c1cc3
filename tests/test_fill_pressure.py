"""The fill's horizontal pressure on an unreinforced ring (`fill_pressure_loads`, `[check] fill_pressure`)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import formfind
from formfind.errors import CaseError
from formfind.model.geometry import Axis
from formfind.model.loads import FillLoad, fill_pressure_loads
from formfind.model.section import Section

ROOT = Path(__file__).resolve().parents[1]


def test_pressure_on_a_buried_haunch_is_the_earth_pressure_triangle():
    """On a haunch wholly below the surface the horizontal force is K w (gamma (z_b^2 - z_t^2) / 2 + q (z_b
    - z_t)), the integral of a pressure K (gamma z + q) growing linearly with depth z (Rankine's earth
    pressure; common practice). The straight elements make the midpoint rule exact: 1e-12."""
    r, n = 5.0, 81
    phi = np.linspace(np.radians(150.0), np.radians(30.0), n)
    x, y = r * np.cos(phi), r * np.sin(phi)
    axis = Axis(x - x[0], y - y[0], phi - np.pi / 2)
    r = float(axis.x[n // 2])  # the crown's abscissa
    section = Section.rectangle(1.0, 0.5, elastic_modulus_kN_m2=5e6).at(axis)
    fill = FillLoad(unit_weight_kN_m3=18.0, width_m=1.5, surface_y_m=8.0, surcharge_kPa=10.0)
    K_left, K_right = 0.4, 0.7
    state = fill_pressure_loads(fill, axis, section, K_left, K_right, crown_x_m=r)
    force = state.dist[0, :, 0, 0]
    left, right = force[axis.x[1:] <= r + 1e-9].sum(), force[axis.x[:-1] >= r - 1e-9].sum()
    extrados = axis.y + 0.25 * np.cos(axis.theta)  # the face half the depth out along the normal
    crown_top = extrados[n // 2]

    def triangle(k: float, bottom: float) -> float:
        zb, zt = 8.0 - bottom, 8.0 - crown_top
        return k * 1.5 * (18.0 * (zb**2 - zt**2) / 2 + 10.0 * (zb - zt))

    assert left == pytest.approx(triangle(K_left, extrados[0]), rel=1e-12)
    assert right == pytest.approx(-triangle(K_right, extrados[-1]), rel=1e-12)
    assert np.all(state.dist[0, :, :, 1] == 0.0)  # horizontal only


def _culvert(extra: str, tmp_path) -> Path:
    text = (ROOT / "cases" / "masonry-culvert.toml").read_text()
    path = tmp_path / "culvert.toml"
    path.write_text(text.replace("\nunreinforced = true\n", f"\nunreinforced = true\n{extra}\n", 1))
    return path


def _collapse(path: Path) -> float:
    case = formfind.load_case(path)
    checks = formfind.check(case, formfind.analyse(case))
    return next(r.value for r in checks.rows if r.name == "thrust line: collapse factor")


def test_pressure_raises_the_collapse_factor_of_the_sway_mechanism(tmp_path):
    """The culvert's collapse under the axles is a four-hinge sway of the ring; the fill resists the haunch that
    moves into it, so the factor grows with the passive pressure mobilised there (at rest < partly passive <
    fully passive, and fully passive above no fill pressure at all; the symmetric at-rest pressure alone may
    move it either way), and without the key the results are today's."""
    none = _collapse(_culvert("", tmp_path))
    at_rest = _collapse(_culvert("fill_pressure = true", tmp_path))
    partly = _collapse(_culvert("fill_pressure = true\npassive_fraction = 0.25", tmp_path))
    fully = _collapse(_culvert("fill_pressure = true\npassive_fraction = 1.0", tmp_path))
    assert at_rest < partly < fully and none < fully
    off = _collapse(_culvert("fill_pressure = false\npassive_fraction = 1.0", tmp_path))
    assert off == none


@pytest.mark.parametrize("extra, text", [
    ("fill_pressure = true", "applies to an unreinforced ring"),
])
def test_fill_pressure_needs_a_ring_under_fill(tmp_path, extra, text):
    src = (ROOT / "cases" / "road-bridge.toml").read_text().replace("[check]\n", f"[check]\n{extra}\n", 1)
    path = tmp_path / "road.toml"
    path.write_text(src)
    with pytest.raises(CaseError, match=text):
        formfind.load_case(path)
    ring = (ROOT / "cases" / "masonry-culvert.toml").read_text()
    start = ring.index("  [[cases.loads]]\n  type = \"fill\"")
    end = ring.index("[[cases]]", start)
    no_fill = _culvert("fill_pressure = true", tmp_path).read_text().replace(ring[start:end], "")
    path.write_text(no_fill)
    with pytest.raises(CaseError, match="needs a fill load"):
        formfind.load_case(path)
