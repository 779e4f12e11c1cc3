"""The case-file schema: every table and key, its type, unit, default and meaning.

One declaration serves three purposes: `read_table` validates a TOML table against it (unknown keys,
types, ranges, NaN/inf, "did you mean"), `reference_markdown` renders the key reference shipped as
docs/case-file.md, and the defaults filled in are reported back to the user.
"""

from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass
from enum import Enum
from typing import Any

from formfind.enums import (
    ActionKind,
    Deviation,
    DrawingUnit,
    DxfVersion,
    EccentricityLimit,
    FillReference,
    LateralSupport,
    LimitState,
    LoadDirection,
    Material,
    Objective,
    Projection,
    ReferenceUnit,
    SecondOrderMethod,
    SectionProfile,
    SectionVariation,
    ShapeKind,
    Solver,
    StationSpacing,
    SupportKind,
    TrainDirection,
)
from formfind.errors import CaseError

REQUIRED = object()
NAME_PATTERN = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.+-]{0,63}$")
MAX_STATIONS = 20001
MAX_LIST = 10000
MAX_TEXT = 4000  # characters of a free-text value
MAX_MAGNITUDE = 1e9  # no number in a case file is larger in magnitude (in its key's unit)
MAX_FACTOR = 1000.0  # a load factor beyond this is not a load factor
MAX_SPAN_M = 10_000.0  # the longest span formfind accepts (the longest arches built are near 600 m)
MAX_LOAD = 1e7  # kN, kN/m or kPa: beyond this no structure is meant
MAX_ROTATION = 0.02  # rad: imposed springing rotations beyond this leave linear theory
MAX_MOVEMENT_OF_SPAN = 0.02  # imposed springing movements beyond this fraction of the span, likewise
LINE = 120  # characters of a one-line value (title block fields)


@dataclass(frozen=True)
class Key:
    """One key of a table.

    ``kind`` is one of: "number", "integer", "string", "name", "date", "boolean", "numbers" (a list of
    numbers), "names" (a list of strings), "factors" (an inline table of name = number), or an Enum
    class (a choice).
    """

    name: str
    kind: Any
    doc: str
    unit: str = ""
    default: Any = REQUIRED
    minimum: float | None = None
    maximum: float | None = None
    positive: bool = False
    when: tuple[str, tuple[str, ...]] | None = None  # (other key, values for which this key applies)

    @property
    def required(self) -> bool:
        """True if the key has no default."""
        return self.default is REQUIRED


@dataclass(frozen=True)
class Table:
    """A table of the case file: its TOML header, what it is for, and its keys."""

    header: str
    doc: str
    keys: tuple[Key, ...]
    array: bool = False

    def key(self, name: str) -> Key:
        """The key called ``name``."""
        return next(k for k in self.keys if k.name == name)


def _choice_doc(enum: type[Enum]) -> str:
    return " | ".join(f'"{m.value}"' for m in enum)


CASE = Table(
    "case",
    "What the case is called and what it describes.",
    (
        Key("name", "name", "Short name; used for the output folder. Letters, digits, _ . + -"),
        Key("title", "string", "One-line title for reports.", default="", maximum=LINE),
        Key("description", "string", "Free text describing the scenario.", default=""),
        Key("project", "string", "Project name, for the drawing's title block and the report's sign-off.",
            default="", maximum=LINE),
        Key("job_number", "string", "Job or file number.", default="", maximum=LINE),
        Key("revision", "string", "Revision of the calculation and drawing, e.g. A or P1.", default="",
            maximum=LINE),
        Key("drawn_by", "string", "Who prepared it (initials or name).", default="", maximum=LINE),
        Key("checked_by", "string", "Who checked it; left blank for the checker to sign.", default="",
            maximum=LINE),
        Key("issue_date", "date", "Date of issue (2026-12-04); the outputs carry this date, not the day of the "
            "run, so that a rerun gives the same bytes. Default: none shown.", default=None),
    ),
)

GEOMETRY = Table(
    "geometry",
    "Span, rise, springing levels and the family of the given axis.",
    (
        Key("span_m", "number", "Horizontal distance between the springings, up to 10 km.", "m", positive=True,
            maximum=MAX_SPAN_M),
        Key(
            "rise_m",
            "number",
            "Height of the axis above the springing chord at midspan; rise/span must lie in 0.01..1.",
            "m",
            default=None,
            positive=True,
        ),
        Key("shape", ShapeKind, "Family of the given axis.", default=ShapeKind.PARABOLA.value),
        Key("springing_left_m", "number", "Level of the left springing.", "m", default=0.0),
        Key("springing_right_m", "number", "Level of the right springing.", "m", default=0.0),
        Key(
            "m",
            "number",
            "Load ratio springing/crown of the m-curve (> 1).",
            default=None,
            minimum=1.0,
            when=("shape", ("m_curve",)),
        ),
        Key(
            "points_x_m",
            "numbers",
            "Abscissae of the points the axis passes through, from 0 to the span.",
            "m",
            default=None,
            when=("shape", ("points",)),
        ),
        Key(
            "points_y_m",
            "numbers",
            "Ordinates of those points (the first and last are the springing levels).",
            "m",
            default=None,
            when=("shape", ("points",)),
        ),
    ),
)

