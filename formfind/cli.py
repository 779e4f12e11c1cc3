"""The command line: parse arguments, call the library, print a short summary, map errors to codes.

Exit codes (also in the README):
    0  success
    1  internal error (a bug: please report it with the case file)
    2  command-line usage error
    3  the case file is missing or invalid
    4  the analysis could not produce a trustworthy result (mechanism, failed verification)
    5  an output could not be written, or would overwrite earlier outputs without --overwrite
    6  form finding failed: conflicting constraints, a solver failure, or no convergence
    7  a design check failed (the outputs, the verdict table among them, are written)
"""

from __future__ import annotations

import argparse
import logging
import os
import sys
import warnings
from dataclasses import replace
from pathlib import Path

from formfind import __version__
from formfind.errors import FormfindError

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_CHECK_FAILED = 7
CAUTION_LINE = (
    "Caution: an aid to a qualified engineer; local codes and licensed practice govern; "
    "example load factors are not code values."
)
SUPPORT_CHOICES = ["three_hinged", "two_hinged", "fixed", "tied"]


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="formfind",
        description="Find and check arch axes. Units: m, kN, kNm, degC.",
        epilog="Exit codes: 0 ok, 1 internal error, 2 usage, 3 bad case file, 4 analysis failed, "
        "5 output not written, 6 form finding failed, 7 a design check failed.",
    )
    parser.add_argument("--version", action="version", version=f"formfind {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    p = sub.add_parser("validate", help="read and check a case file without running it")
    p.add_argument("case", type=Path, help="case file (TOML)")
    p.add_argument("-v", "--verbose", action="store_true", help="also list the defaults filled in")

    for name, text in (
        ("run", "the whole job on a case: find the axis, analyse and check it, write every output"),
        ("find", "find the axis of least bending for the governing loads ([find] in the case file)"),
        ("analyse", "analyse the case's given axis under all cases and combinations"),
        ("check", "analyse and check the case's given axis; print the verdict table"),
    ):
        p = sub.add_parser(name, help=text, description=text)
        p.add_argument("case", type=Path, help="case file (TOML)")
        p.add_argument("--out", type=Path, default=Path("outputs"),
                       help="output folder; results go to OUT/<case name>/ (default: outputs)")
        p.add_argument("--overwrite", action="store_true", help="replace earlier outputs of this case")
        p.add_argument("--stations", type=int, default=None, help="override [stations] count")
        p.add_argument("--supports", choices=SUPPORT_CHOICES, default=None,
                       help="analyse with this support system instead of the case file's")
        p.add_argument("--no-buckling", action="store_true", help="skip the buckling analysis")
        p.add_argument("--all-states", action="store_true",
                       help="also write states.csv: N, V, M of every state (every train position)")
        p.add_argument("-q", "--quiet", action="store_true", help="print only errors")
        if name in ("run", "check"):
            p.add_argument("--json", action="store_true",
                           help="print the verdict table as JSON on standard output instead of the summary")

    p = sub.add_parser("study", help="rise-span (and depth) trade study: find and check every point",
                       description="Sweep rise/span, span and rib depth; each point finds its axis and checks it. "
                       "Ranges are lists (0.1,0.15,0.2) or FROM:TO:COUNT (0.1:0.3:9); default: the [study] table.")
    p.add_argument("case", type=Path, help="case file (TOML)")
    p.add_argument("--rise-over-span", default=None, help="rise/span values (-)")
    p.add_argument("--span", default=None, help="spans (m)")
    p.add_argument("--depth", default=None, help="rib depths (m), for rectangular ribs")
    run = p.add_mutually_exclusive_group()
    run.add_argument("--workers", type=int, default=None, help="local worker processes (default: all cores)")
    run.add_argument("--serial", action="store_true", help="run every point in this process")
    run.add_argument("--scheduler", default=None,
                     help="address of a dask.distributed scheduler (needs the dask extra)")
    p.add_argument("--stations", type=int, default=None, help="override [stations] count")
    p.add_argument("--out", type=Path, default=Path("outputs"), help="output folder (default: outputs)")
    p.add_argument("--overwrite", action="store_true", help="replace earlier study outputs of this case")
    p.add_argument("-q", "--quiet", action="store_true", help="print only errors")

    p = sub.add_parser("explore", help="a live page in the browser: change rise, span, depth, supports and a trial "
                       "load, and watch the axis found and checked again",
                       description="Serve a page on this computer where every change of rise, span, rib depth, "
                       "supports or trial load finds the axis again and checks it. Stop with Ctrl-C.")
    p.add_argument("case", type=Path, help="case file (TOML)")
    p.add_argument("--port", type=int, default=8765, help="port to listen on (default: 8765; 0: any free port)")
    p.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default: 127.0.0.1, this computer only; another address exposes "
                   "the page to the network)")
    p.add_argument("--no-browser", action="store_true", help="do not open a browser; just print the address")
    p.add_argument("--out", type=Path, default=Path("outputs"),
                   help="output folder: saved case files go to OUT/<case name>/, a study there is shown "
                   "(default: outputs)")

    sub.add_parser("keys", help="print the case-file key reference (Markdown)")
    return parser


