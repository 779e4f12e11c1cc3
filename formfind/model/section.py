"""The rib's cross-section: what the case file gives, and its properties at every station.

Units: area m2, second moment of area m4, depth m, elastic modulus kN/m2 (the case file gives MPa,
converted once here), unit weight kN/m3, thermal expansion 1/degC. Sections are symmetric about the
axis, so the elastic section modulus is W = I / (depth / 2).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from formfind.enums import Material, SectionProfile, SectionVariation
from formfind.model import schema
from formfind.model.geometry import Axis

KN_M2_PER_MPA = 1000.0


DEFAULT_EXPANSION_PER_C = 1.2e-5  # without a material: the thermal expansion of steel and concrete alike
DEFAULT_SHEAR_AREA_FACTOR = 5.0 / 6.0  # without a profile: the classic factor of a rectangle
DEFAULT_POISSON_RATIO = 0.2  # without a material: concrete's


@dataclass(frozen=True)
class Section:
    """The rib as described in a case file (crown values where the section varies).

    Attributes:
        area_m2: cross-section area A at the crown (m2).
        second_moment_m4: second moment of area I for bending in the arch's plane, at the crown (m4).
        depth_m: overall depth of the rib at the crown, measured normal to the axis (m).
        elastic_modulus_kN_m2: Young's modulus E (kN/m2).
        unit_weight_kN_m3: weight density of the rib (kN/m3), for self-weight.
        thermal_expansion_per_C: coefficient of thermal expansion (1/degC).
        variation: how A, I and depth vary along the axis.
        springing_depth_m: depth at the springings for a tapered rectangular rib (m).
        width_m: breadth of the rib (m); needed for ``TAPERED``.
        shear_area_factor: shear area As = factor * A, for frames with shear deformation.
        poisson_ratio: for the shear modulus where none is given.
        profile: the shape the properties were computed from (`formfind.model.profiles`), or None.
        material: the preset the material values came from, or None.
        wall_thickness_m, web_thickness_m, flange_thickness_m: the profile's walls (m), or None.
        lateral_second_moment_m4: I for bending out of the arch's plane (m4), or None if unknown.
        torsion_constant_m4: St Venant torsion constant J (m4), or None if unknown.
        warping_constant_m6: warping constant I_w (m6), or None if unknown.
        shear_modulus_given_kN_m2: G as given (or from the material), None: from E and Poisson's ratio.
    """

    area_m2: float
    second_moment_m4: float
    depth_m: float
    elastic_modulus_kN_m2: float
    unit_weight_kN_m3: float = 0.0
    thermal_expansion_per_C: float = DEFAULT_EXPANSION_PER_C
    variation: SectionVariation = schema.default(schema.SECTION, "variation")
    springing_depth_m: float | None = None
    width_m: float | None = None
    shear_area_factor: float = DEFAULT_SHEAR_AREA_FACTOR
    poisson_ratio: float = DEFAULT_POISSON_RATIO
    profile: SectionProfile | None = None
    material: Material | None = None
    wall_thickness_m: float | None = None
    web_thickness_m: float | None = None
    flange_thickness_m: float | None = None
    lateral_second_moment_m4: float | None = None
    torsion_constant_m4: float | None = None
    warping_constant_m6: float | None = None
    shear_modulus_given_kN_m2: float | None = None

    def __post_init__(self) -> None:
        for name in ("area_m2", "second_moment_m4", "depth_m", "elastic_modulus_kN_m2"):
            value = getattr(self, name)
            if not (np.isfinite(value) and value > 0):
                raise ValueError(f"{name} must be a positive finite number")
        if self.variation is SectionVariation.TAPERED and (
            self.springing_depth_m is None or self.width_m is None
        ):
            raise ValueError("a tapered rib needs springing_depth_m and width_m")

    @classmethod
    def rectangle(cls, width_m: float, depth_m: float, **kwargs: object) -> Section:
        """A solid rectangular rib: A = b h, I = b h^3 / 12."""
        return cls(
            area_m2=width_m * depth_m,
            second_moment_m4=width_m * depth_m**3 / 12.0,
            depth_m=depth_m,
            width_m=width_m,
            **kwargs,  # type: ignore[arg-type]
        )

    @property
    def shear_modulus_kN_m2(self) -> float:
        """G (kN/m2): as given (or the material's), else E / (2 (1 + nu))."""
        if self.shear_modulus_given_kN_m2 is not None:
            return self.shear_modulus_given_kN_m2
        return self.elastic_modulus_kN_m2 / (2.0 * (1.0 + self.poisson_ratio))

    def at(self, axis: Axis) -> SectionAlong:
        """The section's properties at every station of ``axis``."""
        n = axis.count
        ones = np.ones(n)
        if self.variation is SectionVariation.CONSTANT:
            area, inertia, depth = self.area_m2 * ones, self.second_moment_m4 * ones, self.depth_m * ones
        elif self.variation is SectionVariation.SECANT:
            sec = 1.0 / np.maximum(np.abs(np.cos(axis.theta)), 1e-3)
            area, inertia, depth = self.area_m2 * sec, self.second_moment_m4 * sec, self.depth_m * ones
        else:
            crown_x = crown_abscissa(axis)
            half = np.where(axis.x <= crown_x, crown_x - axis.x[0], axis.x[-1] - crown_x)
            frac = np.abs(axis.x - crown_x) / np.maximum(half, 1e-12)
            depth = self.depth_m + (float(self.springing_depth_m) - self.depth_m) * frac
            width = float(self.width_m)
            area, inertia = width * depth, width * depth**3 / 12.0
        return SectionAlong(
            area_m2=area,
            second_moment_m4=inertia,
            depth_m=depth,
            elastic_modulus_kN_m2=self.elastic_modulus_kN_m2 * ones,
            unit_weight_kN_m3=self.unit_weight_kN_m3 * ones,
            shear_area_m2=self.shear_area_factor * area,
            shear_modulus_kN_m2=self.shear_modulus_kN_m2 * ones,
            thermal_expansion_per_C=self.thermal_expansion_per_C,
        )


def crown_abscissa(axis: Axis) -> float:
    """The geometric crown (m): the top of the parabola through the highest station above the chord
    and its two neighbours, so that a symmetric axis has its crown at midspan whether or not a
    station stands there (two equal top stations otherwise tie, and rounding picked one)."""
    height = axis.y - np.interp(axis.x, axis.x[[0, -1]], axis.y[[0, -1]])
    i = int(np.argmax(height))
    if i == 0 or i == axis.count - 1:
        return float(axis.x[i])
    x0, x1, x2 = axis.x[i - 1:i + 2]
    h0, h1, h2 = height[i - 1:i + 2]
    # vertex of the parabola through the three points (divided differences)
    d1, d2 = (h1 - h0) / (x1 - x0), (h2 - h1) / (x2 - x1)
    curvature = (d2 - d1) / (x2 - x0)
    if curvature >= 0:
        return float(x1)
    vertex = 0.5 * (x0 + x1) - d1 / (2.0 * curvature)
    return float(np.clip(vertex, x0, x2))


@dataclass(frozen=True, eq=False)
class SectionAlong:
    """Section properties at every station (arrays of shape (stations,)), units as `Section`."""

    area_m2: np.ndarray
    second_moment_m4: np.ndarray
    depth_m: np.ndarray
    elastic_modulus_kN_m2: np.ndarray
    unit_weight_kN_m3: np.ndarray
    shear_area_m2: np.ndarray
    shear_modulus_kN_m2: np.ndarray
    thermal_expansion_per_C: float

    @property
    def section_modulus_m3(self) -> np.ndarray:
        """Elastic section modulus W = I / (depth / 2) (m3)."""
        return self.second_moment_m4 / (0.5 * self.depth_m)

    @property
    def kern_m(self) -> np.ndarray:
        """Kern half-width W / A (m): the largest eccentricity without tension (depth/6 for a rectangle)."""
        return self.section_modulus_m3 / self.area_m2

    @property
    def weight_kN_m(self) -> np.ndarray:
        """Self-weight per metre of axis (kN/m)."""
        return self.unit_weight_kN_m3 * self.area_m2