SUPPORTS = Table(
    "supports",
    "How the arch is held.",
    (
        Key("kind", SupportKind, "Support system.", default=SupportKind.THREE_HINGED.value),
        Key(
            "hinge_x_m",
            "number",
            "Abscissa of the internal hinge; defaults to midspan.",
            "m",
            default=None,
            when=("kind", ("three_hinged",)),
        ),
        Key(
            "tie_area_m2",
            "number",
            "Cross-section area of the tie.",
            "m2",
            default=None,
            positive=True,
            when=("kind", ("tied",)),
        ),
        Key(
            "tie_modulus_MPa",
            "number",
            "Elastic modulus of the tie.",
            "MPa",
            default=None,
            positive=True,
            when=("kind", ("tied",)),
        ),
    ),
)

SECTION = Table(
    "section",
    "The rib: a profile by its dimensions (properties computed), or area_m2 and second_moment_m4 as typed "
    "(width_m alone: a solid rectangle); crown values where the section varies. A material gives example "
    "values of E, G, unit weight and expansion; a key given explicitly wins.",
    (
        Key("variation", SectionVariation, "How the section varies along the axis.",
            default=SectionVariation.CONSTANT.value),
        Key("profile", SectionProfile, "Shape of the cross-section, properties computed from its dimensions: "
            "rectangle (width_m x depth_m), solid_circle (diameter depth_m), tube (outer diameter depth_m, "
            "wall_thickness_m), box (outside width_m x depth_m, web_thickness_m, flange_thickness_m), i_section "
            "(flange width_m, depth_m, web_thickness_m, flange_thickness_m; web in the arch's plane). Not given: "
            "area_m2 and second_moment_m4 as typed.", default=None),
        Key("depth_m", "number", "Overall depth of the rib normal to the axis, in the arch's plane (a circle's "
            "or tube's outer diameter).", "m", positive=True),
        Key("width_m", "number", "Breadth of the rib (of the flanges of an I-section); alone, a solid rectangle "
            "(A = b h, I = b h^3/12).", "m", default=None, positive=True),
        Key("wall_thickness_m", "number", "Wall thickness of a tube.", "m", default=None, positive=True,
            when=("profile", ("tube",))),
        Key("web_thickness_m", "number", "Thickness of each web of a box, or of the web of an I-section.", "m",
            default=None, positive=True, when=("profile", ("box", "i_section"))),
        Key("flange_thickness_m", "number", "Thickness of each flange of a box or an I-section.", "m",
            default=None, positive=True, when=("profile", ("box", "i_section"))),
        Key("area_m2", "number", "Cross-section area (not with a profile).", "m2", default=None, positive=True),
        Key("second_moment_m4", "number", "Second moment of area for bending in the arch's plane (not with a "
            "profile).", "m4", default=None, positive=True),
        Key("lateral_second_moment_m4", "number", "Second moment of area for bending out of the arch's plane; "
            "computed from a profile.", "m4", default=None, positive=True),
        Key("torsion_constant_m4", "number", "St Venant torsion constant J; computed from a profile.", "m4",
            default=None, positive=True),
        Key("warping_constant_m6", "number", "Warping constant I_w; computed from a profile (zero for closed "
            "and solid shapes).", "m6", default=None, minimum=0.0),
        Key("springing_depth_m", "number", "Depth at the springings of a tapered rib.", "m",
            default=None, positive=True, when=("variation", ("tapered",))),
        Key("material", Material, "Example material values (E, G or Poisson's ratio, unit weight, thermal "
            "expansion): steel (E 210 GPa, 78.5 kN/m3), concrete (C30/37: E 33 GPa, 25 kN/m3), glulam (GL24h: "
            "E 11.5 GPa, G 0.65 GPa, 4.2 kN/m3), masonry (clay brick: E 5 GPa, 20 kN/m3). Examples from the "
            "usual standards, quoted from memory: take the governing code's values.", default=None),
        Key("elastic_modulus_MPa", "number", "Young's modulus of the rib; required unless a material gives it.",
            "MPa", default=None, positive=True),
        Key("shear_modulus_MPa", "number", "Shear modulus G; default: the material's, else E / (2 (1 + "
            "poisson_ratio)).", "MPa", default=None, positive=True),
        Key("unit_weight_kN_m3", "number", "Weight density of the rib, for self-weight; default: the "
            "material's, else 0.", "kN/m3", default=None, minimum=0.0),
        Key("thermal_expansion_per_C", "number", "Coefficient of thermal expansion; default: the material's, "
            "else 1.2e-5.", "1/degC", default=None, minimum=0.0),
        Key("shear_area_factor", "number", "Shear area As = factor x A; default: the profile's (Cowper's "
            "coefficient, or the webs' share), else 5/6.", default=None, positive=True, maximum=1.0),
        Key("poisson_ratio", "number", "Poisson's ratio, for the shear modulus; default: the material's, "
            "else 0.2.", default=None, minimum=0.0, maximum=0.5),
    ),
)

STATIONS = Table(
    "stations",
    "Where the axis is sampled. The hinge and the ends of line loads always get a station.",
    (
        Key("count", "integer", f"Number of stations, 3..{MAX_STATIONS}.", default=101, minimum=3,
            maximum=MAX_STATIONS),
        Key("spacing", StationSpacing, "Equal steps in x or in arc length.",
            default=StationSpacing.X.value),
    ),
)

