"""Speed of the design checks, measured in one run.

1. Full check of an 800-station two-hinged arch with 20 combinations (4 of them holding an axle
   train moved across the span in both directions: 400 positions), a patterned live load added to
   every combination, stress, eccentricity, buckling (one eigenproblem per combination) and thrust:
   analysis + check, with and without the buckling analysis.
2. The no-tension collapse load factor of a point load at 100 positions on a 200-joint ring.

Targets (issue): 1. under 0.5 s on 2 cores; 2. under 5 s.

Run: python3 benchmarks/bench_check.py
"""

from __future__ import annotations

import time
import tomllib

import numpy as np

from formfind.analysis.engine import analyse
from formfind.design.check import check
from formfind.design.thrust import collapse_factors, voussoir_weight
from formfind.model.case import parse_case
from formfind.model.geometry import Axis, Chord, CircularSegment, place_stations
from formfind.model.loads import LoadCase, PointLoad, StationLoads, case_station_loads
from formfind.model.section import Section


def best(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def big_case(buckling: bool, method: str = "p_delta"):
    lines = [
        '[case]\nname = "bench"\n[geometry]\nspan_m = 60.0\nrise_m = 12.0\n[supports]\nkind = "two_hinged"\n',
        "[section]\narea_m2 = 0.08\nsecond_moment_m4 = 0.01\ndepth_m = 0.8\nelastic_modulus_MPa = 210000\n"
        "unit_weight_kN_m3 = 78.5\n",
        "[stations]\ncount = 800\n",
        f"[analysis]\nbuckling = {'true' if buckling else 'false'}\n",
        '[check]\ncompression_limit_MPa = 355\ntension_limit_MPa = 355\neccentricity_limit = "boundary"\n'
        f'patterned_load_kN_m = 5.0\nsecond_order = "{method}"\n',
        '[[cases]]\nname = "dead"\naction = "permanent"\n  [[cases.loads]]\n  type = "self_weight"\n',
        '[[cases]]\nname = "deck"\naction = "permanent"\n  [[cases.loads]]\n  type = "line"\n  from_x_m = 0.0\n'
        "  to_x_m = 60.0\n  start_kN_m = 40.0\n",
        '[[cases]]\nname = "axles"\n  [[cases.loads]]\n  type = "axle_train"\n  offsets_m = [0.0, 1.2, 7.2, 8.4]\n'
        "  loads_kN = [120.0, 120.0, 80.0, 80.0]\n  step_m = 0.3447\n",
    ]
    for k in range(8):
        lines.append(f'[[cases]]\nname = "wind{k}"\n  [[cases.loads]]\n  type = "line"\n  from_x_m = {k * 5.0}\n'
                     f'  to_x_m = {k * 5.0 + 20.0}\n  start_kN_m = {2.0 + k}\n')
    factors = []
    for c in range(20):
        terms = {"dead": 1.35, "deck": 1.35, f"wind{c % 8}": 1.5}
        if c < 4:
            terms["axles"] = 1.35
        body = ", ".join(f"{k} = {v}" for k, v in terms.items())
        lines.append(f'[[combinations]]\nname = "C{c:02d}"\nfactors = {{ {body} }}\n')
        factors.append(f"C{c:02d} = 1.5")
    lines[4] += "patterned_factors = { " + ", ".join(factors) + " }\n"
    return parse_case(tomllib.loads("\n".join(lines)), "bench.toml")


def ring():
    curve = CircularSegment(Chord(10.0), 3.0)
    axis = Axis.from_curve(curve, place_stations(curve, 200))
    section = Section.rectangle(1.0, 0.4, elastic_modulus_kN_m2=1e6).at(axis)
    dead = voussoir_weight(axis, 0.4, 1.0, 20.0)
    parts = [case_station_loads(LoadCase(f"p{k}", (PointLoad(float(x), 10.0),)), axis, section)
             for k, x in enumerate(np.linspace(0.05, 9.95, 100))]
    return axis, dead, StationLoads.concatenate(parts, axis.count - 1), section.depth_m


def main() -> None:
    for buckling, method in ((False, "p_delta"), (True, "amplification"), (True, "p_delta")):
        case = big_case(buckling, method)
        t, (result, checked) = best(lambda case=case: (lambda r: (r, check(case, r)))(analyse(case)))
        t_a, _ = best(lambda case=case: analyse(case))
        print(f"check, 800 stations, {len(case.combinations)} combinations, {result.combinations.count} combination "
              f"states ({result.cases.count} case states; axle train positions: "
              f"{len(result.loads.cases.group_states('axles'))}), patterned load, buckling "
              f"{'on, second order by ' + method if buckling else 'off'}: {t * 1e3:.0f} ms (analysis {t_a * 1e3:.0f} ms, checks "
              f"{(t - t_a) * 1e3:.0f} ms; target 500 ms); verdict {'pass' if checked.passed else 'fail'}; "
              f"least buckling factor {min((b.critical_factor for b in result.buckling), default=float('inf')):.2f}")
    axis, dead, live, depth = ring()
    t, res = best(lambda: collapse_factors(axis, dead, live, depth), repeat=2)
    worst = min(res, key=lambda r: r.factor)
    print(f"collapse factor, 200-joint ring, {live.count} positions: {t:.2f} s (target 5 s); least factor "
          f"{worst.factor:.3f} at {worst.state}, {len(worst.hinges)} hinges")


if __name__ == "__main__":
    main()
