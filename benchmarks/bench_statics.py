"""Speed of the exact three-hinged statics engine: stations x load states, measured in one run.

Run: python3 benchmarks/bench_statics.py
"""

from __future__ import annotations

import time

import numpy as np

from formfind.analysis.statics import three_hinged
from formfind.model.geometry import Axis, Chord, Parabola, place_stations
from formfind.model.loads import LineLoad, LoadCase, PointLoad, StationLoads, case_station_loads
from formfind.model.section import Section


def _best(fn, repeat=5):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    rng = np.random.default_rng(1)
    print(f"{'stations':>8} {'states':>7} {'build ms':>9} {'solve ms':>9} {'us/state/station':>17}")
    for n in (100, 400, 800, 1600, 3200, 6400):
        for states in (20, 200):
            curve = Parabola(Chord(40.0), 8.0)
            axis = Axis.from_curve(curve, place_stations(curve, n + 1))
            section = Section(0.1, 0.01, 0.5, 2e8, 78.5).at(axis)
            cases = [
                LoadCase(f"c{k}", (LineLoad(0.0, float(rng.uniform(5, 40)), 10.0, 10.0),
                                   PointLoad(float(rng.uniform(0, 40)), 50.0)))
                for k in range(states)
            ]
            t0 = time.perf_counter()
            loads = StationLoads.concatenate([case_station_loads(c, axis, section) for c in cases], n)
            build = time.perf_counter() - t0
            solve = _best(lambda axis=axis, loads=loads, n=n: three_hinged(axis, loads, n // 2))
            print(f"{n + 1:>8} {states:>7} {1e3 * build:>9.1f} {1e3 * solve:>9.2f} "
                  f"{1e6 * solve / (states * (n + 1)):>17.4f}")


if __name__ == "__main__":
    main()