ANALYSIS = Table(
    "analysis",
    "Options of the frame model and the buckling analysis.",
    (
        Key("shear_deformation", "boolean", "Include shear deformation in the frame elements.", default=False),
        Key("axially_rigid", "boolean", "Hold every element's length (no rib shortening; the classical "
            "inextensional assumption) by a constraint, not by a huge area, so the stiffness keeps its "
            "conditioning; the area still gives the stresses. Second-order moments are then amplified by "
            "1 / (1 - 1/alpha): a P-Delta solve needs the axial stiffness.",
            default=False),
        Key("buckling", "boolean", "Compute the in-plane buckling factor of every combination.", default=True),
        Key("accuracy", "number", "Largest estimated relative error of the frame's forces (condition of the "
            "stiffness x backward error of the solve) the checks accept; a rib made nearly rigid by a huge area "
            "(use axially_rigid instead) passes it and fails (1e-6: six good digits, common practice, no source).", default=1e-6,
            positive=True, maximum=0.1),
        Key("buckling_modes", "integer", "Number of buckling modes to find, 1..20.", default=4, minimum=1,
            maximum=20),
        Key("natural_modes", "integer", "Natural modes in the plane to find (frequencies, shapes, modal masses; "
            "mass from the permanent cases and the rib), 0..20; 0: none.", default=6, minimum=0, maximum=20),
        Key("pressure_follows_axis", "boolean",
            "Treat distributed loads as pressure that stays normal to the deflected axis when buckling "
            "(false: loads keep their direction, as gravity loads do).", default=False),
    ),
)

FIND = Table(
    "find",
    "Form finding: which axis, within the limits below, bends least under the governing load states. "
    "Springing levels are always kept; the span is the geometry's.",
    (
        Key("objective", Objective, "minimax: the largest |M| (kNm); rms: root mean square of M along the "
            "arch (kNm); offset: the largest vertical distance |M|/H between thrust line and axis (m); "
            "min_depth: the least rib depth keeping every thrust line inside the kern (m); nearest: the axis "
            "closest to a reference curve (reference_x_m / reference_y_m or reference_file) whose peak |M| stays "
            "within moment_limit_kNm (m).",
            default=Objective.MINIMAX.value),
        Key("reference_x_m", "numbers", "For nearest: abscissae of the reference curve from the left springing, "
            "increasing from 0 to the span; a smooth cubic spline passes through the points.", "m", default=None),
        Key("reference_y_m", "numbers", "For nearest: its ordinates, on the datum of the springing levels.", "m",
            default=None),
        Key("reference_file", "string", "For nearest, instead of the points: a CSV of x, y (m; a header line "
            "is allowed) or a DXF holding one polyline or spline, in the drawing's unit ($INSUNITS: mm, cm "
            "or m), placed so its left end lies on the left springing. Relative to the case file.",
            default=None),
        Key("reference_layer", "string", "For a DXF reference_file: the layer holding the curve (where it holds a "
            "polyline and a spline of one axis, as formfind's own drawing does, the polyline); default: the only "
            "curve in model space.", default=None, maximum=255),
        Key("reference_unit", ReferenceUnit, "Unit of the reference file's coordinates; default: metres for a "
            "CSV, the drawing's own unit for a DXF.", default=None),
        Key("moment_limit_kNm", "number", "For nearest: the largest |M| allowed under every governing state.",
            "kNm", default=None, positive=True, maximum=MAX_MAGNITUDE),
        Key("deviation", Deviation, "For nearest: largest (the largest vertical distance to the reference) or "
            "rms (its root mean square along the arch).", default=Deviation.LARGEST.value),
        Key("governing", "names", "Combinations or cases whose states govern; default: every ultimate and "
            "accidental combination (every case if there are no combinations).", default=None),
        Key("rise_min_m", "number", "Least rise above the springing chord at the crown; default: the "
            "geometry's rise (a fixed rise).", "m", default=None, positive=True),
        Key("rise_max_m", "number", "Greatest rise above the springing chord anywhere; default: the "
            "geometry's rise.", "m", default=None, positive=True),
        Key("symmetric", "boolean", "Keep the axis symmetric about midspan; default: symmetric exactly when the "
            "springings are level, the stations, supports and hinge symmetric and the governing loads mirror "
            "each other (the found axis says which it took).", default=None),
        Key("fair", "boolean", "Among the axes within fairness_tolerance of the optimum, return the fairest (least "
            "change of curvature along the arch): no kinks or flat runs the optimum does not need.", default=True),
        Key("fairness_tolerance", "number", "How much of the optimum a fair axis may give up (0.01: 1 % more "
            "bending; common practice, no source).", default=0.01, positive=True, maximum=0.5),
        Key("concave", "boolean", "Keep the axis concave (d2y/dx2 <= 0 everywhere). Funiculars of downward "
            "loads are; it also stops the optimiser bending an indeterminate rib locally to tune its "
            "redundants. Switch off for axes that must sag somewhere.", default=True),
        Key("clearance_x_m", "numbers", "Abscissae of a clearance line the intrados must stay above.", "m",
            default=None),
        Key("clearance_y_m", "numbers", "Its levels; the intrados is measured vertically.", "m", default=None),
        Key("envelope_x_m", "numbers", "Abscissae of a site limit the extrados must stay below.", "m",
            default=None),
        Key("envelope_y_m", "numbers", "Its levels; the extrados is measured vertically.", "m", default=None),
        Key("max_slope", "number", "Largest |dy/dx| of any element.", default=None, positive=True),
        Key("max_curvature_per_m", "number", "Largest |d2y/dx2| (smoothness).", "1/m", default=None,
            positive=True),
        Key("kern_fraction", "number", "For min_depth: the thrust line stays within this fraction of the "
            "depth, centred (1/3 = middle third).", default=1.0 / 3.0, positive=True, maximum=1.0),
        Key("solver", Solver, "Convex solver of the linear programs; auto: HiGHS (simplex) for the steps of "
            "the sequential method, each warm-started from the last, Clarabel (interior point) for one-off "
            "programs. Quadratic programs always go to Clarabel.", default=Solver.AUTO.value),
        Key("max_iterations", "integer", "Steps of the sequential method (shape-dependent loads, "
            "indeterminate arches, rise bounds, min_depth), 1..500.", default=60, minimum=1, maximum=500),
        Key("tolerance_m", "number", "The sequential method stops when no ordinate moves more than this; "
            "default: 1e-5 of the span.", "m", default=None, positive=True),
        Key("optimality_gap", "number", "The sequential method also stops when its first-order certificate "
            "puts the objective within this fraction of the best any nearby axis can do (1e-4: 0.01 %, far "
            "below what a load model resolves; common practice, no source).", default=1e-4, positive=True,
            maximum=0.1),
        Key("step_limit_m", "number", "Largest change of any ordinate in one iteration (indeterminate "
            "arches); default: a quarter of the rise.", "m", default=None, positive=True),
    ),
)

