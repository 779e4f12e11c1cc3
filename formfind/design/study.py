"""Rise-span (and rib depth) trade studies: every point a full find and check, run by any executor.

A study point takes the case file and changes its span, rise and (optionally) rib depth:

- the rise is fixed at the point's value (form finding's rise limits are set to it);
- abscissae scale with the span: point and line loads, pressure ranges, the crown hinge, clearance
  and site-line abscissae (their heights stay: a clearance is a height); axle spacings do not scale
  (a vehicle is a vehicle), the train simply crosses a longer or shorter span;
- a rib given by depth and width keeps its width and takes the new depth (area and second moment
  follow); a rib given by area and second moment can't be re-sized by depth (the study refuses).

Each point then runs `find_shape`, `analyse` on the found axis and `check`. A point that fails
(infeasible constraints, no convergence, a mechanism) is recorded with its reason and the study goes
on. Points are independent, so any `concurrent.futures.Executor` can run them (a process pool here,
a dask.distributed client's executor on a cluster); results come back in point order whatever ran
them, and only a bounded window of points is in flight at once, so a sweep of thousands of points
holds no more than a few axes in memory: rows are yielded (streamed) as they complete, in order.
"""

from __future__ import annotations

import contextlib
import logging
import math
import os
import time
from collections import deque
from collections.abc import Callable, Iterator
from concurrent.futures import Executor
from dataclasses import dataclass, replace

import numpy as np

from formfind.enums import PointStatus, Verdict
from formfind.errors import ArgumentError, CaseError, FormfindError
from formfind.model.case import Case, FindSettings, Supports
from formfind.model.loads import LineLoad, LoadCase, NormalPressure, PointLoad
from formfind.model.reference import ReferenceCurve
from formfind.model.section import Section

MAX_POINTS = 10_000  # a sweep larger than this is refused (documented in the README)
WINDOW_PER_WORKER = 2  # points in flight per worker
# the thread counts of the numerical libraries a worker may load: one each, so that N workers use N cores
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS",
                    "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class StudyPoint:
    """One point of a study: index in the sweep, span (m), rise (m), rib depth (m, None: the case's)."""

    index: int
    span_m: float
    rise_m: float
    depth_m: float | None


@dataclass(frozen=True)
class StudyRow:
    """The outcome of one study point. Forces in kN, moments in kNm, lengths in m, volumes in m3.

    ``status`` is a `PointStatus` (ok, infeasible: form finding's constraints conflict, failed:
    another error); ``reason`` says why; ``verdict`` a `Verdict` (pass or fail) for a point with an axis. ``thrust_kN`` maps each combination (or case) to its largest thrust.
    ``find_s`` and ``check_s`` are wall times, kept out of the tables so that they stay identical
    whichever executor ran the study. ``axis_x_m`` / ``axis_y_m`` hold the found axis at its stations
    (m) until the writer has streamed it to its file.
    """

    index: int
    span_m: float
    rise_m: float
    depth_m: float
    status: PointStatus
    reason: str = ""
    objective: float = math.nan
    objective_unit: str = ""
    peak_M_governing_kNm: float = math.nan
    peak_M_all_kNm: float = math.nan
    peak_M_state: str = ""
    thrust_kN: tuple[tuple[str, float], ...] = ()
    peak_N_kN: float = math.nan
    buckling_factor: float = math.nan
    length_m: float = math.nan
    volume_m3: float = math.nan
    weight_kN: float = math.nan
    worst_utilisation: float = math.nan
    worst_check: str = ""
    verdict: Verdict | str = ""
    find_s: float = 0.0
    check_s: float = 0.0
    axis_x_m: tuple[float, ...] = ()
    axis_y_m: tuple[float, ...] = ()

    @property
    def rise_over_span(self) -> float:
        """Rise over span (dimensionless)."""
        return self.rise_m / self.span_m

    @property
    def max_thrust_kN(self) -> float:
        """The largest thrust over all combinations (kN), NaN for a failed point."""
        return max((abs(v) for _, v in self.thrust_kN), default=math.nan)


def grid(spans_m: tuple[float, ...], rise_over_span: tuple[float, ...], depths_m: tuple[float | None, ...] = (None,),
         file: str = "study") -> list[StudyPoint]:
    """Every combination of span, rise/span and depth, span outermost, depth innermost.

    Raises:
        CaseError: if the sweep exceeds MAX_POINTS or a value is out of range.
        ArgumentError: if a range is not a list of numbers.
    """
    from formfind import arguments

    spans_m = arguments.numbers(spans_m, "grid", "spans_m")
    rise_over_span = arguments.numbers(rise_over_span, "grid", "rise_over_span")
    depths_m = arguments.numbers(depths_m, "grid", "depths_m", allow_none=True)
    count = len(spans_m) * len(rise_over_span) * len(depths_m)
    if count > MAX_POINTS:
        raise CaseError(file, "study", f"expected at most {MAX_POINTS} points, got {count}")
    if count == 0:
        raise CaseError(file, "study", "expected at least one span, rise/span and depth")
    for r in rise_over_span:
        if not 0.01 <= r <= 1.0:
            raise CaseError(file, "study.rise_over_span", f"expected values in 0.01..1, got {r:g}")
    for s in spans_m:
        if not (math.isfinite(s) and s > 0):
            raise CaseError(file, "study.span_m", f"expected positive spans, got {s:g}")
    for d in depths_m:
        if d is not None and not (math.isfinite(d) and d > 0):
            raise CaseError(file, "study.depth_m", f"expected positive depths, got {d:g}")
    out = []
    for s in spans_m:
        for r in rise_over_span:
            for d in depths_m:
                out.append(StudyPoint(len(out), float(s), float(r * s), None if d is None else float(d)))
    return out


