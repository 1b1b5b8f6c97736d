"""Benchmark: parallel efficiency of a local sweep (not collected by pytest; run it on purpose).

A hole-radius sweep of the built-in demo design (an invented scenario) at draft accuracy, run
with 1 worker (in-process) and with N worker processes; each configuration is repeated and the
median wall time kept. Parallel efficiency = T_1 / (N * T_N); the goal is >= 0.8 for N = 2 on an
otherwise idle machine with at least N cores (on a shared machine the number means little).

Each run gets a fresh, empty mesh cache (DIAGAP_CACHE_DIR in a temporary folder), so every run
does the same work, meshing included. The pool start-up (spawned worker processes importing
diagap) is part of T_N, as it is for a user.

    python tests/bench/bench_sweep.py                    # 16 points, 2 workers, 3 repeats
    python tests/bench/bench_sweep.py --points 2 --repeats 1    # quick check that it runs

Exit code 1 when a point failed (the timing is then not a measurement of the pipeline).
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

from diagap.design import demo_design
from diagap.sweep.run import run_sweep


def _variation(points: int) -> str:
    # demo: hole pitch 20 um, gap 4 um; radii well inside (0, pitch/2)
    return f"backplate.hole_radius=2um:8um:{points}" if points > 1 else "backplate.hole_radius=4um"


def _one_run(points: int, workers: int, root: Path):
    out = Path(tempfile.mkdtemp(prefix=f"w{workers}-", dir=root))
    os.environ["DIAGAP_CACHE_DIR"] = str(out / "mesh-cache")  # inherited by spawned workers
    t0 = time.perf_counter()
    res = run_sweep(demo_design(), [_variation(points)], out / "sweep", workers=workers,
                    accuracy="draft", plots=False)
    wall = time.perf_counter() - t0
    errors = [r["error"] for r in res.records if r["status"] == "failed"]
    return wall, errors, [r["wall_time_s"] for r in res.records if r["wall_time_s"]]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=16)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    failed: list[str] = []
    medians = {}
    with tempfile.TemporaryDirectory(prefix="diagap-bench-sweep-") as tmp:
        for workers in (1, args.workers):
            walls, per_point = [], []
            for _ in range(args.repeats):
                wall, errors, times = _one_run(args.points, workers, Path(tmp))
                walls.append(wall)
                per_point += times
                failed += errors
            medians[workers] = statistics.median(walls)
            pp = statistics.median(per_point) if per_point else float("nan")
            print(f"workers={workers}: median wall {medians[workers]:.2f} s over {args.repeats} "
                  f"runs of {args.points} points (runs: {', '.join(f'{w:.2f}' for w in walls)} s; "
                  f"median point {pp:.2f} s)")
    n = args.workers
    eff = medians[1] / (n * medians[n])
    print(f"parallel efficiency T1/({n}*T{n}) = {eff:.2f} (goal >= 0.8); cores available: "
          f"{len(os.sched_getaffinity(0)) if hasattr(os, 'sched_getaffinity') else os.cpu_count()}")
    if failed:
        print(f"NOT A VALID MEASUREMENT: {len(failed)} point runs failed, e.g. {failed[0]}")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