OUTPUTS = Table(
    "outputs",
    "Drawings and tables.",
    (
        Key("drawing_unit", DrawingUnit, "Unit of the DXF drawing (written to its header and noted on it).",
            default=DrawingUnit.MM.value),
        Key("dxf_version", DxfVersion, "DXF version of the drawing.", default=DxfVersion.R2010.value),
        Key("setting_out_interval_m", "number", "Spacing in x of the setting-out table's points.", "m",
            default=1.0, positive=True),
        Key("station_label_interval_m", "number", "Spacing in x of the labelled station ticks on the drawing.",
            "m", default=5.0, positive=True),
        Key("arc_tolerance_mm", "number", "The axis as the fewest tangent-continuous circular arcs within this "
            "distance of it (rolled steel, glulam laminated on radii): arcs.csv and the FF_ARCS layer of the "
            "drawing.", "mm", default=5.0, positive=True, maximum=1000.0),
    ),
)

CHECK = Table(
    "check",
    "Design checks of the axis under every combination. The limits are the user's, from the governing "
    "code; formfind ships none.",
    (
        Key("compression_limit_MPa", "number", "Largest compressive stress allowed at an extreme fibre.", "MPa",
            default=None, positive=True),
        Key("tension_limit_MPa", "number", "Largest tensile stress allowed at an extreme fibre (0: none).", "MPa",
            default=None, minimum=0.0),
        Key("eccentricity_limit", EccentricityLimit, "Where the thrust must act: within the kern, within the "
            "section, or anywhere.", default=EccentricityLimit.NONE.value),
        Key("min_buckling_factor", "number", "Least in-plane buckling factor of every combination.",
            default=1.0, positive=True),
        Key("second_order_below", "number", "Buckling factors below this amplify moments by "
            "1 / (1 - 1/alpha) (10 for elastic analysis is common practice).", default=10.0, positive=True),
        Key("imperfection_over_span", "number", "Amplitude of the initial imperfection, as a fraction of the span, "
            "given the shape of each combination's lowest in-plane buckling mode (sign adverse) before the "
            "checks' moments are found; 0: a perfect arch. The default 1/500 is an example, not a code value: "
            "take yours from the governing code.", default=0.002, minimum=0.0, maximum=0.05),
        Key("deflection_limit_ratio", "number", "The largest vertical deflection allowed under the serviceability "
            "combinations is span / this number (500: span/500, an example, not a code value).", default=500.0,
            positive=True, maximum=1e6),
        Key("pedestrian_bridge", "boolean", "Say where a natural frequency lies in the ranges in which walking "
            "people excite a footbridge (vertical and longitudinal, first and second harmonic).", default=False),
        Key("deck_width_m", "number", "Width of the walkway a crowd stands on, for the peak vertical acceleration of "
            "a footbridge under a resonant crowd (with pedestrian_bridge); not given: no acceleration check.", "m",
            default=None, positive=True, maximum=100.0),
        Key("crowd_density_per_m2", "number", "Pedestrians per square metre of walkway in the crowd that walks in "
            "step with a mode (0.5: a sparse crowd, an example).", "1/m2", default=0.5, positive=True, maximum=3.0),
        Key("damping_ratio", "number", "Modal damping as a fraction of critical, for the acceleration check "
            "(0.005 is an example for a welded steel rib; take yours from the guidance you design to).",
            default=0.005, positive=True, maximum=0.2),
        Key("acceleration_limit_m_s2", "number", "Largest peak vertical acceleration of the walkway allowed under "
            "the resonant crowd (1.0 is an example, not a code value).", "m/s2", default=1.0, positive=True,
            maximum=20.0),
        Key("second_order", SecondOrderMethod, "How second-order moments are found where a buckling factor "
            "is below second_order_below: a P-Delta solve on the deflected arch, or the amplification "
            "1 / (1 - 1/alpha).", default=SecondOrderMethod.P_DELTA.value),
        Key("patterned_load_kN_m", "number", "Intensity of a patterned live load (per horizontal metre, "
            "downwards) placed, station by station and effect by effect, wherever the influence line is "
            "adverse.", "kN/m", default=None, positive=True),
        Key("patterned_factors", "factors", "Inline table: combination (or case) name = factor on the "
            "patterned load added to it, e.g. { ULS = 1.5 }. The patterned load is always also reported "
            "on its own.", default=None),
        Key("unreinforced", "boolean", "The rib takes no tension (masonry, plain concrete): check that a "
            "line of thrust lies within the ring for every state (Heyman's safe theorem).", default=False),
        Key("min_geometric_factor", "number", "Least geometric factor of safety of an unreinforced rib: "
            "ring depth over the depth of the thinnest zone that still holds a line of thrust.",
            default=1.0, positive=True),
        Key("collapse_case", "string", "A variable load case (point or line loads, or an axle train) to "
            "raise until the unreinforced rib collapses, on top of the unfactored permanent cases.",
            default=""),
        Key("fill_pressure", "boolean", "An unreinforced ring under fill: the fill's horizontal pressure on the "
            "extrados acts in the thrust-line and collapse analyses, at rest (K0 = 1 - sin(phi), Jaky) on both "
            "haunches, and partly passive on the haunch a collapsing ring sways into (passive_fraction). Needs a "
            "fill load in a permanent case; false: no horizontal pressure.", default=False),
        Key("fill_friction_deg", "number", "Friction angle phi of the fill, for its pressure coefficients (30 is "
            "an example for a granular fill, common practice, no source).", "deg", default=30.0, positive=True,
            maximum=50.0),
        Key("passive_fraction", "number", "Fraction of the passive pressure above the at-rest one mobilised on "
            "the haunch that moves into the fill at collapse (the side away from the load): K = K0 + f (Kp - K0), "
            "Kp = (1 + sin(phi)) / (1 - sin(phi)) (Rankine).", default=0.0, minimum=0.0, maximum=1.0),
        Key("friction_coefficient", "number", "Friction coefficient of the joints of an unreinforced ring: "
            "some line of thrust within the ring must need no more than this ratio of shear to normal force at "
            "every joint (0.6 is an example, common practice for mortared masonry, no source).", default=0.6,
            positive=True, maximum=2.0),
        Key("min_collapse_factor", "number", "Least collapse load factor on collapse_case.", default=1.0,
            positive=True),
        Key("crushing_strength_MPa", "number", "Compressive strength of the masonry in the collapse analysis: a "
            "hinge turns about the middle of a stress block |N| / (strength x width) deep at its face, so weaker "
            "masonry collapses sooner; not given: infinite (the rigid-block assumption). Take it from tests or "
            "the code you assess to.", "MPa", default=None, positive=True, maximum=200.0),
    ),
)

