"""Read a case file (TOML) into a validated, frozen `Case`.

Nothing downstream sees raw dictionaries. Every error is a `CaseError` naming the file, the key path
(``cases[1].loads[0].x_m``) and what was expected. The keys, units and defaults are declared in
`formfind.model.schema` and listed in docs/case-file.md.

Example:
    >>> from formfind.model.case import load_case
    >>> case = load_case("cases/footbridge.toml")        # doctest: +SKIP
    >>> case.axis().count                                # doctest: +SKIP
    101
"""

from __future__ import annotations

import logging
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

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
    Objective,
    Projection,
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
from formfind.model import schema
from formfind.model.geometry import (
    Axis,
    Chord,
    CircularSegment,
    Curve,
    MCurve,
    Parabola,
    PointSpline,
    catenary,
    place_stations,
)
from formfind.model.loads import (
    AxleTrain,
    Combination,
    FillLoad,
    FillSpread,
    LineLoad,
    Load,
    LoadCase,
    NormalPressure,
    PointLoad,
    SelfWeight,
    SupportMovement,
    Temperature,
)
from formfind.model.reference import ReferenceCurve, ReferenceCurveError, curve_from_points, fit_to_span, read_reference
from formfind.model.section import KN_M2_PER_MPA, Section

log = logging.getLogger(__name__)

MAX_FILE_BYTES = 1_000_000
MAX_TRAIN_POSITIONS = 5000
MAX_LOADS = 5000  # loads over all cases
MAX_STATES = 20000  # load states over all cases and combinations (train positions expanded)
RISE_RATIO_RANGE = (0.01, 1.0)


@dataclass(frozen=True)
class Geometry:
    """Span and axis family. Lengths in m; ``rise_m`` above the springing chord at midspan."""

    span_m: float
    rise_m: float
    shape: ShapeKind
    springing_left_m: float = 0.0
    springing_right_m: float = 0.0
    m: float | None = None
    points_x_m: tuple[float, ...] = ()
    points_y_m: tuple[float, ...] = ()

    def curve(self) -> Curve:
        """The smooth axis this geometry describes."""
        if self.shape is ShapeKind.POINTS:
            return PointSpline(self.points_x_m, self.points_y_m)
        chord = Chord(self.span_m, self.springing_left_m, self.springing_right_m)
        if self.shape is ShapeKind.PARABOLA:
            return Parabola(chord, self.rise_m)
        if self.shape is ShapeKind.CIRCLE:
            return CircularSegment(chord, self.rise_m)
        if self.shape is ShapeKind.CATENARY:
            return catenary(chord, self.rise_m)
        return MCurve(chord, self.rise_m, m=float(self.m))


@dataclass(frozen=True)
class Supports:
    """Support system. ``hinge_x_m`` (m) for three-hinged arches; tie properties for tied arches."""

    kind: SupportKind
    hinge_x_m: float | None = None
    tie_area_m2: float | None = None
    tie_modulus_kN_m2: float | None = None

    def hinge_at(self, span_m: float) -> float | None:
        """The crown hinge's abscissa (m) of a three-hinged arch: as given, else midspan (the one place
        that default is set); None for other support kinds."""
        if self.kind is not SupportKind.THREE_HINGED:
            return None
        return self.hinge_x_m if self.hinge_x_m is not None else 0.5 * span_m


@dataclass(frozen=True)
class StationSettings:
    """How many stations and how they are spaced."""

    count: int = schema.default(schema.STATIONS, "count")
    spacing: StationSpacing = schema.default(schema.STATIONS, "spacing")


@dataclass(frozen=True)
class AnalysisSettings:
    """Options of the frame model and the buckling analysis (see `formfind.model.schema.ANALYSIS`)."""

    shear_deformation: bool = schema.default(schema.ANALYSIS, "shear_deformation")
    axially_rigid: bool = schema.default(schema.ANALYSIS, "axially_rigid")
    buckling: bool = schema.default(schema.ANALYSIS, "buckling")
    accuracy: float = schema.default(schema.ANALYSIS, "accuracy")
    buckling_modes: int = schema.default(schema.ANALYSIS, "buckling_modes")
    natural_modes: int = schema.default(schema.ANALYSIS, "natural_modes")
    pressure_follows_axis: bool = schema.default(schema.ANALYSIS, "pressure_follows_axis")


@dataclass(frozen=True)
class CheckSettings:
    """Design-check limits (see `formfind.model.schema.CHECK`); stresses in kN/m2 inside."""

    compression_limit_kN_m2: float | None = None
    tension_limit_kN_m2: float | None = None
    eccentricity_limit: EccentricityLimit = schema.default(schema.CHECK, "eccentricity_limit")
    min_buckling_factor: float = schema.default(schema.CHECK, "min_buckling_factor")
    second_order_below: float = schema.default(schema.CHECK, "second_order_below")
    imperfection_over_span: float = schema.default(schema.CHECK, "imperfection_over_span")
    deflection_limit_ratio: float = schema.default(schema.CHECK, "deflection_limit_ratio")
    pedestrian_bridge: bool = schema.default(schema.CHECK, "pedestrian_bridge")
    deck_width_m: float | None = schema.default(schema.CHECK, "deck_width_m")
    crowd_density_per_m2: float = schema.default(schema.CHECK, "crowd_density_per_m2")
    damping_ratio: float = schema.default(schema.CHECK, "damping_ratio")
    acceleration_limit_m_s2: float = schema.default(schema.CHECK, "acceleration_limit_m_s2")
    second_order: SecondOrderMethod = schema.default(schema.CHECK, "second_order")
    patterned_load_kN_m: float | None = None
    patterned_factors: tuple[tuple[str, float], ...] = ()
    unreinforced: bool = schema.default(schema.CHECK, "unreinforced")
    min_geometric_factor: float = schema.default(schema.CHECK, "min_geometric_factor")
    collapse_case: str = schema.default(schema.CHECK, "collapse_case")
    fill_pressure: bool = schema.default(schema.CHECK, "fill_pressure")
    fill_friction_deg: float = schema.default(schema.CHECK, "fill_friction_deg")
    passive_fraction: float = schema.default(schema.CHECK, "passive_fraction")
    friction_coefficient: float = schema.default(schema.CHECK, "friction_coefficient")
    min_collapse_factor: float = schema.default(schema.CHECK, "min_collapse_factor")
    crushing_strength_kN_m2: float | None = None


