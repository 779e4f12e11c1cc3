"""Cross-section shapes by their dimensions, and material presets.

A rib is described as a designer thinks of it: a tube, a box, an I-section with its web in the plane of
the arch, a solid rectangle or circle. `properties` gives every property the analyses use, each from a
named formula:

- area A and the second moments: I about the lateral axis (bending in the arch's plane) and I_lat about
  the axis in the plane normal to the rib (bending out of it): the elementary formulas for rectangles
  and circles, composed (outer minus inner for the hollow shapes; flanges plus web for the I).
- shear area factor (A_s = factor x A, for shear deformation in the plane): Cowper, "The shear
  coefficient in Timoshenko's beam theory", J. Appl. Mech. 33 (1966): rectangle 10(1+v)/(12+11v),
  solid circle 6(1+v)/(7+6v), thin tube 2(1+v)/(4+3v); for the box and the I-section the webs' area
  over A (common practice, no source: the webs carry the shear).
- torsion constant J: circle and tube exactly the polar moment pi (D^4 - d^4)/32; the solid rectangle
  by Saint-Venant's series (Timoshenko & Goodier, Theory of Elasticity, torsion of a rectangular bar);
  the box by Bredt's thin-walled formula 4 A_m^2 / sum(s/t) on the wall midlines; the I-section as
  open thin walls, sum b t^3 / 3 (fillets left out).
- warping constant I_w: the doubly symmetric I-section t_f b^3 h_s^2 / 24 (h_s: distance between the
  flange midlines; e.g. Trahair, Flexural-Torsional Buckling of Structures); zero for the closed and
  solid shapes, whose warping is negligible (common practice, no source).

Dimensions in m, properties in m2, m4, m6. Material presets are EXAMPLES (values from memory, named
by the standard they are usually quoted from); every one can be overridden by its own key, and the
governing code's values must be used for design.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from formfind.enums import Material, SectionProfile


@dataclass(frozen=True)
class Properties:
    """The properties of one cross-section (m2, m4, m6; the shear area factor dimensionless)."""

    area_m2: float
    second_moment_m4: float
    lateral_second_moment_m4: float
    torsion_constant_m4: float
    warping_constant_m6: float
    shear_area_factor: float


@dataclass(frozen=True)
class MaterialPreset:
    """Example properties of a material: E and G in MPa, unit weight kN/m3, expansion 1/degC."""

    elastic_modulus_MPa: float
    shear_modulus_MPa: float | None  # None: from Poisson's ratio
    poisson_ratio: float
    unit_weight_kN_m3: float
    thermal_expansion_per_C: float
    source: str


MATERIALS: dict[Material, MaterialPreset] = {
    # EN 1993-1-1 3.2.6 (E, v, alpha) and EN 1991-1-1 Annex A (unit weight); from memory
    Material.STEEL: MaterialPreset(210_000.0, None, 0.3, 78.5, 1.2e-5, "structural steel, EN 1993-1-1 3.2.6"),
    # C30/37: E_cm of EN 1992-1-1 Table 3.1, v and alpha 3.1.3; reinforced concrete 25 kN/m3 (EN 1991-1-1)
    Material.CONCRETE: MaterialPreset(33_000.0, None, 0.2, 25.0, 1.0e-5, "concrete C30/37, EN 1992-1-1 Table 3.1"),
    # GL24h: E_0,mean 11 500 MPa and G_mean 650 MPa (EN 14080), mean density 420 kg/m3; alpha along the
    # grain 5e-6 (common practice, no source)
    Material.GLULAM: MaterialPreset(11_500.0, 650.0, 0.0, 4.2, 5.0e-6, "glued laminated timber GL24h, EN 14080"),
    # brickwork: E = 1000 f_k with f_k = 5 MPa (EN 1996-1-1 3.7.2), alpha of clay masonry 6e-6
    # (EN 1996-1-1 Table 3.8), 20 kN/m3 (EN 1991-1-1 Annex A)
    Material.MASONRY: MaterialPreset(5_000.0, None, 0.2, 20.0, 6.0e-6, "clay brick masonry, EN 1996-1-1 3.7.2"),
}


def rectangle_torsion_constant(long_m: float, short_m: float, terms: int = 50) -> float:
    """Saint-Venant's torsion constant of a solid rectangle a x b (a >= b), m4:
    J = a b^3 / 3 [1 - (192 / pi^5) (b / a) sum over odd n of tanh(n pi a / (2 b)) / n^5]
    (Timoshenko & Goodier, Theory of Elasticity; the series converges as 1/n^5)."""
    a, b = max(long_m, short_m), min(long_m, short_m)
    total = sum(math.tanh(n * math.pi * a / (2.0 * b)) / n**5 for n in range(1, 2 * terms, 2))
    return a * b**3 / 3.0 * (1.0 - 192.0 / math.pi**5 * (b / a) * total)


def cowper(profile: SectionProfile, poisson_ratio: float) -> float:
    """Cowper's shear coefficient of a solid rectangle, a solid circle or a thin tube (module docstring)."""
    v = poisson_ratio
    if profile is SectionProfile.RECTANGLE:
        return 10.0 * (1.0 + v) / (12.0 + 11.0 * v)
    if profile is SectionProfile.SOLID_CIRCLE:
        return 6.0 * (1.0 + v) / (7.0 + 6.0 * v)
    return 2.0 * (1.0 + v) / (4.0 + 3.0 * v)