LATERAL = Table(
    "lateral",
    "Out-of-plane buckling of the rib (lateral bending and twist): what holds it out of its plane. Checked "
    "for every ultimate and accidental combination where the rib's out-of-plane properties are known (a "
    "profile, a rectangle, or lateral_second_moment_m4 and torsion_constant_m4), unreinforced rings aside.",
    (
        Key("check", "boolean", "Check out-of-plane buckling (false: leave it to the designer's own model).",
            default=True),
        Key("springings", LateralSupport, "fork: the springings hold the rib sideways and against twist, free "
            "to turn in plan; fixed: they also hold those rotations.", default=LateralSupport.FORK.value),
        Key("plan_stiffness_kNm_rad", "number", "An elastic fork: the stiffness of each springing against the "
            "rib turning in plan (about the in-plane normal); not given: free to turn.", "kNm/rad", default=None,
            positive=True, when=("springings", ("fork",))),
        Key("brace_x_m", "numbers", "Abscissae of lateral braces (bracing to a deck, a roof plate or a twin "
            "rib); a brace holds the rib's axis sideways, not its twist.", "m", default=None),
        Key("brace_stiffness_kN_m", "number", "Lateral stiffness of each brace; not given: rigid braces.",
            "kN/m", default=None, positive=True),
        Key("deck_level_m", "number", "Level of a laterally held deck hung from the rib: every downward point "
            "load is taken as a hanger from the deck, which pulls the rib back as it sways (tension / hanger "
            "length). Not given: no hangers.", "m", default=None),
        Key("min_factor", "number", "Least out-of-plane buckling factor of every combination; default: "
            "[check] min_buckling_factor.", default=None, positive=True),
    ),
)

LONG_TERM = Table(
    "long_term",
    "Creep and shrinkage of a concrete rib: the long-term state of the permanent load. Coefficients are the "
    "designer's, from the governing code's models for the concrete, its age at loading and its exposure.",
    (
        Key("creep_coefficient", "number", "Final creep coefficient phi: creep strain over the elastic strain "
            "of a stress held from the age of loading; 0: no creep.", default=0.0, minimum=0.0, maximum=10.0),
        Key("ageing_coefficient", "number", "Ageing coefficient chi of the age-adjusted effective modulus "
            "E / (1 + chi phi), for stresses that build up gradually (0.8 is common practice).", default=0.8,
            minimum=0.0, maximum=1.0),
        Key("shrinkage_strain", "number", "Final free shrinkage strain of the rib, positive shortening (e.g. "
            "0.0003); acts as a uniform temperature drop of strain / thermal_expansion_per_C.", default=0.0,
            minimum=0.0, maximum=0.01),
    ),
)

STUDY = Table(
    "study",
    "A rise-span (and rib depth) trade study: every point finds its axis and checks it (formfind study). "
    "Abscissae of loads, the hinge, clearance and site lines scale with the span; heights and axle "
    "spacings do not.",
    (
        Key("rise_over_span", "numbers", "Rise/span ratios to study; default: the geometry's own.", default=None,
            minimum=0.01, maximum=1.0),
        Key("span_m", "numbers", "Spans to study; default: the geometry's own.", "m", default=None, positive=True),
        Key("depth_m", "numbers", "Rib depths to study (rectangular ribs); default: the section's own.", "m",
            default=None, positive=True),
    ),
)

CASES = Table(
    "cases",
    "Load cases, one [[cases]] table each, holding a list of [[cases.loads]].",
    (
        Key("name", "name", "Unique name of the load case. Letters, digits, _ . + -"),
        Key("action", ActionKind, "Nature of the action.", default=ActionKind.VARIABLE.value),
        Key("description", "string", "Free text.", default=""),
    ),
    array=True,
)