def run_cli(argv: list[str] | None = None) -> int:
    """Run formfind's command line; return the exit code."""
    logging.basicConfig(level=logging.WARNING, format="formfind: %(levelname)s: %(message)s")
    # numerical warnings are not for the user's terminal: every result is checked for finiteness and
    # verified, and what the user must know is said in words
    warnings.simplefilter("ignore", RuntimeWarning)
    args = _parser().parse_args(argv)
    try:
        if args.command == "validate":
            return _validate(args)
        if args.command in ("run", "analyse", "find", "check"):
            return _job(args)
        if args.command == "study":
            return _study(args)
        if args.command == "explore":
            return _explore(args)
        if args.command == "keys":
            from formfind.model.schema import reference_markdown

            sys.stdout.write(reference_markdown())
            return EXIT_OK
    except FormfindError as exc:
        print(f"formfind: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except UsageError as exc:
        print(f"formfind: usage error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("formfind: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # a bug: one line unless debugging
        if os.environ.get("FORMFIND_DEBUG"):
            raise
        print(f"formfind: internal error: {type(exc).__name__}: {exc} (please report it; "
              "set FORMFIND_DEBUG=1 for a traceback)", file=sys.stderr)
        return EXIT_INTERNAL
    return EXIT_INTERNAL  # pragma: no cover - argparse guarantees a known command


def _load(args: argparse.Namespace):
    from formfind.model.case import StationSettings, load_case
    from formfind.model.schema import MAX_STATIONS

    case = load_case(args.case)
    stations = getattr(args, "stations", None)
    if stations is not None:
        if not 3 <= stations <= MAX_STATIONS:
            from formfind.errors import CaseError

            raise CaseError("--stations", "", f"expected 3..{MAX_STATIONS}, got {stations}")
        case = replace(case, stations=StationSettings(stations, case.stations.spacing))
    kind = getattr(args, "supports", None)
    if kind is not None:
        from formfind.enums import SupportKind
        from formfind.errors import CaseError
        from formfind.model.case import Supports

        support = SupportKind(kind)
        s = case.supports
        if support is SupportKind.TIED and case.tie_EA_kN is None:
            raise CaseError(str(args.case), "supports.tie_area_m2", "--supports tied needs tie_area_m2 and tie_modulus_MPa in the case file")
        hinge = s.hinge_at(case.geometry.span_m)
        case = replace(case, supports=Supports(support, hinge if support is SupportKind.THREE_HINGED else None,
                                               s.tie_area_m2, s.tie_modulus_kN_m2))
    return case


def _validate(args: argparse.Namespace) -> int:
    case = _load(args)
    states = sum(len(c.train.positions(case.geometry.span_m)) if c.train else 1 for c in case.cases)
    print(
        f"{args.case}: valid: {case.name}, {case.supports.kind.value}, {case.geometry.shape.value} "
        f"span {case.geometry.span_m:g} m rise {case.geometry.rise_m:.4g} m, "
        f"{len(case.cases)} load cases ({states} states), {len(case.combinations)} combinations, "
        f"{case.stations.count} stations"
    )
    if args.verbose and case.defaults_used:
        print("defaults filled in: " + ", ".join(case.defaults_used))
    return EXIT_OK


def _job(args: argparse.Namespace) -> int:
    """find, analyse or run: compute, build every file in memory, write them atomically, summarise."""
    from formfind.analysis.engine import analyse
    from formfind.output import files
    from formfind.output.package import build_files, write_package

    case = _load(args)
    folder = Path(args.out) / files.safe_name(case.name)
    files.check_destination(folder, [], args.overwrite)  # fail early on an unusable folder; create nothing
    shape = None
    axis = None
    if args.command in ("find", "run"):
        from formfind.design.shape import find_shape

        shape = find_shape(case)
        axis = shape.axis
        if shape.section != case.section:  # min_depth: the found depth is the rib from here on
            case = replace(case, section=shape.section)
    result = None
    checks = None
    if args.command in ("analyse", "run", "check"):
        result = analyse(case, axis=axis, buckling=False if args.no_buckling else None)
    if args.command in ("run", "check"):
        from formfind.design.check import check

        checks = check(case, result)
    contents = build_files(case, shape, result, all_states=getattr(args, "all_states", False), checks=checks,
                           drawings=args.command == "run")
    written = write_package(folder, contents, args.overwrite)
    if getattr(args, "json", False) and checks is not None:
        from formfind.output.tables import checks_json

        sys.stdout.write(checks_json(checks, case.name))
        sys.stdout.write("\n")
    elif not args.quiet:
        if shape is not None:
            _print_shape(shape)
        if result is not None:
            _print_summary(result)
        if checks is not None:
            _print_checks(checks)
        print(f"wrote {len(written)} files to {folder}/ (manifest.json lists them with SHA-256)")
        print(CAUTION_LINE)
    if checks is not None and not checks.passed:
        return EXIT_CHECK_FAILED
    return EXIT_OK


def _values(text: str | None, option: str) -> tuple[float, ...]:
    """'a,b,c' or 'from:to:count' as numbers; a bad list is a usage error (exit 2)."""
    if text is None:
        return ()
    import numpy as np

    try:
        if ":" in text:
            lo, hi, count = text.split(":")
            n = int(count)
            if not 1 <= n <= 10_000:
                raise ValueError
            return tuple(float(v) for v in np.linspace(float(lo), float(hi), n))
        return tuple(float(v) for v in text.split(",") if v.strip())
    except ValueError:
        raise UsageError(f"{option}: expected numbers a,b,c or FROM:TO:COUNT, got {text!r}") from None


class UsageError(Exception):
    """A command-line value that argparse cannot judge by itself (exit 2)."""


def _progress(quiet: bool):
    if quiet or not sys.stderr.isatty():
        return None

    def show(done: int, total: int) -> None:
        width = 30
        filled = int(width * done / total)
        sys.stderr.write(f"\r[{'#' * filled}{' ' * (width - filled)}] {done}/{total} points")
        if done == total:
            sys.stderr.write("\n")
        sys.stderr.flush()

    return show


def _study(args: argparse.Namespace) -> int:
    import contextlib

    from formfind.design.study import points_of, run_study
    from formfind.output import files
    from formfind.output.study_files import write_study

    case = _load(args)
    points = points_of(case, _values(args.rise_over_span, "--rise-over-span"), _values(args.span, "--span"),
                       _values(args.depth, "--depth"))
    folder = Path(args.out) / files.safe_name(case.name)
    from formfind.output.study_files import study_names

    files.prepare_folder(folder, study_names(), args.overwrite)
    with contextlib.ExitStack() as stack:
        executor, window = None, None
        if args.scheduler:
            try:
                from dask.distributed import Client
            except ImportError:
                raise UsageError("--scheduler needs dask.distributed: pip install 'formfind[dask]'") from None
            client = stack.enter_context(Client(args.scheduler))
            executor = client.get_executor()
            window = 2 * max(1, sum(client.nthreads().values()))
        elif not args.serial:
            from formfind.design.study import process_pool

            workers = args.workers or os.cpu_count() or 1
            if workers < 1:
                raise UsageError(f"--workers: expected at least 1, got {workers}")
            if workers > 1 and len(points) > 1:
                executor = stack.enter_context(process_pool(workers))
        rows = run_study(case, points, executor, _progress(args.quiet), window)
        written, kept = write_study(folder, case, rows, args.overwrite)
    if not args.quiet:
        ok = [r for r in kept if r.status == "ok"]
        passing = [r for r in ok if r.verdict == "pass"]
        print(f"study of {case.name}: {len(kept)} points, {len(ok)} with an axis, {len(passing)} passing every check; "
              f"{len(kept) - len(ok)} without an axis (see the reason column)")
        from formfind.output.numbers import fixed, for_reading

        print(f"{'span m':>7} {'rise/span':>9} {'depth m':>8} {'status':<10} {'H max kN':>10} {'peak M kNm':>11} "
              f"{'buckling':>9} {'verdict':<7}")
        for r in kept[:40]:
            print(f"{fixed(r.span_m, 3):>7} {for_reading(r.rise_over_span):>9} {fixed(r.depth_m, 3):>8} {r.status:<10} "
                  f"{for_reading(r.max_thrust_kN, 5):>10} {for_reading(r.peak_M_all_kNm, 5):>11} "
                  f"{for_reading(r.buckling_factor, 3):>9} {r.verdict:<7}")
        if len(kept) > 40:
            print(f"... {len(kept) - 40} more rows in study.csv")
        if kept:
            find = sum(r.find_s for r in kept) / len(kept)
            chk = sum(r.check_s for r in kept) / len(kept)
            print(f"time per point: {find + chk:.2f} s ({find:.2f} s finding, {chk:.2f} s checking)")
        print(f"wrote {len(written)} files to {folder}/ (manifest-study.json lists them with SHA-256)")
        print(CAUTION_LINE)
    return EXIT_OK


def _explore(args: argparse.Namespace) -> int:
    """Serve the live page until Ctrl-C; the case is validated and answered once before it listens."""
    from formfind.explore.answer import Explorer
    from formfind.explore.server import serve

    if not 0 <= args.port <= 65535:
        raise UsageError(f"--port: expected 0..65535, got {args.port}")
    explorer = Explorer(args.case)
    explorer.answer(explorer.start)  # warm up (imports, first solve), and fail before listening if it cannot

    def ready(url: str) -> None:
        if args.host not in ("127.0.0.1", "localhost"):
            print(f"formfind: warning: listening on {args.host}: other computers can reach this page", file=sys.stderr)
        print(f"formfind explore: {args.case} at {url} (Ctrl-C stops it)", flush=True)
        print(CAUTION_LINE, flush=True)

    try:
        serve(explorer, args.out, args.host, args.port, not args.no_browser, ready)
    except OSError as exc:
        raise UsageError(f"--host/--port: cannot listen on {args.host}:{args.port} ({exc.strerror or exc}); "
                         "pass another --port") from None
    except KeyboardInterrupt:
        pass
    print("formfind explore: stopped", file=sys.stderr)
    return EXIT_OK


def _print_checks(checks) -> None:
    from formfind.output.numbers import for_reading, length

    print(f"{'check':<34} {'value':>11} {'limit':>10} {'unit':<4} {'util':>6}  {'governing':<24} {'x m':>7}  verdict")
    for r in checks.rows:
        if r.verdict == "info":
            continue
        limit = "" if r.limit is None else for_reading(r.limit)
        util = for_reading(r.utilisation, 3)
        where = "" if r.x_m is None else length(r.x_m)
        print(f"{r.name[:34]:<34} {for_reading(r.value):>11} {limit:>10} {r.unit:<4} {util:>6}  {r.combination[:24]:<24} "
              f"{where:>7}  {r.verdict.upper()}{'  ' + r.note if r.note else ''}")
    judged = (" (an unreinforced ring: judged by its lines of thrust and its collapse mechanism; the elastic "
              "stress and eccentricity rows are information, in checks.csv)") if checks.thrust_lines else ""
    print("verdict: " + ("all checks pass" if checks.passed else "SOME CHECKS FAIL") + judged)


def _print_shape(shape) -> None:
    from formfind.output.numbers import for_reading, length, significant

    bound = "" if shape.dual_bound is None else f", dual bound {significant(shape.dual_bound)} (gap {shape.gap:.1e})"
    print(f"found axis: {shape.objective.value} = {significant(shape.value)} {shape.unit} by {shape.method} "
          f"({shape.solver}, {shape.status}, {shape.solve_time_s:.2f} s in the solver){bound}; "
          f"{len(shape.iterations)} iteration(s); checked by the exact engine: {significant(shape.checked_value)} "
          f"{shape.unit}")
    if shape.governing:
        where = ", ".join(f"{g.state} at x = {length(g.x_m)} m" for g in shape.governing[:4])
        print(f"governing: {where}{' ...' if len(shape.governing) > 4 else ''}")
    for a in shape.active:
        cost = "" if a.cost != a.cost else f", cost {for_reading(a.cost)} {a.unit}"
        print(f"active constraint: {a.name} at {len(a.stations)} station(s){cost}")
    if shape.nearest is not None:
        n = shape.nearest
        print(f"nearest axis: largest deviation from the reference {for_reading(1000.0 * n.largest_deviation_m, 4)} mm "
              f"at x = {length(n.largest_at_x_m)} m (RMS {for_reading(1000.0 * n.rms_deviation_m, 4)} mm); peak |M| "
              f"{for_reading(n.peak_moment_kNm)} kNm ({n.peak_state} at x = {length(n.peak_at_x_m)} m) against the "
              f"limit {for_reading(n.moment_limit_kNm)} kNm; the reference itself: {for_reading(n.reference_peak_moment_kNm)} kNm")
    if shape.fairness_cost > 0:
        print(f"fairness: the certified optimum is {significant(shape.optimum)} {shape.unit}; the fairer axis returned "
              f"costs {shape.fairness_cost:.2%} more")
    if shape.fairness is not None:
        f = shape.fairness
        print(f"shape: {'symmetric, ' if shape.symmetric else ''}largest turn between chords "
              f"{for_reading(f.largest_turn_deg, 3)} deg at x = {length(f.largest_at_x_m)} m, "
              f"{for_reading(f.ratio, 3)} x the mean")
    if shape.simple_curves:
        print("simple curves through the springings and rise, largest deviation from the axis: " + ", ".join(
            f"{c.name} {for_reading(1000.0 * c.deviation_m, 4)} mm at x = {length(c.at_x_m)} m"
            for c in shape.simple_curves))
    for w in shape.warnings:
        print(f"warning: {w}")


def _print_summary(result) -> None:
    from formfind.analysis.response import summarise
    from formfind.output.numbers import fixed, for_reading

    case = result.case
    print(f"{case.name}: {case.supports.kind.value} {case.geometry.shape.value}, span "
          f"{result.axis.span_m:g} m, rise {result.axis.rise_m:.4g} m, {result.axis.count} stations, "
          f"engine {result.cases.engine}")
    factors = {b.group: b.critical_factor for b in result.buckling}
    header = f"{'set':<5} {'name':<22} {'H kN':>10} {'peak M kNm':>11} {'at x m':>7} " \
             f"{'peak N kN':>10} {'at x m':>7} {'peak V kN':>10} {'at x m':>7} {'buckling':>9}"
    print(header)
    for label, resp in (("case", result.cases), ("comb", result.combinations)):
        for s in summarise(resp):
            lam = factors.get(s.group)
            lam_text = "" if lam is None else ("none" if lam == float("inf") else for_reading(lam, 3))
            print(f"{label:<5} {s.group[:22]:<22} {fixed(s.thrust_kN, 1):>10} {fixed(s.M.value, 1):>11} "
                  f"{fixed(s.M.x_m, 2):>7} {fixed(s.N.value, 1):>10} {fixed(s.N.x_m, 2):>7} {fixed(s.V.value, 1):>10} "
                  f"{fixed(s.V.x_m, 2):>7} {lam_text:>9}")
    if result.buckling:
        print("buckling: factor on each combination at which the arch buckles in its plane "
              "(linear elastic; loads keep their direction unless the case says otherwise)")
    if result.modes is not None and result.modes.frequency_hz.size:
        m = result.modes
        print("natural frequencies in the plane (mass of the permanent cases): " + ", ".join(
            f"{for_reading(f, 3)} Hz ({s}, {d})" for f, s, d in zip(m.frequency_hz, m.symmetry, m.direction,
                                                                     strict=True)))