def properties(profile: SectionProfile, depth_m: float, width_m: float | None = None,
               wall_thickness_m: float | None = None, web_thickness_m: float | None = None,
               flange_thickness_m: float | None = None, poisson_ratio: float = 0.3) -> Properties:
    """The properties of ``profile`` (module docstring). ``depth_m`` is the overall depth in the arch's
    plane (the outer diameter of a circle or tube); ``width_m`` the breadth (of the flanges of an I).

    Raises:
        ValueError: if a dimension the profile needs is missing or the walls do not fit (the case file
            reader turns this into a message naming the key).
    """
    d = depth_m
    if profile is SectionProfile.SOLID_CIRCLE or profile is SectionProfile.TUBE:
        if profile is SectionProfile.TUBE:
            if wall_thickness_m is None:
                raise ValueError("wall_thickness_m: a tube needs its wall thickness")
            if not wall_thickness_m < 0.5 * d:
                raise ValueError(f"wall_thickness_m: expected less than half the diameter ({0.5 * d:g} m)")
            inner = d - 2.0 * wall_thickness_m
        else:
            inner = 0.0
        area = math.pi * (d**2 - inner**2) / 4.0
        second = math.pi * (d**4 - inner**4) / 64.0
        return Properties(area, second, second, 2.0 * second, 0.0, cowper(profile, poisson_ratio))
    if width_m is None:
        raise ValueError(f"width_m: a {profile.value.replace('_', ' ')} needs its width")
    b = width_m
    if profile is SectionProfile.RECTANGLE:
        return Properties(b * d, b * d**3 / 12.0, d * b**3 / 12.0, rectangle_torsion_constant(b, d), 0.0,
                          cowper(profile, poisson_ratio))
    if web_thickness_m is None or flange_thickness_m is None:
        raise ValueError(f"web_thickness_m: a {profile.value.replace('_', ' ')} needs web_thickness_m and "
                         "flange_thickness_m")
    tw, tf = web_thickness_m, flange_thickness_m
    if profile is SectionProfile.BOX:
        if not (2.0 * tw < b and 2.0 * tf < d):
            raise ValueError("web_thickness_m: the walls of the box do not fit inside its width and depth")
        area = b * d - (b - 2.0 * tw) * (d - 2.0 * tf)
        second = (b * d**3 - (b - 2.0 * tw) * (d - 2.0 * tf) ** 3) / 12.0
        lateral = (d * b**3 - (d - 2.0 * tf) * (b - 2.0 * tw) ** 3) / 12.0
        bm, hm = b - tw, d - tf  # wall midlines
        torsion = 4.0 * (bm * hm) ** 2 / (2.0 * bm / tf + 2.0 * hm / tw)
        return Properties(area, second, lateral, torsion, 0.0, 2.0 * tw * (d - 2.0 * tf) / area)
    if not (tw < b and 2.0 * tf < d):
        raise ValueError("web_thickness_m: the web and flanges of the I-section do not fit its width and depth")
    web = d - 2.0 * tf
    area = 2.0 * b * tf + web * tw
    second = (b * d**3 - (b - tw) * web**3) / 12.0
    lateral = 2.0 * tf * b**3 / 12.0 + web * tw**3 / 12.0
    torsion = (2.0 * b * tf**3 + (d - tf) * tw**3) / 3.0  # web counted to the flange midlines
    h_s = d - tf
    warping = tf * b**3 * h_s**2 / 24.0
    return Properties(area, second, lateral, torsion, warping, web * tw / area)