COMBINATIONS = Table(
    "combinations",
    "Named linear combinations of load cases. The factors shipped in examples are examples only: "
    "the governing code and its national annex give the real ones.",
    (
        Key("name", "name", "Unique name of the combination (distinct from case names)."),
        Key("factors", "factors", "Inline table: case name = factor, e.g. { dead = 1.35, live = 1.5 }."),
        Key("limit_state", LimitState, "What it is checked for: ultimate and accidental combinations for strength "
            "and stability, serviceability ones for deflection; default: accidental where it holds an accidental "
            "case, else ultimate.", default=None),
        Key("description", "string", "Free text.", default=""),
    ),
    array=True,
)

_X_FROM = Key("from_x_m", "number", "Start of the loaded length.", "m", default=None)
_X_TO = Key("to_x_m", "number", "End of the loaded length.", "m", default=None)

_SPREAD = Key("spread_slope", "number", "The load stands on the road surface and spreads through the fill to "
              "the extrados at this many metres horizontally per metre of depth on each side (0.5: 2 vertical to 1 "
              "horizontal, an example of common practice, no source); it reaches the ring as a uniform load over "
              "2 x slope x depth, the part beyond a springing going to the abutment. Needs a fill load in a "
              "permanent case (its surface is the road). Not given: the load acts on the axis.", default=None,
              minimum=0.0, maximum=2.0)

LOAD_TYPES: dict[str, Table] = {
    "point": Table(
        "cases.loads (type = \"point\")",
        "A concentrated force on the axis.",
        (
            Key("x_m", "number", "Abscissa of the load, 0..span.", "m"),
            Key("down_kN", "number", "Vertical component, downward positive.", "kN", default=0.0,
                minimum=-MAX_LOAD, maximum=MAX_LOAD),
            Key("right_kN", "number", "Horizontal component, positive to the right.", "kN", default=0.0,
                minimum=-MAX_LOAD, maximum=MAX_LOAD),
            _SPREAD,
        ),
    ),
    "line": Table(
        "cases.loads (type = \"line\")",
        "A line load varying linearly from from_x_m to to_x_m (defaults: the whole span).",
        (
            _X_FROM,
            _X_TO,
            Key("start_kN_m", "number", "Intensity at from_x_m.", "kN/m", minimum=-MAX_LOAD, maximum=MAX_LOAD),
            Key("end_kN_m", "number", "Intensity at to_x_m; defaults to start_kN_m.", "kN/m", default=None,
                minimum=-MAX_LOAD, maximum=MAX_LOAD),
            Key("direction", LoadDirection, "down: vertical, downward positive; right: horizontal.",
                default=LoadDirection.DOWN.value),
            Key("per", Projection, "Intensity per metre of horizontal projection, vertical projection, "
                "or arc length.", default=Projection.HORIZONTAL.value),
        ),
    ),
    "self_weight": Table(
        "cases.loads (type = \"self_weight\")",
        "The rib's own weight: unit_weight_kN_m3 x area per metre of axis.",
        (Key("factor", "number", "Multiplier on the self-weight.", default=1.0, minimum=-MAX_FACTOR,
             maximum=MAX_FACTOR),),
    ),
    "pressure": Table(
        "cases.loads (type = \"pressure\")",
        "A force normal to the axis per metre of axis, positive pushing from extrados to intrados.",
        (Key("inward_kN_m", "number", "Intensity.", "kN/m", minimum=-MAX_LOAD, maximum=MAX_LOAD), _X_FROM, _X_TO),
    ),
    "fill": Table(
        "cases.loads (type = \"fill\")",
        "Vertical fill load growing with depth: width x (unit weight x depth + surcharge). "
        "Give exactly one of surface_y_m and cover_m.",
        (
            Key("unit_weight_kN_m3", "number", "Weight density of the fill.", "kN/m3", positive=True,
                maximum=1000.0),
            Key("width_m", "number", "Breadth of fill carried by the rib.", "m", default=1.0, positive=True),
            Key("surface_y_m", "number", "Level of the fill surface.", "m", default=None),
            Key("cover_m", "number", "Depth of fill above the reference line at the crown.", "m",
                default=None, minimum=0.0),
            Key("measured_to", FillReference, "Depth measured down to the extrados or the axis.",
                default=FillReference.EXTRADOS.value),
            Key("surcharge_kPa", "number", "Uniform load on the fill surface.", "kPa", default=0.0,
                minimum=-MAX_LOAD, maximum=MAX_LOAD),
        ),
    ),
    "temperature": Table(
        "cases.loads (type = \"temperature\")",
        "Temperature change of the rib (forces only in indeterminate arches).",
        (
            Key("uniform_C", "number", "Uniform change, within +-200 degC.", "degC", default=0.0,
                minimum=-200.0, maximum=200.0),
            Key("difference_C", "number", "Extrados minus intrados temperature, within +-200 degC.", "degC",
                default=0.0, minimum=-200.0, maximum=200.0),
        ),
    ),
    "support_movement": Table(
        "cases.loads (type = \"support_movement\")",
        "Imposed movements of the springings (forces only in indeterminate arches).",
        (
            Key("spread_m", "number", "Increase of the span (right springing moves right).", "m", default=0.0),
            Key("settlement_left_m", "number", "Downward movement of the left springing.", "m", default=0.0),
            Key("settlement_right_m", "number", "Downward movement of the right springing.", "m", default=0.0),
            Key("rotation_left_rad", "number", "Anticlockwise rotation of a fixed left springing, within "
                "+-0.02 rad (linear theory).", "rad", default=0.0, minimum=-MAX_ROTATION, maximum=MAX_ROTATION),
            Key("rotation_right_rad", "number", "Anticlockwise rotation of a fixed right springing, within "
                "+-0.02 rad (linear theory).", "rad", default=0.0, minimum=-MAX_ROTATION, maximum=MAX_ROTATION),
        ),
    ),
    "axle_train": Table(
        "cases.loads (type = \"axle_train\")",
        "Vertical axle loads moved across the span; every position is one load state.",
        (
            Key("offsets_m", "numbers", "Distance of each axle behind the leading one (first 0).", "m"),
            Key("loads_kN", "numbers", "Axle loads, downward.", "kN", minimum=-MAX_LOAD, maximum=MAX_LOAD),
            Key("step_m", "number", "Step of the leading axle between positions.", "m", positive=True),
            Key("direction", TrainDirection, "Direction of travel.", default=TrainDirection.BOTH.value),
            _SPREAD,
        ),
    ),
}

