"""The electrostatics section from the scaled tables against the full stage, over many designs.

Run: ``python tests/bench/bench_fastpath_field.py [--accuracy normal] [--designs 50]
[--workers 2] [--cells 300]``.

1. Builds (or reads from the cache) the scaled cell tables (hex, square) and the rim table of
   ``--accuracy`` (:mod:`diagap.fastpath.cells`, :mod:`diagap.fastpath.fringe`) and prints their
   build time, FE points and held-out errors.
2. ``--cells`` random points of the validated cell box: table against the cell FE, and the
   cell FE's own Richardson estimate there (largest and median).
3. ``--designs`` random clamped disks with random hole patterns, gaps, electrodes and stresses
   inside the validated range (:func:`tests.test_fastpath_field.random_design`):
   :func:`diagap.fastpath.field.electrostatics_outputs` against
   :func:`diagap.stages.electrostatics_stage` after the diaphragm FE, at the same accuracy.

Printed: median and largest time of one fast evaluation and of one full stage, and the worst
relative error per output with the number above 1e-3.
"""
from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np


def bench_tables(accuracy: str, mapper) -> None:
    from diagap.fastpath.cells import cell_table
    from diagap.fastpath.fringe import rim_table

    for name, make in (("cell hex", lambda: cell_table("hex", accuracy, mapper=mapper)),
                       ("cell square", lambda: cell_table("square", accuracy, mapper=mapper)),
                       ("rim", lambda: rim_table(accuracy, mapper=mapper))):
        t0 = time.perf_counter()
        table, facts = make()
        print(f"{name:12s} {time.perf_counter() - t0:7.1f} s (0 when cached), "
              f"{facts.get('reference_points')} FE points, held-out max "
              f"{np.max(table.held_out_error):.2e}, uncertified {facts.get('uncertified')}, "
              f"segments {[len(a.breaks) - 1 for a in table.axes]} x {table.axes[0].n} nodes")


def bench_cells(n: int, accuracy: str) -> None:
    from diagap.fem.field.cell import cell_capacitance
    from diagap.fastpath.cells import CELL_RANGE, cell_table, table_gap_range, table_point

    rng = np.random.default_rng(7)
    g0, g1 = table_gap_range()
    t0, t1 = CELL_RANGE["thickness_over_pitch"]
    for lattice in ("hex", "square"):
        table, _ = cell_table(lattice, accuracy)
        errs, fe_errs = [], []
        for _ in range(n):
            a = rng.uniform(*CELL_RANGE["hole_radius_over_pitch"])
            t = math.exp(rng.uniform(math.log(t0), math.log(t1)))
            g = math.exp(rng.uniform(math.log(g0), math.log(g1)))
            res = cell_capacitance(g, a, 1.0, lattice, t, accuracy)
            errs.append(abs(table(table_point(a, 1.0, t, g))[0] / res.perforation_factor - 1))
            fe_errs.append(res.rel_error)
        print(f"cell {lattice}: table vs FE at {n} random points: max {max(errs):.2e}, median "
              f"{np.median(errs):.2e}; FE Richardson estimate max {max(fe_errs):.2e}, median "
              f"{np.median(fe_errs):.2e}")


def bench_designs(n: int, accuracy: str) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from test_fastpath_field import full_electrostatics, random_design

    from diagap import demo_design
    from diagap.fastpath.field import electrostatics_outputs

    base = demo_design().with_accuracy(accuracy)
    rng = np.random.default_rng(50)
    worst: dict = {}
    fast_t, full_t = [], []
    for _ in range(n):
        design = random_design(rng, base)
        t0 = time.perf_counter()
        fast = electrostatics_outputs(design)
        fast_t.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        full = full_electrostatics(design)
        full_t.append(time.perf_counter() - t0)
        for k, v in fast.items():
            err = abs(v / full[k] - 1.0) if full[k] != 0.0 else abs(v)
            worst[k] = max(worst.get(k, 0.0), err)
    print(f"fast evaluation: median {1e3 * np.median(fast_t):.2f} ms, max "
          f"{1e3 * np.max(fast_t):.2f} ms; full stage (with diaphragm FE): median "
          f"{np.median(full_t):.2f} s")
    bad = 0
    for k in sorted(worst):
        flag = "" if worst[k] <= 1e-3 else "  <-- above 1e-3"
        bad += worst[k] > 1e-3
        print(f"  {k:50s} {worst[k]:.2e}{flag}")
    print(f"{bad} of {len(worst)} outputs above 1e-3 over {n} designs")


def main() -> None:
    from diagap.fastpath.refine import mapper_for

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--accuracy", default="normal", choices=("draft", "normal", "fine"))
    ap.add_argument("--designs", type=int, default=50)
    ap.add_argument("--cells", type=int, default=300)
    ap.add_argument("--workers", type=int, default=None)
    args = ap.parse_args()
    bench_tables(args.accuracy, mapper_for(args.workers))
    bench_cells(args.cells, args.accuracy)
    bench_designs(args.designs, args.accuracy)


if __name__ == "__main__":
    main()
