"""Speed of a trade study: a 64-point rise-span sweep serially and on a 2-worker process pool.

Targets: at least 1.7x faster on 2 workers than serially, and 64 points in under 5 s on 2 workers. Also reports the time per point and
how it splits between finding the axis and checking it. The case: a two-hinged steel rib under
deck load and a half-span crowd (the sequential form-finding path), 81 stations.

Run: python3 benchmarks/bench_study.py
"""

from __future__ import annotations

import time
import tomllib

from formfind.design.study import grid, process_pool, run_study
from formfind.model.case import parse_case

CASE = """
[case]
name = "bench-study"
[geometry]
span_m = 30.0
rise_m = 6.0
[supports]
kind = "two_hinged"
[section]
area_m2 = 0.03
second_moment_m4 = 1.5e-3
depth_m = 0.5
elastic_modulus_MPa = 210000
unit_weight_kN_m3 = 78.5
[stations]
count = 81
[check]
compression_limit_MPa = 250
tension_limit_MPa = 250
[[cases]]
name = "dead"
action = "permanent"
  [[cases.loads]]
  type = "self_weight"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = 30.0
  start_kN_m = 20.0
[[cases]]
name = "crowd"
  [[cases.loads]]
  type = "line"
  from_x_m = 0.0
  to_x_m = 15.0
  start_kN_m = 8.0
[[combinations]]
name = "ULS"
factors = { dead = 1.35, crowd = 1.5 }
[[combinations]]
name = "ULS-full"
factors = { dead = 1.35 }
"""


def main() -> None:
    case = parse_case(tomllib.loads(CASE), "bench.toml")
    points = grid((24.0, 30.0, 36.0, 42.0), tuple(0.1 + 0.02 * k for k in range(16)))
    t0 = time.perf_counter()
    serial = list(run_study(case, points))
    t_serial = time.perf_counter() - t0
    with process_pool(2) as pool:
        t0 = time.perf_counter()
        pooled = list(run_study(case, points, pool))
        t_pool = time.perf_counter() - t0
    same = [(a.index, a.max_thrust_kN, a.peak_M_all_kNm) for a in serial] == \
           [(b.index, b.max_thrust_kN, b.peak_M_all_kNm) for b in pooled]
    find = sum(r.find_s for r in serial) / len(serial)
    check = sum(r.check_s for r in serial) / len(serial)
    ok = sum(r.status == "ok" for r in serial)
    print(f"{len(points)} points ({ok} with an axis): serial {t_serial:.1f} s, 2 workers {t_pool:.1f} s "
          f"(pool start-up included): speed-up {t_serial / t_pool:.2f}x (target 1.7x); identical results: {same}")
    print(f"per point (serial): {find + check:.3f} s = {find:.3f} s finding + {check:.3f} s checking")


if __name__ == "__main__":
    main()