TOP_TABLES: tuple[Table, ...] = (CASE, GEOMETRY, SUPPORTS, SECTION, STATIONS, ANALYSIS, FIND, CHECK, LATERAL,
                                 LONG_TERM, STUDY,
                                 OUTPUTS,
                                 CASES, COMBINATIONS)


def _fail(file: str, path: str, expected: str) -> CaseError:
    return CaseError(file, path, expected)


def suggest(name: str, allowed: list[str]) -> str:
    """ ' (did you mean "x"?)' for the closest allowed name, or ''."""
    close = difflib.get_close_matches(name, allowed, n=1, cutoff=0.6)
    return f' (did you mean "{close[0]}"?)' if close else ""


def _number(value: Any, file: str, path: str, key: Key) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise _fail(file, path, f"expected a number{_unit(key)}, got {describe(value)}")
    if isinstance(value, int) and abs(value) > MAX_MAGNITUDE:  # also too large for a float at all
        raise _fail(file, path, f"expected a number of magnitude at most {MAX_MAGNITUDE:g}{_unit(key)}, got "
                                f"{describe(value)}")
    value = float(value)
    if not math.isfinite(value):
        raise _fail(file, path, f"expected a finite number{_unit(key)}, got {value}")
    if abs(value) > MAX_MAGNITUDE:
        raise _fail(file, path, f"expected a number of magnitude at most {MAX_MAGNITUDE:g}{_unit(key)}, got "
                                f"{value:g}")
    _range(value, file, path, key)
    return value


def _range(value: float, file: str, path: str, key: Key) -> None:
    if key.positive and not value > 0:
        raise _fail(file, path, f"expected a positive number{_unit(key)}, got {value:g}")
    if key.minimum is not None and value < key.minimum:
        raise _fail(file, path, f"expected at least {key.minimum:g}{_unit(key)}, got {value:g}")
    if key.maximum is not None and value > key.maximum:
        raise _fail(file, path, f"expected at most {key.maximum:g}{_unit(key)}, got {value:g}")


def _unit(key: Key) -> str:
    return f" in {key.unit}" if key.unit else ""


def describe(value: Any) -> str:
    """A short account of a value for a message: never a huge repr (an integer of thousands of digits,
    a list nested thousands deep)."""
    if isinstance(value, bool):
        return f"bool {value}"
    if isinstance(value, int) and abs(value) >= 10**15:
        return f"an integer of about {int(value.bit_length() * 0.30103) + 1} digits"
    if isinstance(value, list):
        return f"a list of {len(value)} item(s)"
    if isinstance(value, dict):
        return f"a table of {len(value)} key(s)"
    text = repr(value[:41] if isinstance(value, str) else value)
    if len(text) > 40:
        text = text[:37] + "..."
    return f"{type(value).__name__} {text}"


def _convert(value: Any, key: Key, file: str, path: str) -> Any:
    kind = key.kind
    if isinstance(kind, type) and issubclass(kind, Enum):
        allowed = [m.value for m in kind]
        if not isinstance(value, str) or value not in allowed:
            hint = suggest(value, allowed) if isinstance(value, str) else ""
            raise _fail(file, path, f"expected one of {_choice_doc(kind)}, got {describe(value)}{hint}")
        return kind(value)
    if kind == "number":
        return _number(value, file, path, key)
    if kind == "integer":
        if isinstance(value, bool) or not isinstance(value, int):
            raise _fail(file, path, f"expected a whole number, got {describe(value)}")
        if abs(value) > MAX_MAGNITUDE:
            raise _fail(file, path, f"expected a whole number of magnitude at most {MAX_MAGNITUDE:g}, got "
                                    f"{describe(value)}")
        _range(float(value), file, path, key)
        return int(value)
    if kind == "date":
        import datetime

        if isinstance(value, datetime.date) and not isinstance(value, datetime.datetime):
            return value.isoformat()
        if isinstance(value, str):
            try:
                return datetime.date.fromisoformat(value).isoformat()
            except ValueError:
                pass
        raise _fail(file, path, f"expected a date such as 2026-12-04, got {describe(value)}")
    if kind in ("string", "name"):
        if not isinstance(value, str):
            raise _fail(file, path, f"expected a string, got {describe(value)}")
        longest = int(key.maximum) if key.maximum is not None else MAX_TEXT
        if len(value) > longest:
            raise _fail(file, path, f"expected at most {longest} characters, got {len(value)}")
        if kind == "name" and not NAME_PATTERN.match(value):
            raise _fail(
                file, path,
                f"expected a name of 1-64 letters, digits, _ . + - (starting with a letter or digit), got {value!r}",
            )
        return value
    if kind == "boolean":
        if not isinstance(value, bool):
            raise _fail(file, path, f"expected true or false, got {describe(value)}")
        return value
    if kind == "names":
        if not isinstance(value, list) or not value or not all(isinstance(v, str) for v in value):
            raise _fail(file, path, f"expected a non-empty list of names, got {describe(value)}")
        return tuple(value)
    if kind == "numbers":
        if not isinstance(value, list) or not value:
            raise _fail(file, path, f"expected a non-empty list of numbers{_unit(key)}, got {describe(value)}")
        if len(value) > MAX_LIST:
            raise _fail(file, path, f"expected at most {MAX_LIST} numbers, got {len(value)}")
        return tuple(_number(v, file, f"{path}[{i}]", key) for i, v in enumerate(value))
    if kind == "factors":
        if not isinstance(value, dict) or not value:
            raise _fail(file, path, f"expected an inline table of case name = factor, got {describe(value)}")
        plain = Key(key.name, "number", key.doc, minimum=-MAX_FACTOR, maximum=MAX_FACTOR)
        return tuple((str(k), _number(v, file, f"{path}.{k}", plain)) for k, v in value.items())
    raise ValueError(f"unknown key kind {kind!r}")  # a schema bug, not user input


