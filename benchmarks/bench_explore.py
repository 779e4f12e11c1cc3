"""Latency of the live page (`formfind explore`): from a change of a control to the answer, measured
through the server's WSGI application (JSON parsing, validation, find, analyse, check, the JSON
answer), after a warm-up, for each shipped case.

Each change is a rise the server has not seen (no kept answer is reused), as when the rise control
is dragged; the trial point load is then dragged along the span. Prints the median, the 90th
percentile and the slowest, and the share of find, analyse and check in one answer.

Target (issue): the default case (footbridge) answers within 150 ms of a change on 2 cores.

Run: python3 benchmarks/bench_explore.py [case.toml ...]
"""

from __future__ import annotations

import json
import statistics
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
from werkzeug.test import Client

from formfind.explore.answer import Explorer
from formfind.explore.server import ExploreApp

ROOT = Path(__file__).resolve().parents[1]
CHANGES = 20


def measure(path: Path) -> None:
    explorer = Explorer(path)
    client = Client(ExploreApp(explorer, Path("/tmp")))
    start = explorer.start
    headers = {"Host": "127.0.0.1:8765", "Content-Type": "application/json"}

    def ask(seq: int, settings: dict) -> float:
        t0 = time.perf_counter()
        r = client.post("/api/answer", data=json.dumps({"client": "bench", "seq": seq, "settings": settings}),
                        headers=headers)
        elapsed = time.perf_counter() - t0
        if not r.json.get("ok"):
            raise SystemExit(f"{path.name}: {r.json.get('error')}")
        return elapsed

    ask(1, {})  # warm-up: imports, the first solve
    rises = start.rise_m * np.linspace(0.9, 1.1, CHANGES + 1)[1:]
    rise_times = [ask(i + 2, {"rise_m": float(r)}) for i, r in enumerate(rises)]
    xs = start.span_m * np.linspace(0.05, 0.95, CHANGES)
    point_times = [ask(100 + i, {"trial": "point", "trial_x_m": float(x)}) for i, x in enumerate(xs)]

    # where the time of one answer goes
    from formfind.analysis.engine import analyse
    from formfind.design.check import check
    from formfind.design.shape import find_shape
    from formfind.model.case import parse_case

    settings = replace(start, rise_m=start.rise_m * 1.037)
    t0 = time.perf_counter()
    case = parse_case(explorer.table_for(settings), explorer.file)
    shape = find_shape(case)
    t1 = time.perf_counter()
    if shape.section != case.section:
        case = replace(case, section=shape.section)
    result = analyse(case, axis=shape.axis)
    t2 = time.perf_counter()
    check(case, result)
    t3 = time.perf_counter()
    for name, times in (("rise dragged", rise_times), ("point load dragged", point_times)):
        ms = sorted(1000 * t for t in times)
        print(f"{path.name:24s} {case.stations.count:5d} st  {name:20s} median {statistics.median(ms):6.0f} ms  "
              f"p90 {ms[int(0.9 * len(ms)) - 1]:6.0f} ms  slowest {ms[-1]:6.0f} ms")
    print(f"{'':24s} {'':8s} one answer: find {1000 * (t1 - t0):.0f} ms, analyse {1000 * (t2 - t1):.0f} ms, "
          f"check {1000 * (t3 - t2):.0f} ms ({shape.method.value})")


def main(paths: list[str]) -> None:
    files = [Path(p) for p in paths] or sorted((ROOT / "cases").glob("*.toml"))
    for path in files:
        measure(path)


if __name__ == "__main__":
    main(sys.argv[1:])