def _scale_load(load, k: float):
    if isinstance(load, PointLoad):
        return replace(load, x_m=load.x_m * k)
    if isinstance(load, LineLoad):
        return replace(load, from_x_m=load.from_x_m * k, to_x_m=load.to_x_m * k)
    if isinstance(load, NormalPressure):
        return replace(load, from_x_m=None if load.from_x_m is None else load.from_x_m * k,
                       to_x_m=None if load.to_x_m is None else load.to_x_m * k)
    return load  # axle trains (a vehicle does not scale), self-weight, fill, temperature, movements


def case_at(case: Case, point: StudyPoint) -> Case:
    """The case with the point's span, rise and depth (see the module docstring for what scales)."""
    g = case.geometry
    k = point.span_m / g.span_m
    ky = point.rise_m / g.rise_m  # a drawn axis (shape "points") is stretched to the new span and rise
    geometry = replace(g, span_m=point.span_m, rise_m=point.rise_m,
                       points_x_m=tuple(x * k for x in g.points_x_m), points_y_m=tuple(y * ky for y in g.points_y_m))
    s = case.supports
    supports = Supports(s.kind, None if s.hinge_x_m is None else s.hinge_x_m * k, s.tie_area_m2, s.tie_modulus_kN_m2)
    cases = tuple(LoadCase(c.name, tuple(_scale_load(ld, k) for ld in c.loads), c.action, c.description)
                  for c in case.cases)
    f = case.find
    reference = f.reference
    if reference is not None:  # the architect's curve is stretched like the geometry, above its chord
        left, right = g.springing_left_m, g.springing_right_m
        chord = left + (right - left) * reference.x_m / g.span_m
        reference = ReferenceCurve(reference.x_m * k, chord + ky * (reference.y_m - chord), reference.smooth,
                                   reference.source, reference.sha256)
    find: FindSettings = replace(f, rise_min_m=point.rise_m, rise_max_m=point.rise_m,
                                 clearance=tuple((x * k, y) for x, y in f.clearance),
                                 envelope=tuple((x * k, y) for x, y in f.envelope), reference=reference)
    section = case.section
    if point.depth_m is not None:
        section = _with_depth(section, point.depth_m)
    return replace(case, geometry=geometry, supports=supports, cases=cases, find=find, section=section)


def _with_depth(section: Section, depth_m: float) -> Section:
    if section.width_m is None:
        raise CaseError("study", "depth_m", "a depth sweep needs a rectangular rib ([section] width_m and depth_m)")
    b = section.width_m
    return replace(section, depth_m=depth_m, area_m2=b * depth_m, second_moment_m4=b * depth_m**3 / 12.0)


def evaluate(case: Case, point: StudyPoint) -> StudyRow:
    """Find the axis of one point and check it; never raises for a point that fails (it says why)."""
    from formfind.analysis.engine import analyse
    from formfind.design.check import check
    from formfind.design.shape import find_shape, governing_groups
    from formfind.errors import FormFindingError

    depth = point.depth_m if point.depth_m is not None else case.section.depth_m
    base = dict(index=point.index, span_m=point.span_m, rise_m=point.rise_m, depth_m=depth)
    t0 = time.perf_counter()
    try:
        variant = case_at(case, point)
        shape = find_shape(variant)
        t1 = time.perf_counter()
        if shape.section != variant.section:
            variant = replace(variant, section=shape.section)
        result = analyse(variant, axis=shape.axis)
        checks = check(variant, result)
    except FormFindingError as exc:
        status = PointStatus.INFEASIBLE if "conflict" in str(exc) or "infeasible" in str(exc) else PointStatus.FAILED
        return StudyRow(**base, status=status, reason=str(exc), find_s=time.perf_counter() - t0)
    except FormfindError as exc:
        return StudyRow(**base, status=PointStatus.FAILED, reason=str(exc), find_s=time.perf_counter() - t0)
    t2 = time.perf_counter()
    response = result.combinations if result.combinations.count else result.cases
    governing = set(governing_groups(variant))
    gov_idx = [k for k, g in enumerate(response.groups) if not governing or g in governing]
    peak_all = np.abs(response.M).max(axis=1)
    k_all = int(np.argmax(peak_all))
    thrust = []
    for group in dict.fromkeys(response.groups):
        idx = [k for k, g in enumerate(response.groups) if g == group]
        values = response.thrust[idx]
        thrust.append((group, float(values[int(np.argmax(np.abs(values)))])))
    worst = checks.worst
    length = result.axis.length_m
    area = result.section.area_m2
    volume = float(np.sum(0.5 * (area[:-1] + area[1:]) * np.diff(result.axis.arc_length)))
    return StudyRow(
        **base, status=PointStatus.OK, objective=shape.value, objective_unit=shape.unit,
        peak_M_governing_kNm=float(peak_all[gov_idx].max()) if gov_idx else math.nan,
        peak_M_all_kNm=float(peak_all[k_all]), peak_M_state=response.names[k_all], thrust_kN=tuple(thrust),
        peak_N_kN=float(np.abs(np.concatenate([response.N, response.N_left])).max()),
        buckling_factor=min((b.critical_factor for b in result.buckling), default=math.inf),
        length_m=length, volume_m3=volume, weight_kN=volume * variant.section.unit_weight_kN_m3,
        worst_utilisation=math.nan if worst is None else float(worst.utilisation),
        worst_check=worst.name if worst else "", verdict=Verdict.PASS if checks.passed else Verdict.FAIL,
        find_s=t1 - t0, check_s=t2 - t1,
        axis_x_m=tuple(result.axis.x.tolist()), axis_y_m=tuple(result.axis.y.tolist()),
    )