@dataclass(frozen=True)
class OutputSettings:
    """Drawing and table settings (see `formfind.model.schema.OUTPUTS`)."""

    drawing_unit: DrawingUnit = schema.default(schema.OUTPUTS, "drawing_unit")
    dxf_version: DxfVersion = schema.default(schema.OUTPUTS, "dxf_version")
    setting_out_interval_m: float = schema.default(schema.OUTPUTS, "setting_out_interval_m")
    station_label_interval_m: float = schema.default(schema.OUTPUTS, "station_label_interval_m")
    arc_tolerance_mm: float = schema.default(schema.OUTPUTS, "arc_tolerance_mm")


@dataclass(frozen=True)
class LongTermSettings:
    """Creep and shrinkage of a concrete rib (see `formfind.model.schema.LONG_TERM`); dimensionless.

    ``creep_coefficient`` phi, ``ageing_coefficient`` chi, ``shrinkage_strain`` positive shortening.
    """

    creep_coefficient: float = schema.default(schema.LONG_TERM, "creep_coefficient")
    ageing_coefficient: float = schema.default(schema.LONG_TERM, "ageing_coefficient")
    shrinkage_strain: float = schema.default(schema.LONG_TERM, "shrinkage_strain")

    @property
    def active(self) -> bool:
        """True when the rib creeps or shrinks."""
        return self.creep_coefficient > 0 or self.shrinkage_strain > 0


@dataclass(frozen=True)
class LateralSettings:
    """Out-of-plane restraints and limit (see `formfind.model.schema.LATERAL`); lengths in m, kN/m."""

    check: bool = schema.default(schema.LATERAL, "check")
    springings: LateralSupport = schema.default(schema.LATERAL, "springings")
    plan_stiffness_kNm_rad: float | None = None
    brace_x_m: tuple[float, ...] = ()
    brace_stiffness_kN_m: float | None = None
    deck_level_m: float | None = None
    min_factor: float | None = None


@dataclass(frozen=True)
class StudySettings:
    """A trade study's ranges (see `formfind.model.schema.STUDY`); empty: the case's own value."""

    rise_over_span: tuple[float, ...] = ()
    span_m: tuple[float, ...] = ()
    depth_m: tuple[float, ...] = ()


@dataclass(frozen=True)
class FindSettings:
    """Form-finding settings (see `formfind.model.schema.FIND`). Lengths in m.

    ``governing`` names combinations or cases; empty means every combination (every case if none).
    ``clearance`` and ``envelope`` are polylines ((x, y), ...) or empty.
    """

    objective: Objective = schema.default(schema.FIND, "objective")
    governing: tuple[str, ...] = ()
    rise_min_m: float | None = schema.default(schema.FIND, "rise_min_m")
    rise_max_m: float | None = schema.default(schema.FIND, "rise_max_m")
    symmetric: bool | None = schema.default(schema.FIND, "symmetric")
    fair: bool = schema.default(schema.FIND, "fair")
    fairness_tolerance: float = schema.default(schema.FIND, "fairness_tolerance")
    concave: bool = schema.default(schema.FIND, "concave")
    clearance: tuple[tuple[float, float], ...] = ()
    envelope: tuple[tuple[float, float], ...] = ()
    max_slope: float | None = schema.default(schema.FIND, "max_slope")
    max_curvature_per_m: float | None = schema.default(schema.FIND, "max_curvature_per_m")
    kern_fraction: float = schema.default(schema.FIND, "kern_fraction")
    solver: Solver = schema.default(schema.FIND, "solver")
    max_iterations: int = schema.default(schema.FIND, "max_iterations")
    tolerance_m: float | None = schema.default(schema.FIND, "tolerance_m")
    step_limit_m: float | None = schema.default(schema.FIND, "step_limit_m")
    optimality_gap: float = schema.default(schema.FIND, "optimality_gap")
    reference: ReferenceCurve | None = None
    moment_limit_kNm: float | None = schema.default(schema.FIND, "moment_limit_kNm")
    deviation: Deviation = schema.default(schema.FIND, "deviation")


HINGE_MARGIN_OF_SPAN = 0.01  # a crown hinge at least this fraction of the span from either springing
MAX_SETTING_OUT_POINTS = 10_000  # setting-out table rows at most (the interval's lower bound)
MAX_LABELS = 1_000  # labelled station ticks on the drawing at most


@dataclass(frozen=True)
class Document:
    """Who and what the calculation is for (see `formfind.model.schema.CASE`): the drawing's title block
    and the report's sign-off. Empty strings where not given; ``issue_date`` ISO (YYYY-MM-DD) or ""."""

    project: str = schema.default(schema.CASE, "project")
    job_number: str = schema.default(schema.CASE, "job_number")
    revision: str = schema.default(schema.CASE, "revision")
    drawn_by: str = schema.default(schema.CASE, "drawn_by")
    checked_by: str = schema.default(schema.CASE, "checked_by")
    issue_date: str = ""


