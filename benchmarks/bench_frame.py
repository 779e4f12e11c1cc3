"""Speed of the frame engine, measured side by side in one run.

Reports: the multi-right-hand-side solve at 800 elements x 200 load states (with and without the
influence lines at all stations), the scaling in elements and in states, one state at 200
elements, buckling at 800 elements, and the ratio to anaStruct solving case by case (if installed).

Run: python3 benchmarks/bench_frame.py
"""

from __future__ import annotations

import time

import numpy as np

from formfind.analysis.buckling import buckle
from formfind.analysis.frame import build_frame, influence_lines, solve
from formfind.enums import SupportKind
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, StationLoads, case_station_loads
from formfind.model.section import Section


def best(fn, repeat=7):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def setup(elements: int, states: int, seed: int = 3):
    rng = np.random.default_rng(seed)
    curve = Parabola(Chord(40.0), 8.0)
    axis = Axis.from_curve(curve, place_stations(curve, elements + 1))
    section = Section(0.05, 2e-3, 0.6, 2.1e8, 78.5).at(axis)
    cases = [
        LoadCase(f"c{k}", (LineLoad(0.0, float(rng.uniform(5, 40)), 10.0, 10.0), PointLoad(float(rng.uniform(0, 40)), 50.0)))
        for k in range(states)
    ]
    loads = StationLoads.concatenate([case_station_loads(c, axis, section) for c in cases], elements)
    return axis, section, loads


def main() -> None:
    axis, section, loads = setup(800, 200)
    t0 = time.perf_counter()
    model = build_frame(axis, section, SupportKind.FIXED)
    t_build = time.perf_counter() - t0
    t_solve = best(lambda: solve(model, loads, displacements=False))
    t_disp = best(lambda: solve(model, loads))
    t_inf = best(lambda: (solve(model, loads, displacements=False), influence_lines(model)))
    print(f"800 elements: build+factorise {1e3 * t_build:.1f} ms")
    print(f"800 elements x 200 states, all N V M reactions:      {1e3 * t_solve:7.1f} ms (target < 25 ms)")
    print(f"  ... plus influence lines at all 801 stations:      {1e3 * t_inf:7.1f} ms (target < 100 ms)")
    print(f"  ... with nodal displacements as well (full solve):  {1e3 * t_disp:7.1f} ms")

    axis2, section2, loads2 = setup(200, 1)
    m2 = build_frame(axis2, section2, SupportKind.TWO_HINGED)
    print(f"one state at 200 elements:                           {1e3 * best(lambda: solve(m2, loads2, displacements=False), 21):7.3f} ms (target < 1 ms)")

    print("scaling (ms per solve, after build):")
    print(f"{'elements':>9} {'20 states':>10} {'200 states':>11} {'us/elem/state':>14}")
    for n in (100, 200, 400, 800, 1600, 3200, 6400):
        row = []
        for states in (20, 200):
            a, s, ld = setup(n, states)
            m = build_frame(a, s, SupportKind.FIXED)
            row.append(best(lambda m=m, ld=ld: solve(m, ld, displacements=False), 3))
        print(f"{n:>9} {1e3 * row[0]:>10.2f} {1e3 * row[1]:>11.2f} {1e6 * row[1] / (n * 200):>14.3f}")

    one = StationLoads.concatenate([loads], 800)
    t_b = best(lambda: buckle(model, one, 0, modes=4), 3)
    print(f"buckling, 800 elements, first 4 factors:             {1e3 * t_b:7.1f} ms (target < 500 ms)")

    try:
        import anastruct
    except ImportError:
        print("anaStruct not installed: ratio not measured (pip install anastruct)")
        return
    a, s, ld = setup(200, 20)
    x, y = a.x, a.y
    ea, ei = float(s.elastic_modulus_kN_m2[0] * s.area_m2[0]), float(s.elastic_modulus_kN_m2[0] * s.second_moment_m4[0])

    def library_case_by_case():
        for k in range(20):
            ss = anastruct.SystemElements(EA=ea, EI=ei)
            for i in range(200):
                ss.add_element([[x[i], y[i]], [x[i + 1], y[i + 1]]], EA=ea, EI=ei)
            ss.add_support_fixed(1)
            ss.add_support_fixed(201)
            sel = ld.point_state == k
            for px, (fx, fy) in zip(ld.point_x[sel], ld.point_force[sel], strict=True):
                node = int(np.argmin(np.abs(x - px))) + 1
                ss.point_load(node, Fx=fx, Fy=fy)
            ss.solve()

    t_lib = best(library_case_by_case, 1)
    m = build_frame(a, s, SupportKind.FIXED)
    t_ours = best(lambda: solve(m, ld, displacements=False), 11)
    print(f"200 elements x 20 cases: anaStruct case by case {t_lib:.2f} s, formfind {1e3 * t_ours:.2f} ms, "
          f"ratio {t_lib / t_ours:,.0f}x (target >= 1000x)")


if __name__ == "__main__":
    main()
