"""Options that drive a branch somewhere in formfind, gathered in one place.

Each enum's ``value`` is the spelling used in case files.
"""

from __future__ import annotations

from enum import StrEnum


class SupportKind(StrEnum):
    """How the arch is held at its springings (and whether it has a crown hinge)."""

    THREE_HINGED = "three_hinged"  # pins at both springings and one internal hinge
    TWO_HINGED = "two_hinged"  # pins at both springings
    FIXED = "fixed"  # both springings fully fixed
    TIED = "tied"  # pin at the left, roller at the right, an axial tie between the springings


class ShapeKind(StrEnum):
    """The family of a given arch axis."""

    PARABOLA = "parabola"
    CIRCLE = "circle"
    CATENARY = "catenary"  # the hanging-chain curve through the springings and the crown
    M_CURVE = "m_curve"  # the filled-spandrel catenary with a chosen load ratio m
    POINTS = "points"  # a smooth cubic spline through given points


class StationSpacing(StrEnum):
    """How the stations are spread along the axis."""

    X = "x"  # equal steps of horizontal distance
    ARC = "arc"  # equal steps of arc length (better for high arches)


class SectionVariation(StrEnum):
    """How the rib's section varies along the axis."""

    CONSTANT = "constant"
    SECANT = "secant"  # A and I grow with sec(theta) from their crown values (classic assumption)
    TAPERED = "tapered"  # rectangular rib, depth linear from crown to springings


class SectionProfile(StrEnum):
    """The shape of the rib's cross-section, its properties computed from its dimensions."""

    RECTANGLE = "rectangle"
    SOLID_CIRCLE = "solid_circle"
    TUBE = "tube"
    BOX = "box"
    I_SECTION = "i_section"


class Material(StrEnum):
    """Material presets of the rib (example values, each overridable by its own key)."""

    STEEL = "steel"
    CONCRETE = "concrete"
    GLULAM = "glulam"
    MASONRY = "masonry"


class LateralSupport(StrEnum):
    """How the springings hold the rib out of its plane."""

    FORK = "fork"  # no sideways movement, no twist; free to turn in plan and about the in-plane normal
    FIXED = "fixed"  # all three out-of-plane freedoms held


class ActionKind(StrEnum):
    """The nature of a load case, used by combinations and checks."""

    PERMANENT = "permanent"
    VARIABLE = "variable"
    ACCIDENTAL = "accidental"


class LoadDirection(StrEnum):
    """Direction of a line load or point load component."""

    DOWN = "down"  # vertical, positive downwards
    RIGHT = "right"  # horizontal, positive towards the right springing


class Projection(StrEnum):
    """What length a line load's intensity is measured per."""

    HORIZONTAL = "horizontal"  # kN per metre of horizontal projection
    VERTICAL = "vertical"  # kN per metre of vertical projection (e.g. wind on a rib)
    ARC = "arc"  # kN per metre along the axis


class FillReference(StrEnum):
    """The surface below which fill depth is measured."""

    EXTRADOS = "extrados"
    AXIS = "axis"


class TrainDirection(StrEnum):
    """Which way a moving train of axles crosses the span."""

    LEFT_TO_RIGHT = "left_to_right"
    RIGHT_TO_LEFT = "right_to_left"
    BOTH = "both"


class Objective(StrEnum):
    """What form finding minimises over the governing load states."""

    MINIMAX = "minimax"  # the largest |M| (kNm)
    RMS = "rms"  # the root mean square of M along the arch, integral of M^2 ds (kNm)
    OFFSET = "offset"  # the largest vertical distance |M| / H between thrust line and axis (m)
    MIN_DEPTH = "min_depth"  # the least rib depth keeping every thrust line in the kern (m)
    NEAREST = "nearest"  # the least deviation from a reference curve with |M| within a limit (m)


class LimitState(StrEnum):
    """What a combination is checked for."""

    ULTIMATE = "ultimate"  # strength and stability
    SERVICEABILITY = "serviceability"  # deflections (not strength)
    ACCIDENTAL = "accidental"  # strength and stability under an accidental action


class Deviation(StrEnum):
    """How the distance between an axis and a reference curve is measured (vertically, at the stations)."""

    LARGEST = "largest"  # the largest |y - y_ref| (m)
    RMS = "rms"  # the root mean square of y - y_ref along the arch, weighted by tributary length (m)


class Solver(StrEnum):
    """The convex solver of form finding's programs, called directly (no modelling layer)."""

    AUTO = "auto"  # HiGHS for programs re-solved step after step (warm starts), else Clarabel
    CLARABEL = "clarabel"  # interior point, LPs and QPs
    HIGHS = "highs"  # simplex for LPs, active set for QPs


class SolveStatus(StrEnum):
    """How a convex solve ended."""

    OPTIMAL = "optimal"
    INACCURATE = "optimal_inaccurate"  # a solution to reduced accuracy
    INFEASIBLE = "infeasible"
    UNBOUNDED = "unbounded"
    FAILED = "failed"  # a numerical failure or a limit reached without a solution


class ShapeMethod(StrEnum):
    """How form finding reached its axis (see `formfind.design.shape`)."""

    PER_STATION = "per-station exact"  # the separable minimax, station by station
    PROGRAM = "convex program"  # one exact convex program
    FIXED_POINT = "fixed point on the loads"  # exact programs on the loads of the previous axis
    SEQUENTIAL = "sequential convex (local)"  # trust-region sequential convex programming
    REFERENCE = "reference kept"  # nearest: the reference itself meets the limit and every constraint


class DrawingUnit(StrEnum):
    """Unit of a DXF drawing."""

    MM = "mm"
    M = "m"


class ReferenceUnit(StrEnum):
    """Unit of the coordinates in a reference curve's file."""

    MM = "mm"
    CM = "cm"
    M = "m"


class DxfVersion(StrEnum):
    """DXF versions formfind writes."""

    R2000 = "R2000"
    R2004 = "R2004"
    R2007 = "R2007"
    R2010 = "R2010"
    R2013 = "R2013"
    R2018 = "R2018"


class EccentricityLimit(StrEnum):
    """How far from the axis the thrust may act in a section check."""

    KERN = "kern"  # within the kern: no tension (W / A; depth / 6 for a rectangle)
    BOUNDARY = "boundary"  # within the section (depth / 2): a no-tension ring that has not yet hinged
    NONE = "none"  # no limit (reinforced or steel ribs: the stress check governs)


class SecondOrderMethod(StrEnum):
    """How moments are raised for second-order effects where a buckling factor is low."""

    P_DELTA = "p_delta"  # a geometrically nonlinear solve with the geometric stiffness, iterated
    AMPLIFICATION = "amplification"  # first-order moments times 1 / (1 - 1/alpha_cr)


class Verdict(StrEnum):
    """The outcome of a design check."""

    PASS = "pass"
    FAIL = "fail"
    INFO = "info"  # a reported value without a limit (thrust on the abutments, patterned effects)


class PointStatus(StrEnum):
    """How a point of a trade study ended."""

    OK = "ok"  # an axis was found and checked
    INFEASIBLE = "infeasible"  # form finding's constraints conflict at this point
    FAILED = "failed"  # another error (a mechanism, no convergence); the row's reason says which