@contextlib.contextmanager
def process_pool(workers: int):
    """A pool of ``workers`` processes (spawned: a forked child of a process holding solver threads can
    deadlock), each with one thread per numerical library: the thread counts are set in the
    environment the workers inherit, before they load numpy, and restored when the pool closes.
    Without it every worker starts a BLAS thread per core and the workers fight for the cores."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    saved = {name: os.environ.get(name) for name in THREAD_VARIABLES}
    os.environ.update({name: "1" for name in THREAD_VARIABLES})
    try:
        with ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("spawn")) as pool:
            yield pool
    finally:
        for name, value in saved.items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value


def _evaluate_args(args: tuple[Case, StudyPoint]) -> StudyRow:
    return evaluate(*args)


def run_study(case: Case, points: list[StudyPoint], executor: Executor | None = None,
              progress: Callable[[int, int], None] | None = None, window: int | None = None) -> Iterator[StudyRow]:
    """Evaluate every point; yield the rows in point order as they complete.

    ``executor``: any `concurrent.futures.Executor` (None: serial, in this process). At most
    ``window`` points are in flight (default: twice the executor's workers, at least 2), so memory
    stays bounded however long the sweep. ``progress(done, total)`` is called after each row.

    Raises:
        ArgumentError: if an argument is not of the kind stated.
    """
    from formfind import arguments

    arguments.case(case, "run_study")
    if isinstance(points, str | bytes) or not all(isinstance(p, StudyPoint) for p in points):
        raise ArgumentError("run_study: points: expected a list of StudyPoint (make them with formfind.grid)")
    if executor is not None and not callable(getattr(executor, "submit", None)):
        raise ArgumentError("run_study: executor: expected a concurrent.futures.Executor or None")
    total = len(points)
    if executor is None:
        for done, point in enumerate(points, 1):
            row = evaluate(case, point)
            if progress:
                progress(done, total)
            yield row
        return
    workers = getattr(executor, "_max_workers", None) or 2
    limit = window or max(2, WINDOW_PER_WORKER * workers)
    pending: deque = deque()
    queue = iter(points)
    done = 0
    for point in queue:
        pending.append(executor.submit(_evaluate_args, (case, point)))
        if len(pending) >= limit:
            break
    while pending:
        row = pending.popleft().result()
        nxt = next(queue, None)
        if nxt is not None:
            pending.append(executor.submit(_evaluate_args, (case, nxt)))
        done += 1
        if progress:
            progress(done, total)
        yield row


def points_of(case: Case, rise_over_span: tuple[float, ...] = (), spans_m: tuple[float, ...] = (),
              depths_m: tuple[float, ...] = ()) -> list[StudyPoint]:
    """The study grid of ``case``: the arguments, else its [study] table, else its own geometry."""
    g = case.geometry
    ratios = rise_over_span or case.study.rise_over_span or (g.rise_m / g.span_m,)
    spans = spans_m or case.study.span_m or (g.span_m,)
    depths: tuple[float | None, ...] = depths_m or case.study.depth_m or (None,)
    return grid(tuple(spans), tuple(ratios), depths, case.source or "study")


def pareto_front(thrust_kN: np.ndarray, moment_kNm: np.ndarray) -> np.ndarray:
    """Indices of the points no other point beats in both thrust and moment (both minimised), by
    increasing thrust. NaN points are never on the front."""
    ok = np.flatnonzero(np.isfinite(thrust_kN) & np.isfinite(moment_kNm))
    order = ok[np.lexsort((moment_kNm[ok], thrust_kN[ok]))]
    front, best = [], np.inf
    for k in order:
        if moment_kNm[k] < best:
            front.append(int(k))
            best = moment_kNm[k]
    return np.asarray(front, dtype=int)