def describe_value(value: Any, unit: str = "") -> str:
    """A key's value as a person reads it: six significant figures, true/false, names without quotes,
    and the unit (the defaults a report lists)."""
    if isinstance(value, Enum):
        text = str(value.value)
    elif isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, float):
        text = f"{value:.6g}"
    elif isinstance(value, tuple | list):
        text = "[" + ", ".join(describe_value(v) for v in value) + "]"
    elif isinstance(value, str):
        text = f'"{value}"'
    else:
        text = str(value)
    return f"{text} {unit}" if unit and not isinstance(value, bool | str | Enum) else text


def read_table(table: Any, spec: Table, file: str, path: str, extra: tuple[str, ...] = ()) -> dict[str, Any]:
    """Validate one TOML table against ``spec``; return its values with defaults filled in.

    ``extra`` names keys handled by the caller (such as a load's ``type``), allowed but not read.

    Raises:
        CaseError: for a non-table, an unknown key (with a suggestion), a missing required key, a
            wrong type, a value out of range, or a key that does not apply (``Key.when``).
    """
    if not isinstance(table, dict):
        raise _fail(file, path, f"expected a table, got {describe(table)}")
    allowed = [k.name for k in spec.keys] + list(extra)
    for name in table:
        if name not in allowed:
            raise _fail(file, f"{path}.{name}", f"unknown key{suggest(name, allowed)}")
    out: dict[str, Any] = {}
    for key in spec.keys:
        kpath = f"{path}.{key.name}"
        if key.name in table:
            out[key.name] = _convert(table[key.name], key, file, kpath)
        elif key.required:
            raise _fail(file, kpath, f"missing; expected {key.doc[0].lower()}{key.doc[1:].rstrip('.')}{_unit(key)}")
        else:
            default = key.default
            if isinstance(key.kind, type) and issubclass(key.kind, Enum) and default is not None:
                default = key.kind(default)
            out[key.name] = default
    for key in spec.keys:
        if key.when and key.name in table:
            other, values = key.when
            current = out.get(other)
            current = current.value if isinstance(current, Enum) else current
            if current not in values:
                raise _fail(
                    file, f"{path}.{key.name}",
                    f"applies only when {other} = {' or '.join(repr(v) for v in values)}",
                )
    return out


def reference_markdown() -> str:
    """The case-file key reference as Markdown (shipped as docs/case-file.md)."""
    lines = [
        "# Case-file reference",
        "",
        "Generated from `formfind/model/schema.py` (`formfind keys` prints it). A case file is TOML.",
        "Units are in the key names; unknown keys are errors. Coordinates: x to the right from the",
        "left springing, y up (m). Loads in kN, kN/m, kPa; moments in kNm; temperatures in degC.",
        "",
    ]
    for table in TOP_TABLES + tuple(LOAD_TYPES.values()):
        header = f"[[{table.header}]]" if table.array else f"[{table.header}]"
        if table.header.startswith("cases.loads"):
            header = f"[[{table.header.split(' ', 1)[0]}]] {table.header.split(' ', 1)[1]}"
        lines += [f"## {header}", "", table.doc, "", "| key | type | unit | default | meaning |",
                  "|---|---|---|---|---|"]
        for key in table.keys:
            kind = _choice_doc(key.kind).replace(" | ", ", ") if isinstance(key.kind, type) else key.kind
            if key.required:
                default = "required"
            elif key.default is None:
                default = "(see meaning)"
            else:
                default = f"`{key.default!r}`".replace("'", '"')
            meaning = key.doc
            if key.when:
                meaning += f" Only when {key.when[0]} = {' or '.join(key.when[1])}."
            lines.append(f"| `{key.name}` | {kind} | {key.unit or '-'} | {default} | {meaning} |")
        lines.append("")
    lines += [
        "Each `[[cases.loads]]` table has `type` = "
        + ", ".join(f'"{v}"' for v in LOAD_TYPES)
        + " and the keys of that type.",
        "",
    ]
    return "\n".join(lines)


def default(table: Table, name: str) -> Any:
    """The default of key ``name`` of ``table``, typed as the case's dataclasses hold it (a choice as its
    Enum, a list as a tuple): the one place a key's default is stated, which those dataclasses use."""
    key = table.key(name)
    if key.required:
        raise ValueError(f"key {table.header}.{name} has no default")  # a schema bug, not user input
    value = key.default
    if isinstance(key.kind, type) and issubclass(key.kind, Enum) and value is not None:
        return key.kind(value)
    if isinstance(value, list):
        return tuple(value)
    return value