@dataclass(frozen=True)
class Case:
    """A validated case file.

    Attributes:
        name: short name, safe as a folder name.
        source: the file it was read from ("" if built in code).
        defaults_used: key paths that were not in the file and took their default.
    """

    name: str
    title: str
    description: str
    geometry: Geometry
    supports: Supports
    section: Section
    stations: StationSettings
    cases: tuple[LoadCase, ...]
    combinations: tuple[Combination, ...]
    analysis: AnalysisSettings = AnalysisSettings()
    find: FindSettings = FindSettings()
    outputs: OutputSettings = OutputSettings()
    check: CheckSettings = CheckSettings()
    study: StudySettings = StudySettings()
    long_term: LongTermSettings = LongTermSettings()
    lateral: LateralSettings = LateralSettings()
    source: str = ""
    defaults_used: tuple[str, ...] = ()
    document: Document = Document()

    @property
    def tie_EA_kN(self) -> float | None:
        """Axial stiffness of the tie (kN), for tied arches."""
        s = self.supports
        if s.tie_area_m2 is None or s.tie_modulus_kN_m2 is None:
            return None
        return s.tie_area_m2 * s.tie_modulus_kN_m2

    def limit_state(self, group: str) -> LimitState:
        """The limit state a combination is checked for (a load case on its own: ultimate)."""
        for c in self.combinations:
            if c.name == group:
                return c.limit_state
        return LimitState.ULTIMATE

    def curve(self) -> Curve:
        """The smooth given axis."""
        return self.geometry.curve()

    def required_stations(self) -> tuple[float, ...]:
        """Abscissae (m) that must be stations: the hinge and the ends of ranged loads."""
        req: list[float] = []
        if self.supports.kind is SupportKind.THREE_HINGED and self.supports.hinge_x_m is not None:
            req.append(self.supports.hinge_x_m)
        for lc in self.cases:
            for ld in lc.loads:
                if isinstance(ld, LineLoad):
                    req += [ld.from_x_m, ld.to_x_m]
                elif isinstance(ld, NormalPressure):
                    req += [v for v in (ld.from_x_m, ld.to_x_m) if v is not None]
        return tuple(req)

    def axis(self, curve: Curve | None = None) -> Axis:
        """The axis sampled at the case's stations; ``curve`` replaces the given axis if passed."""
        curve = curve or self.curve()
        x = place_stations(curve, self.stations.count, self.stations.spacing, self.required_stations())
        return Axis.from_curve(curve, x)

    def to_toml(self, header: str = "") -> str:
        """This case as the text of a case file (`formfind.model.writer`): defaults left out, units as
        the case file's keys say; ``header`` becomes comment lines at the top."""
        from formfind.model.writer import case_toml

        return case_toml(self, header)

    def hinge_station(self, axis: Axis) -> int:
        """Index of the station at the crown hinge of a three-hinged arch."""
        xh = self.supports.hinge_at(axis.span_m)
        xh = 0.5 * axis.span_m if xh is None else xh
        return int(np.argmin(np.abs(axis.x - xh)))


# ------------------------------------------------------------------------------------- reading
def load_case(path: str | Path) -> Case:
    """Read and validate a case file.

    Raises:
        CaseError: if the file is missing, unreadable, too large, not UTF-8, not valid TOML, or
            invalid in any key.
    """
    return parse_case(read_case_table(path), str(path))


