"""Benchmark: a study's patches of the global tables (diagap.fastpath.patches), their build
time from an empty cache and the fast summary read from them against the full FE pipeline at
random designs of the study's box. Not collected by pytest; run it on purpose.

    DIAGAP_CACHE_DIR=$(mktemp -d) python tests/bench/bench_patches.py          # both boxes
    python tests/bench/bench_patches.py --box optimise --designs 10 --accuracy normal

Boxes (around the built-in demo design, an invented scenario): ``optimise`` the demo
optimisation's bounds (hole radius, pitch, electrode radius), ``process`` a process spread
(gap, backplate thickness, diaphragm thickness, residual stress: every coordinate of the flow
cell moves, the Knudsen number with the gap). Prints the build time of each box's patches
(the diaphragm and film-shape tables are global and built first, timed apart), per output the
worst scaled error (relative; 0.01 dB counts as 1e-3) and how many designs exceed 1e-3.
"""
from __future__ import annotations

import argparse
import math
import os
import sys
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from test_fastpath_all import NOT_IN_REFERENCE, compare  # noqa: E402

BOXES = {
    "optimise": (("backplate.hole_radius", 2e-6, 6e-6), ("backplate.hole_pitch", 14e-6, 30e-6),
                 ("backplate.electrode_radius", 0.3e-3, 0.48e-3)),
    "process": (("backplate.gap", 3.4e-6, 4.6e-6), ("backplate.thickness", 1.5e-6, 2.5e-6),
                ("diaphragm.thickness", 0.9e-6, 1.1e-6),
                ("diaphragm.residual_stress", 5e6, 15e6)),
}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--box", choices=sorted(BOXES), action="append")
    ap.add_argument("--designs", type=int, default=20)
    ap.add_argument("--accuracy", default="draft")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--seed", type=int, default=20261203)
    args = ap.parse_args()
    import numpy as np

    from diagap import demo_design, with_overrides
    from diagap.fastpath import fast_summary
    from diagap.fastpath.catalog import table_status
    from diagap.fastpath.plate import PIECES
    from diagap.fastpath.patches import study_patches
    from diagap.fastpath.refine import close_mapper, mapper_for
    from diagap.fastpath.study import pipeline_outputs

    design = demo_design().with_accuracy(args.accuracy)
    rng = np.random.default_rng(args.seed)
    mapper = mapper_for(args.workers)
    try:
        t0 = time.perf_counter()
        table_status(args.accuracy, mapper, names=[
            *(f"plate-circle-clamped-{p}" for p in PIECES), "shape"])
        print(f"diaphragm and film-shape tables (global): {time.perf_counter() - t0:.1f} s")
        for name in args.box or sorted(BOXES):
            ranges = BOXES[name]
            patches = study_patches(design, ranges)
            t0 = time.perf_counter()
            fast_summary(design, mapper=mapper, patches=patches)
            print(f"box {name}: patches built or read in {time.perf_counter() - t0:.1f} s; "
                  f"{patches!r}; load average {os.getloadavg()[0]:.2f}", flush=True)
            worst, over, at, compared = defaultdict(float), defaultdict(int), {}, 0
            for i in range(args.designs):
                x = {p: lo + (hi - lo) * rng.random() for p, lo, hi in ranges}
                d = with_overrides(design, x)
                fast = fast_summary(d, patches=patches)
                full = pipeline_outputs(d)
                for key, err in compare(fast, full).items():
                    if math.isnan(err):
                        if key not in NOT_IN_REFERENCE:
                            over[key] += 1
                            worst[key] = math.inf
                        continue
                    compared += 1
                    if err > worst[key]:
                        worst[key], at[key] = err, i
                    over[key] += err > 1e-3
            for key in sorted(worst, key=worst.get, reverse=True)[:12]:
                print(f"  {key:60s} worst {worst[key]:.2e} (design {at.get(key, '-')})  "
                      f"over 1e-3: {over[key]}")
            print(f"box {name}: {args.designs} designs, outputs over 1e-3 (or missing in the "
                  f"pipeline): {sum(over.values())} of {compared} compared", flush=True)
    finally:
        close_mapper(mapper)


if __name__ == "__main__":
    main()
