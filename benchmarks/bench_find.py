"""Form finding end to end against the targets of the speed work, measured in one run.

- A study point (the two-hinged steel rib of bench_study.py, 81 stations) found as three-hinged,
  two-hinged and fixed: the indeterminate finds against the three-hinged one (target: at most 3x,
  and under 60 ms).
- The funicular of the rib's own weight per arc length (the catenary, a fixed point on the loads) at
  401 stations against the same find under a load per horizontal metre (target: at most 5x).
- The shipped road-bridge example (target: under 0.3 s) and every other shipped case.
- The command line in fresh processes: `--version` (target 0.35 s), `validate` (0.6 s), `find` of the
  default case end to end (1.5 s).
- Growth with stations x states for every path (target: linear): time per (station x state).

Timings are the best of a few repetitions; the machine's load shows in them, the ratios less so.
Run: python3 benchmarks/bench_find.py
"""

from __future__ import annotations

import subprocess
import sys
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_study import CASE  # noqa: E402

from formfind.design.shape import find_shape  # noqa: E402
from formfind.model.case import load_case, parse_case  # noqa: E402

FUNICULAR = """
[case]
name = "funicular"
[geometry]
span_m = 30.0
rise_m = 6.0
shape = "{shape}"
[supports]
kind = "three_hinged"
[section]
width_m = 0.5
depth_m = 0.8
elastic_modulus_MPa = 30000
unit_weight_kN_m3 = 25
[stations]
count = {stations}
[[cases]]
name = "g"
  [[cases.loads]]
  {load}
"""


def best_of(fn, repeat: int = 5) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def bench_case(text: str, kind: str | None = None, stations: int | None = None, states: int | None = None):
    data = tomllib.loads(text)
    if kind:
        data["supports"] = {"kind": kind}
    if stations:
        data["stations"] = {"count": stations}
    if states:  # more governing states: the crowd on every part of a grid of the span
        span = data["geometry"]["span_m"]
        data["cases"] = [data["cases"][0]] + [
            {"name": f"crowd{j}", "loads": [{"type": "line", "from_x_m": span * j / states,
                                             "to_x_m": span * (j + 1) / states, "start_kN_m": 8.0}]}
            for j in range(states)]
        data["combinations"] = [{"name": f"ULS{j}", "factors": {"dead": 1.35, f"crowd{j}": 1.5}} for j in range(states)]
    return parse_case(data, "bench.toml")


def cli_time(*args: str) -> float:
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "formfind", *args], cwd=ROOT, capture_output=True, check=False)
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    find_shape(bench_case(CASE, "three_hinged"))  # imports and first-call costs out of the way
    times = {}
    for kind in ("three_hinged", "two_hinged", "fixed"):
        case = bench_case(CASE, kind)
        times[kind], result = best_of(lambda case=case: find_shape(case))
        print(f"study point, {kind:>12}: {1e3 * times[kind]:6.1f} ms  ({result.method}, {len(result.iterations)} "
              f"iterations, {result.value:.4f} {result.unit}, gap {result.gap:.1e})")
    for kind in ("two_hinged", "fixed"):
        print(f"  {kind} / three_hinged = {times[kind] / times['three_hinged']:.2f} (target <= 3), "
              f"{1e3 * times[kind]:.0f} ms (target < 60 ms)")
    flat = parse_case(tomllib.loads(FUNICULAR.format(shape="circle", stations=401,
                                                     load='type = "line"\n  start_kN_m = 20.0')), "f.toml")
    chain = parse_case(tomllib.loads(FUNICULAR.format(shape="parabola", stations=401,
                                                      load='type = "self_weight"')), "c.toml")
    t_flat, r_flat = best_of(lambda: find_shape(flat))
    t_chain, r_chain = best_of(lambda: find_shape(chain))
    print(f"401 stations: load per horizontal metre {1e3 * t_flat:.1f} ms ({r_flat.method}); catenary of the "
          f"self-weight {1e3 * t_chain:.1f} ms ({r_chain.method}, {len(r_chain.iterations)} iterations): ratio "
          f"{t_chain / t_flat:.1f} (target <= 5)")
    for path in sorted((ROOT / "cases").glob("*.toml")):
        case = load_case(path)
        t, r = best_of(lambda case=case: find_shape(case), 3)
        target = " (target < 0.3 s)" if path.stem == "road-bridge" else ""
        print(f"{path.stem:>16}: find {1e3 * t:6.1f} ms{target} ({r.method}, {len(r.iterations)} iterations)")
    print(f"formfind --version {cli_time('--version'):.2f} s (target 0.35 s); validate "
          f"{cli_time('validate', 'cases/footbridge.toml'):.2f} s (target 0.6 s); find of the default case "
          f"{cli_time('find', 'cases/footbridge.toml', '--out', '/tmp/formfind-bench', '--overwrite', '-q'):.2f} s "
          "(target 1.5 s)")
    print("growth: time per station x state (microseconds), linear growth keeps a column flat")
    print(f"{'stations':>8} {'states':>6} {'exact':>9} {'fixed point':>12} {'two-hinged':>11} {'fixed':>9}")
    for stations, states in ((41, 2), (81, 4), (161, 8), (321, 16), (641, 32)):
        row = []
        for kind, text in (("three_hinged", CASE.replace('type = "self_weight"', 'type = "line"\n  start_kN_m = 3.0')),
                           ("three_hinged", CASE), ("two_hinged", CASE), ("fixed", CASE)):
            case = bench_case(text, kind, stations, states)
            t, _ = best_of(lambda case=case: find_shape(case), 2)
            row.append(1e6 * t / (stations * states))
        print(f"{stations:>8} {states:>6} " + " ".join(f"{v:>11.1f}" for v in row))


if __name__ == "__main__":
    main()