def read_case_table(path: str | Path) -> dict[str, Any]:
    """Read a case file's TOML document, not yet validated (`parse_case` validates it).

    Raises:
        CaseError: if the file is missing, unreadable, too large, not UTF-8 or not valid TOML.
    """
    import os
    import stat

    if not isinstance(path, str | Path) or (isinstance(path, str) and not path):
        from formfind.errors import ArgumentError

        raise ArgumentError(f"read_case_table: path: expected a file path (str or Path), got {type(path).__name__}")
    p = Path(path)
    file = str(path)
    try:
        # open without blocking (a FIFO with no writer would wait for ever) and look before reading:
        # only a regular file is read, and never past the size limit (/dev/zero is endless)
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise CaseError(file, "", "file not found") from None
    except IsADirectoryError:
        raise CaseError(file, "", "expected a case file, got a directory") from None
    except OSError as exc:
        raise CaseError(file, "", f"cannot be read ({exc.strerror})") from None
    try:
        mode = os.fstat(fd).st_mode
        if stat.S_ISDIR(mode):
            raise CaseError(file, "", "expected a case file, got a directory")
        if not stat.S_ISREG(mode):
            raise CaseError(file, "", "expected a regular file, got a device, pipe or socket")
        with os.fdopen(fd, "rb", closefd=False) as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise CaseError(file, "", f"cannot be read ({exc.strerror})") from None
    finally:
        os.close(fd)
    if len(raw) > MAX_FILE_BYTES:
        raise CaseError(file, "", f"file is larger than {MAX_FILE_BYTES} bytes; case files are limited to "
                        f"{MAX_FILE_BYTES} bytes")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError(file, "", f"not UTF-8 text (bad byte at offset {exc.start})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(file, "", f"not valid TOML: {exc}") from None
    except RecursionError:
        raise CaseError(file, "", "arrays or tables are nested too deep to read") from None
    return data


def parse_case(data: dict[str, Any], file: str = "<case>") -> Case:
    """Validate an already-parsed TOML document into a `Case`.

    Raises:
        CaseError: if any table or key is missing, unknown, of the wrong type or out of range.
    """
    if not isinstance(file, str):
        from formfind.errors import ArgumentError

        raise ArgumentError(f"parse_case: file: expected the name of the file (str), got {type(file).__name__}")
    if not isinstance(data, dict):
        raise CaseError(file, "", f"expected a TOML document (a table of tables), got {type(data).__name__}")
    if _depth(data) > MAX_NESTING:
        raise CaseError(file, "", f"arrays or tables are nested deeper than {MAX_NESTING} levels; a case file needs "
                        "at most 4")
    return _parse_case(data, file)


MAX_NESTING = 8


def _depth(value: Any, level: int = 0) -> int:
    """How deep lists and tables nest (stops counting past ``MAX_NESTING``; never recurses further)."""
    if level > MAX_NESTING:
        return level
    if isinstance(value, dict):
        return max((_depth(v, level + 1) for v in value.values()), default=level + 1)
    if isinstance(value, list):
        return max((_depth(v, level + 1) for v in value), default=level + 1)
    return level


def _parse_case(data: dict[str, Any], file: str) -> Case:
    top_names = [t.header for t in schema.TOP_TABLES]
    for name in data:
        if name not in top_names:
            raise CaseError(file, name, f"unknown table{schema.suggest(name, top_names)}")
    defaults: list[str] = []

    def section(spec: schema.Table, required: bool = True) -> dict[str, Any]:
        if spec.header not in data:
            if required and any(k.required for k in spec.keys):
                raise CaseError(file, spec.header, f"missing table [{spec.header}]")
            table: dict[str, Any] = {}
        else:
            table = data[spec.header]
        out = schema.read_table(table, spec, file, spec.header)
        defaults.extend(
            f"{spec.header}.{k.name} = {schema.describe_value(out[k.name], k.unit)}"
            for k in spec.keys
            if k.name not in table and not k.required and k.default is not None and k.default != ""
        )
        return out

    meta = section(schema.CASE)
    geometry = _geometry(section(schema.GEOMETRY), file)
    supports = _supports(section(schema.SUPPORTS, required=False), geometry, file)
    rib = _section(section(schema.SECTION), file, defaults)
    stations = section(schema.STATIONS, required=False)
    settings = section(schema.ANALYSIS, required=False)
    find_raw = section(schema.FIND, required=False)
    outputs_raw = section(schema.OUTPUTS, required=False)
    check_raw = section(schema.CHECK, required=False)
    study_raw = section(schema.STUDY, required=False)
    long_term_raw = section(schema.LONG_TERM, required=False)
    lateral_raw = section(schema.LATERAL, required=False)
    cases = _cases(data.get("cases"), geometry, file)
    combinations = _combinations(data.get("combinations"), cases, file)
    _limits(cases, combinations, geometry, file)
    _warn_idle_fill(cases, geometry, file)
    find = _find(find_raw, geometry, rib, supports, cases, combinations, file)
    return Case(
        name=meta["name"],
        title=meta["title"],
        description=meta["description"],
        geometry=geometry,
        supports=supports,
        section=rib,
        stations=StationSettings(stations["count"], stations["spacing"]),
        cases=cases,
        combinations=combinations,
        analysis=AnalysisSettings(**settings),
        find=find,
        outputs=_outputs(outputs_raw, geometry, file),
        check=CheckSettings(
            compression_limit_kN_m2=None if check_raw["compression_limit_MPa"] is None
            else check_raw["compression_limit_MPa"] * KN_M2_PER_MPA,
            tension_limit_kN_m2=None if check_raw["tension_limit_MPa"] is None
            else check_raw["tension_limit_MPa"] * KN_M2_PER_MPA,
            eccentricity_limit=check_raw["eccentricity_limit"],
            min_buckling_factor=check_raw["min_buckling_factor"],
            second_order_below=check_raw["second_order_below"],
            imperfection_over_span=check_raw["imperfection_over_span"],
            deflection_limit_ratio=check_raw["deflection_limit_ratio"],
            pedestrian_bridge=check_raw["pedestrian_bridge"],
            deck_width_m=check_raw["deck_width_m"],
            crowd_density_per_m2=check_raw["crowd_density_per_m2"],
            damping_ratio=check_raw["damping_ratio"],
            acceleration_limit_m_s2=check_raw["acceleration_limit_m_s2"],
            second_order=check_raw["second_order"],
            patterned_load_kN_m=check_raw["patterned_load_kN_m"],
            patterned_factors=_patterned_factors(check_raw, cases, combinations, file),
            unreinforced=check_raw["unreinforced"],
            min_geometric_factor=check_raw["min_geometric_factor"],
            collapse_case=_collapse_case(check_raw, cases, file),
            fill_pressure=_fill_pressure(check_raw, cases, file),
            fill_friction_deg=check_raw["fill_friction_deg"],
            passive_fraction=check_raw["passive_fraction"],
            friction_coefficient=check_raw["friction_coefficient"],
            min_collapse_factor=check_raw["min_collapse_factor"],
            crushing_strength_kN_m2=_crushing_strength(check_raw, rib, file),
        ),
        study=StudySettings(*(tuple(study_raw[k] or ()) for k in ("rise_over_span", "span_m", "depth_m"))),
        long_term=LongTermSettings(**long_term_raw),
        lateral=_lateral(lateral_raw, geometry, file),
        source=file,
        defaults_used=tuple(defaults),
        document=Document(meta["project"], meta["job_number"], meta["revision"], meta["drawn_by"],
                          meta["checked_by"], meta["issue_date"] or ""),
    )


def _crushing_strength(check: dict[str, Any], rib: Section, file: str) -> float | None:
    strength = check["crushing_strength_MPa"]
    if strength is None:
        return None
    if not (check["unreinforced"] and check["collapse_case"]):
        raise CaseError(file, "check.crushing_strength_MPa", "applies to the collapse of an unreinforced ring "
                        "(unreinforced = true and a collapse_case)")
    if rib.width_m is None:
        raise CaseError(file, "check.crushing_strength_MPa", "needs section.width_m (the width the stress block "
                        "spreads over)")
    return strength * KN_M2_PER_MPA


def _fill_pressure(check: dict[str, Any], cases: tuple[LoadCase, ...], file: str) -> bool:
    if not check["fill_pressure"]:
        return False
    if not check["unreinforced"]:
        raise CaseError(file, "check.fill_pressure", "applies to an unreinforced ring (unreinforced = true)")
    if not any(isinstance(ld, FillLoad) for c in cases if c.action is ActionKind.PERMANENT for ld in c.loads):
        raise CaseError(file, "check.fill_pressure", "needs a fill load (type = \"fill\") in a permanent case")
    return True


def _lateral(raw: dict[str, Any], geometry: Geometry, file: str) -> LateralSettings:
    braces = tuple(raw["brace_x_m"] or ())
    for i, x in enumerate(braces):
        _within(x, geometry.span_m, file, f"lateral.brace_x_m[{i}]")
    if raw["brace_stiffness_kN_m"] is not None and not braces:
        raise CaseError(file, "lateral.brace_stiffness_kN_m", "applies only with brace_x_m (where the braces are)")
    return LateralSettings(raw["check"], raw["springings"], raw["plan_stiffness_kNm_rad"], braces,
                           raw["brace_stiffness_kN_m"], raw["deck_level_m"], raw["min_factor"])


def _geometry(g: dict[str, Any], file: str) -> Geometry:
    shape: ShapeKind = g["shape"]
    span = g["span_m"]
    if shape is ShapeKind.POINTS:
        if g["rise_m"] is not None:
            raise CaseError(file, "geometry.rise_m", "must not be given for shape = \"points\" (the points fix the rise)")
        xs, ys = g["points_x_m"], g["points_y_m"]
        if xs is None or ys is None:
            raise CaseError(file, "geometry.points_x_m", "shape = \"points\" needs points_x_m and points_y_m")
        if len(xs) != len(ys) or len(xs) < 3:
            raise CaseError(file, "geometry.points_y_m", f"expected as many ordinates as abscissae (>= 3), got {len(ys)} and {len(xs)}")
        if xs[0] != 0.0 or abs(xs[-1] - span) > 1e-9 * span or any(b <= a for a, b in zip(xs, xs[1:], strict=False)):
            raise CaseError(file, "geometry.points_x_m", f"expected strictly increasing abscissae from 0 to the span {span:g} m")
        chord = np.interp(xs, [0.0, span], [ys[0], ys[-1]])
        rise = float(np.max(np.asarray(ys) - chord))
        if g["springing_left_m"] != 0.0 or g["springing_right_m"] != 0.0:
            raise CaseError(file, "geometry.springing_left_m", "must not be given for shape = \"points\" (the first and last points are the springings)")
        geometry = Geometry(span, rise, shape, ys[0], ys[-1], None, xs, ys)
    else:
        if g["rise_m"] is None:
            raise CaseError(file, "geometry.rise_m", "missing; expected the rise of the axis above the springing chord in m")
        if shape is ShapeKind.M_CURVE and (g["m"] is None or not g["m"] > 1.0):
            raise CaseError(file, "geometry.m", "shape = \"m_curve\" needs m > 1 (the springing/crown load ratio)")
        rise = g["rise_m"]
        if shape is ShapeKind.CIRCLE and rise > 0.5 * span * (1 + 1e-12):
            raise CaseError(file, "geometry.rise_m", f"a circular arch rises at most half its span ({0.5 * span:g} m), got {rise:g} m")
        geometry = Geometry(span, rise, shape, g["springing_left_m"], g["springing_right_m"], g["m"])
    lo, hi = RISE_RATIO_RANGE
    ratio = geometry.rise_m / span
    if not lo <= ratio <= hi:
        raise CaseError(file, "geometry.rise_m", f"rise/span = {ratio:.3g} is outside practice; expected {lo:g} to {hi:g}")
    return geometry


def _warn_idle_fill(cases: tuple[LoadCase, ...], geometry: Geometry, file: str) -> None:
    """Say so when a fill's surface lies below every point of the arch: it then adds no load at all."""
    lowest = min(geometry.springing_left_m, geometry.springing_right_m)
    for case in cases:
        for k, ld in enumerate(case.loads):
            if isinstance(ld, FillLoad) and ld.surface_y_m is not None and ld.surface_y_m <= lowest:
                log.warning("%s: case %r, load %d: the fill's surface (%g m) lies below the whole arch (lowest "
                            "springing %g m): it adds no load", file, case.name, k, ld.surface_y_m, lowest)


def _outputs(o: dict[str, Any], geometry: Geometry, file: str) -> OutputSettings:
    """Output settings, their intervals bounded against the span so a drawing or table stays a size
    a person can use."""
    span = geometry.span_m
    for key, most in (("setting_out_interval_m", MAX_SETTING_OUT_POINTS), ("station_label_interval_m", MAX_LABELS)):
        if o[key] < span / most:
            raise CaseError(file, f"outputs.{key}", f"expected at least {span / most:.4g} m (span / {most}: at most "
                            f"{most} points), got {o[key]:g}")
    return OutputSettings(**o)


def _supports(s: dict[str, Any], geometry: Geometry, file: str) -> Supports:
    kind: SupportKind = s["kind"]
    span = geometry.span_m
    hinge = s["hinge_x_m"]
    if kind is SupportKind.THREE_HINGED:
        hinge = Supports(kind, hinge).hinge_at(span)
        margin = HINGE_MARGIN_OF_SPAN * span
        if not margin <= hinge <= span - margin:
            raise CaseError(file, "supports.hinge_x_m", f"expected a hinge strictly inside the span, at least "
                            f"{HINGE_MARGIN_OF_SPAN:.0%} of it from either springing ({margin:.4g}..{span - margin:.4g} "
                            f"m; a hinge at a springing makes a two-hinged arch), got {hinge:g}")
    tie_e = None
    if kind is SupportKind.TIED:
        if s["tie_area_m2"] is None or s["tie_modulus_MPa"] is None:
            raise CaseError(file, "supports.tie_area_m2", "a tied arch needs tie_area_m2 and tie_modulus_MPa")
        tie_e = s["tie_modulus_MPa"] * KN_M2_PER_MPA
    return Supports(kind, hinge, s["tie_area_m2"], tie_e)


def _section(s: dict[str, Any], file: str, defaults: list[str] | None = None) -> Section:
    from formfind.model.profiles import MATERIALS, properties
    from formfind.model.section import DEFAULT_EXPANSION_PER_C, DEFAULT_POISSON_RATIO, DEFAULT_SHEAR_AREA_FACTOR

    variation: SectionVariation = s["variation"]
    profile, material = s["profile"], s["material"]
    area, inertia, width, depth = s["area_m2"], s["second_moment_m4"], s["width_m"], s["depth_m"]
    preset = MATERIALS.get(material) if material is not None else None

    def chosen(key: str, from_preset: float | None, fallback: float | None) -> float | None:
        if s[key] is not None:
            return s[key]
        value = from_preset if from_preset is not None else fallback
        if defaults is not None and value is not None:
            origin = f"the {material.value} preset" if from_preset is not None else "default"
            defaults.append(f"section.{key} = {value:g} ({origin})")
        return value

    modulus = chosen("elastic_modulus_MPa", preset.elastic_modulus_MPa if preset else None, None)
    if modulus is None:
        raise CaseError(file, "section.elastic_modulus_MPa", "missing; expected Young's modulus of the rib in MPa, "
                        "or a material")
    poisson = chosen("poisson_ratio", preset.poisson_ratio if preset else None, DEFAULT_POISSON_RATIO)
    shear = chosen("shear_modulus_MPa", preset.shear_modulus_MPa if preset else None, None)
    lateral, torsion, warping = s["lateral_second_moment_m4"], s["torsion_constant_m4"], s["warping_constant_m6"]
    factor = s["shear_area_factor"]
    if profile is not None:
        for key, value in (("area_m2", area), ("second_moment_m4", inertia)):
            if value is not None:
                raise CaseError(file, f"section.{key}", f"computed from profile = \"{profile.value}\"; leave it out "
                                "(or the profile, to give it as typed)")
        try:
            props = properties(profile, depth, width, s["wall_thickness_m"], s["web_thickness_m"],
                               s["flange_thickness_m"], poisson)
        except ValueError as exc:
            key, _, why = str(exc).partition(": ")
            raise CaseError(file, f"section.{key}", why) from None
        area, inertia = props.area_m2, props.second_moment_m4
        lateral = props.lateral_second_moment_m4 if lateral is None else lateral
        torsion = props.torsion_constant_m4 if torsion is None else torsion
        warping = props.warping_constant_m6 if warping is None else warping
        factor = props.shear_area_factor if factor is None else factor
    elif area is None and inertia is None and width is not None:
        area, inertia = width * depth, width * depth**3 / 12.0
        rectangle = properties(SectionProfile.RECTANGLE, depth, width)
        lateral = rectangle.lateral_second_moment_m4 if lateral is None else lateral
        torsion = rectangle.torsion_constant_m4 if torsion is None else torsion
        warping = 0.0 if warping is None else warping
    if area is None or inertia is None:
        raise CaseError(file, "section.area_m2", "give a profile, area_m2 and second_moment_m4, or width_m for a "
                        "solid rectangle")
    if variation is SectionVariation.TAPERED and (width is None or s["springing_depth_m"] is None):
        raise CaseError(file, "section.springing_depth_m", "a tapered rib needs width_m and springing_depth_m")
    if variation is SectionVariation.TAPERED and profile not in (None, SectionProfile.RECTANGLE):
        raise CaseError(file, "section.variation", "a tapered rib is a solid rectangle; give profile = "
                        "\"rectangle\" or none")
    return Section(
        area_m2=area,
        second_moment_m4=inertia,
        depth_m=depth,
        elastic_modulus_kN_m2=modulus * KN_M2_PER_MPA,
        unit_weight_kN_m3=chosen("unit_weight_kN_m3", preset.unit_weight_kN_m3 if preset else None, 0.0),
        thermal_expansion_per_C=chosen("thermal_expansion_per_C", preset.thermal_expansion_per_C if preset else None,
                                       DEFAULT_EXPANSION_PER_C),
        variation=variation,
        springing_depth_m=s["springing_depth_m"],
        width_m=width,
        shear_area_factor=DEFAULT_SHEAR_AREA_FACTOR if factor is None else factor,
        poisson_ratio=poisson,
        profile=profile,
        material=material,
        wall_thickness_m=s["wall_thickness_m"],
        web_thickness_m=s["web_thickness_m"],
        flange_thickness_m=s["flange_thickness_m"],
        lateral_second_moment_m4=lateral,
        torsion_constant_m4=torsion,
        warping_constant_m6=warping,
        shear_modulus_given_kN_m2=None if shear is None else shear * KN_M2_PER_MPA,
    )


def _within(value: float, span: float, file: str, path: str) -> float:
    if not -1e-9 * span <= value <= span * (1 + 1e-9):
        raise CaseError(file, path, f"expected a position within the span 0..{span:g} m, got {value:g}")
    return min(max(value, 0.0), span)


def _load(table: Any, geometry: Geometry, file: str, path: str) -> Load:
    if not isinstance(table, dict):
        raise CaseError(file, path, f"expected a table, got {type(table).__name__}")
    kind = table.get("type")
    types = list(schema.LOAD_TYPES)
    if kind is None:
        raise CaseError(file, f"{path}.type", f"missing; expected one of {', '.join(types)}")
    if not isinstance(kind, str) or kind not in schema.LOAD_TYPES:
        hint = schema.suggest(kind, types) if isinstance(kind, str) else ""
        raise CaseError(file, f"{path}.type", f"expected one of {', '.join(types)}, got {schema.describe(kind)}{hint}")
    v = schema.read_table(table, schema.LOAD_TYPES[kind], file, path, extra=("type",))
    span = geometry.span_m
    if kind == "point":
        return PointLoad(_within(v["x_m"], span, file, f"{path}.x_m"), v["down_kN"], v["right_kN"],
                         None if v["spread_slope"] is None else FillSpread(v["spread_slope"]))
    if kind in ("line", "pressure"):
        a = 0.0 if v["from_x_m"] is None else _within(v["from_x_m"], span, file, f"{path}.from_x_m")
        b = span if v["to_x_m"] is None else _within(v["to_x_m"], span, file, f"{path}.to_x_m")
        if not b > a:
            raise CaseError(file, f"{path}.to_x_m", f"expected to_x_m greater than from_x_m ({a:g} m), got {b:g}")
        if kind == "line":
            end = v["start_kN_m"] if v["end_kN_m"] is None else v["end_kN_m"]
            return LineLoad(a, b, v["start_kN_m"], end, LoadDirection(v["direction"]), Projection(v["per"]))
        return NormalPressure(v["inward_kN_m"], a, b)
    if kind == "self_weight":
        return SelfWeight(v["factor"])
    if kind == "fill":
        if (v["surface_y_m"] is None) == (v["cover_m"] is None):
            raise CaseError(file, f"{path}.surface_y_m", "give exactly one of surface_y_m and cover_m")
        return FillLoad(v["unit_weight_kN_m3"], v["width_m"], v["surface_y_m"], v["cover_m"],
                        FillReference(v["measured_to"]), v["surcharge_kPa"])
    if kind == "temperature":
        return Temperature(v["uniform_C"], v["difference_C"])
    if kind == "support_movement":
        largest = schema.MAX_MOVEMENT_OF_SPAN * span
        for key in ("spread_m", "settlement_left_m", "settlement_right_m"):
            if abs(v[key]) > largest:
                raise CaseError(file, f"{path}.{key}", f"expected a movement within +-{largest:.4g} m "
                                f"({schema.MAX_MOVEMENT_OF_SPAN:.0%} of the span; beyond it linear theory no longer "
                                f"holds), got {v[key]:g}")
        return SupportMovement(v["spread_m"], v["settlement_left_m"], v["settlement_right_m"],
                               v["rotation_left_rad"], v["rotation_right_rad"])
    offsets, weights = v["offsets_m"], v["loads_kN"]
    if len(offsets) != len(weights):
        raise CaseError(file, f"{path}.loads_kN", f"expected one load per axle offset ({len(offsets)}), got {len(weights)}")
    if offsets[0] != 0.0 or any(b < a for a, b in zip(offsets, offsets[1:], strict=False)):
        raise CaseError(file, f"{path}.offsets_m", "expected offsets starting at 0 and never decreasing")
    train = AxleTrain(offsets, weights, v["step_m"], TrainDirection(v["direction"]),
                      None if v["spread_slope"] is None else FillSpread(v["spread_slope"]))
    positions = len(train.positions(span))
    if positions > MAX_TRAIN_POSITIONS:
        raise CaseError(file, f"{path}.step_m", f"gives {positions} positions; at most {MAX_TRAIN_POSITIONS} are allowed (use a larger step)")
    return train


def _cases(raw: Any, geometry: Geometry, file: str) -> tuple[LoadCase, ...]:
    if raw is None:
        raise CaseError(file, "cases", "missing; expected at least one [[cases]] table")
    if not isinstance(raw, list) or not raw:
        raise CaseError(file, "cases", "expected at least one [[cases]] table")
    out: list[LoadCase] = []
    seen: set[str] = set()
    for i, table in enumerate(raw):
        path = f"cases[{i}]"
        loads_raw = table.get("loads") if isinstance(table, dict) else None
        head = schema.read_table(table, schema.CASES, file, path, extra=("loads",))
        if head["name"] in seen:
            raise CaseError(file, f"{path}.name", f"duplicate case name {head['name']!r}")
        seen.add(head["name"])
        if not isinstance(loads_raw, list) or not loads_raw:
            raise CaseError(file, f"{path}.loads", "expected at least one [[cases.loads]] table")
        loads = tuple(_load(t, geometry, file, f"{path}.loads[{j}]") for j, t in enumerate(loads_raw))
        if sum(isinstance(ld, AxleTrain) for ld in loads) > 1:
            raise CaseError(file, f"{path}.loads", "at most one axle_train per load case")
        out.append(LoadCase(head["name"], loads, ActionKind(head["action"]), head["description"]))
    return _with_spread_fill(tuple(out), file)


def _with_spread_fill(cases: tuple[LoadCase, ...], file: str) -> tuple[LoadCase, ...]:
    """Loads spread through the fill take the first permanent fill's surface as the road."""
    fills = [ld for c in cases if c.action is ActionKind.PERMANENT for ld in c.loads if isinstance(ld, FillLoad)]
    out = []
    for i, c in enumerate(cases):
        loads = list(c.loads)
        for j, ld in enumerate(loads):
            if isinstance(ld, PointLoad | AxleTrain) and ld.spread is not None:
                if not fills:
                    raise CaseError(file, f"cases[{i}].loads[{j}].spread_slope", "needs a fill load (type = "
                                    "\"fill\") in a permanent case: its surface is the road the load stands on")
                loads[j] = replace(ld, spread=replace(ld.spread, fill=fills[0]))
        out.append(replace(c, loads=tuple(loads)))
    return tuple(out)


def _limits(cases: tuple[LoadCase, ...], combinations: tuple[Combination, ...], geometry: Geometry, file: str) -> None:
    loads = sum(len(c.loads) for c in cases)
    if loads > MAX_LOADS:
        raise CaseError(file, "cases", f"holds {loads} loads; at most {MAX_LOADS} are allowed")
    per_case = {c.name: len(c.train.positions(geometry.span_m)) if c.train else 1 for c in cases}
    states = sum(per_case.values()) + sum(
        max([per_case[n] for n, _ in combo.factors] or [1]) for combo in combinations)
    if states > MAX_STATES:
        raise CaseError(file, "cases", f"expands to {states} load states; at most {MAX_STATES} are allowed "
                        "(use larger train steps or fewer combinations)")


def _combinations(raw: Any, cases: tuple[LoadCase, ...], file: str) -> tuple[Combination, ...]:
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise CaseError(file, "combinations", "expected [[combinations]] tables")
    names = [c.name for c in cases]
    trains = {c.name for c in cases if c.train is not None}
    out: list[Combination] = []
    seen: set[str] = set()
    for i, table in enumerate(raw):
        path = f"combinations[{i}]"
        v = schema.read_table(table, schema.COMBINATIONS, file, path)
        if v["name"] in seen or v["name"] in names:
            raise CaseError(file, f"{path}.name", f"duplicate name {v['name']!r} (combination names must differ from each other and from case names)")
        seen.add(v["name"])
        for case_name, _ in v["factors"]:
            if case_name not in names:
                raise CaseError(file, f"{path}.factors.{case_name}", f"unknown load case{schema.suggest(case_name, names)}; expected one of {', '.join(names)}")
        if sum(c in trains for c, _ in v["factors"]) > 1:
            raise CaseError(file, f"{path}.factors", "at most one moving-load (axle_train) case per combination")
        state = v["limit_state"]
        if state is None:
            accidental = {c.name for c in cases if c.action is ActionKind.ACCIDENTAL}
            state = (LimitState.ACCIDENTAL if any(n in accidental and f != 0 for n, f in v["factors"])
                     else LimitState.ULTIMATE)
        out.append(Combination(v["name"], v["factors"], v["description"], state))
    return tuple(out)


def _patterned_factors(check: dict[str, Any], cases: tuple[LoadCase, ...], combinations: tuple[Combination, ...],
                       file: str) -> tuple[tuple[str, float], ...]:
    factors = check["patterned_factors"] or ()
    groups = [c.name for c in combinations] if combinations else [c.name for c in cases]
    for name, _ in factors:
        if name not in groups:
            raise CaseError(file, f"check.patterned_factors.{name}", f"unknown combination{schema.suggest(name, groups)}; "
                            f"expected one of {', '.join(groups)}")
    if factors and check["patterned_load_kN_m"] is None:
        raise CaseError(file, "check.patterned_factors", "needs check.patterned_load_kN_m (the load's intensity)")
    return tuple(factors)


def _collapse_case(check: dict[str, Any], cases: tuple[LoadCase, ...], file: str) -> str:
    name = check["collapse_case"]
    if not name:
        return ""
    names = [c.name for c in cases]
    if name not in names:
        raise CaseError(file, "check.collapse_case", f"unknown load case {name!r}{schema.suggest(name, names)}; "
                        f"expected one of {', '.join(names)}")
    chosen = next(c for c in cases if c.name == name)
    if chosen.action is ActionKind.PERMANENT:
        raise CaseError(file, "check.collapse_case", f"{name!r} is permanent; expected a variable load case to raise")
    if not check["unreinforced"]:
        raise CaseError(file, "check.collapse_case", "applies to unreinforced ribs; set check.unreinforced = true")
    return name


def _polyline(xs: Any, ys: Any, span: float, file: str, key: str) -> tuple[tuple[float, float], ...]:
    if xs is None and ys is None:
        return ()
    if xs is None or ys is None or len(xs) != len(ys) or len(xs) < 2:
        raise CaseError(file, f"find.{key}_y_m", f"expected {key}_x_m and {key}_y_m of equal length (>= 2)")
    if any(b <= a for a, b in zip(xs, xs[1:], strict=False)):
        raise CaseError(file, f"find.{key}_x_m", "expected strictly increasing abscissae")
    for i, x in enumerate(xs):
        _within(x, span, file, f"find.{key}_x_m[{i}]")
    return tuple(zip(xs, ys, strict=True))


def _find(f: dict[str, Any], geometry: Geometry, rib: Section, supports: Supports, cases: tuple[LoadCase, ...],
          combinations: tuple[Combination, ...], file: str) -> FindSettings:
    names = [c.name for c in combinations] + [c.name for c in cases]
    governing = f["governing"] or ()
    for i, name in enumerate(governing):
        if name not in names:
            raise CaseError(file, f"find.governing[{i}]", f"unknown combination or case {name!r}{schema.suggest(name, names)}")
    reference = _reference(f, geometry, file)
    lo = geometry.rise_m if f["rise_min_m"] is None else f["rise_min_m"]
    hi = geometry.rise_m if f["rise_max_m"] is None else f["rise_max_m"]
    if reference is not None:  # by default the reference's own rise: at the crown, and its highest point
        span = geometry.span_m
        crown = supports.hinge_at(span)
        crown = 0.5 * span if crown is None else crown
        chord = np.interp(reference.x_m, [0.0, span], [geometry.springing_left_m, geometry.springing_right_m])
        at_crown = float(reference.ordinate(crown)) - float(np.interp(crown, [0.0, span], [
            geometry.springing_left_m, geometry.springing_right_m]))
        dense = np.linspace(0.0, span, 2001)
        highest = float(np.max(np.concatenate([reference.y_m - chord, reference.ordinate(dense) - np.interp(
            dense, [0.0, span], [geometry.springing_left_m, geometry.springing_right_m])])))
        if not at_crown > 0:
            raise CaseError(file, "find.reference_y_m", f"the reference curve must rise above the springing chord at "
                            f"the crown (x = {crown:g} m); it is {at_crown:.4g} m there")
        lo = at_crown if f["rise_min_m"] is None else f["rise_min_m"]
        hi = max(highest, lo) if f["rise_max_m"] is None else f["rise_max_m"]
    if lo > hi:
        raise CaseError(file, "find.rise_min_m", f"expected rise_min_m <= rise_max_m ({hi:g} m), got {lo:g}")
    if f["symmetric"] and geometry.springing_left_m != geometry.springing_right_m:
        raise CaseError(file, "find.symmetric", "a symmetric axis needs springings at one level")
    if f["objective"] is Objective.MIN_DEPTH and rib.width_m is None:
        raise CaseError(file, "find.objective", "min_depth needs a solid rectangular rib ([section] width_m)")
    span = geometry.span_m
    return FindSettings(
        objective=f["objective"],
        governing=tuple(governing),
        rise_min_m=lo,
        rise_max_m=hi,
        symmetric=f["symmetric"],
        fair=f["fair"],
        fairness_tolerance=f["fairness_tolerance"],
        concave=f["concave"],
        clearance=_polyline(f["clearance_x_m"], f["clearance_y_m"], span, file, "clearance"),
        envelope=_polyline(f["envelope_x_m"], f["envelope_y_m"], span, file, "envelope"),
        max_slope=f["max_slope"],
        max_curvature_per_m=f["max_curvature_per_m"],
        kern_fraction=f["kern_fraction"],
        solver=f["solver"],
        max_iterations=f["max_iterations"],
        tolerance_m=f["tolerance_m"],
        step_limit_m=f["step_limit_m"],
        optimality_gap=f["optimality_gap"],
        reference=reference,
        moment_limit_kNm=f["moment_limit_kNm"],
        deviation=f["deviation"],
    )


def _reference(f: dict[str, Any], geometry: Geometry, file: str) -> ReferenceCurve | None:
    """The reference curve of the nearest objective, read and fitted to the span (None otherwise)."""
    points = f["reference_x_m"] is not None or f["reference_y_m"] is not None
    named = f["reference_file"] is not None
    if f["objective"] is not Objective.NEAREST:
        for key in ("reference_x_m", "reference_y_m", "reference_file", "reference_layer", "reference_unit",
                    "moment_limit_kNm"):
            if f[key] is not None:
                raise CaseError(file, f"find.{key}", "applies only with objective = \"nearest\"")
        return None
    if f["moment_limit_kNm"] is None:
        raise CaseError(file, "find.moment_limit_kNm", "missing; objective = \"nearest\" needs the largest |M| "
                        "allowed, in kNm")
    if points == named:
        raise CaseError(file, "find.reference_x_m", "objective = \"nearest\" needs a reference curve: either "
                        "reference_x_m and reference_y_m, or reference_file")
    span = geometry.span_m
    if named:
        key = "find.reference_file"
        path = Path(f["reference_file"])
        if not path.is_absolute() and not file.startswith("<"):
            path = Path(file).parent / path
        if not path.is_file():
            raise CaseError(file, key, f"expected a CSV or DXF file, {str(path)!r} is not a readable file")
        if f["reference_layer"] is not None and path.suffix.lower() != ".dxf":
            raise CaseError(file, "find.reference_layer", "applies only to a DXF reference_file")
        try:
            curve = read_reference(path, f["reference_unit"], f["reference_layer"])
            fitted = fit_to_span(curve, span, geometry.springing_left_m, geometry.springing_right_m,
                                 placed=path.suffix.lower() == ".dxf")
            unit = f["reference_unit"]
            return replace(fitted, path=str(path.resolve()), layer=f["reference_layer"],
                           unit=None if unit is None else getattr(unit, "value", unit))
        except ReferenceCurveError as exc:
            raise CaseError(file, key, f"{path.name}: {exc}") from None
        except OSError as exc:
            raise CaseError(file, key, f"{path.name}: cannot be read ({exc.strerror})") from None
    if f["reference_x_m"] is None or f["reference_y_m"] is None:
        missing = "reference_y_m" if f["reference_y_m"] is None else "reference_x_m"
        raise CaseError(file, f"find.{missing}", "missing; a reference curve needs both reference_x_m and reference_y_m")
    for key in ("reference_unit", "reference_layer"):
        if f[key] is not None:
            raise CaseError(file, f"find.{key}", "applies only to reference_file (the points are in m)")
    try:
        curve = curve_from_points(f["reference_x_m"], f["reference_y_m"])
        return fit_to_span(curve, span, geometry.springing_left_m, geometry.springing_right_m, placed=False)
    except ReferenceCurveError as exc:
        raise CaseError(file, "find.reference_x_m", str(exc)) from None
