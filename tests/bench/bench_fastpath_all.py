"""Benchmark: the whole fast summary (global tables, no study box) against the full FE pipeline
on random invented designs, and its time per design. Not collected by pytest; run it on purpose
once the global tables of the accuracy exist (``diagap tables --accuracy draft``).

    python tests/bench/bench_fastpath_all.py                   # 50 designs at draft
    python tests/bench/bench_fastpath_all.py --designs 10 --no-compare   # timing only

Prints, per output, the worst scaled error (relative; 0.01 dB counts as 1e-3 for levels) and
how many designs exceed 1e-3, then the median time of one ``fast_summary`` call with the
tables in memory.
"""
from __future__ import annotations

import argparse
import math
import os
import statistics
import sys
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from test_fastpath_all import NOT_IN_REFERENCE, compare, random_design  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--designs", type=int, default=50)
    ap.add_argument("--accuracy", default="draft")
    ap.add_argument("--seed", type=int, default=5020261202)
    ap.add_argument("--no-compare", action="store_true", help="time the fast path only")
    ap.add_argument("--dump", type=Path, help="write every design's fast and pipeline outputs "
                    "to this JSON file")
    args = ap.parse_args()
    import numpy as np

    from diagap.fastpath import fast_summary
    from diagap.fastpath.study import pipeline_outputs

    rng = np.random.default_rng(args.seed)
    designs = [random_design(rng, args.accuracy) for _ in range(args.designs)]
    fast_summary(designs[0])  # tables read into memory
    times, worst, over, sections = [], defaultdict(float), defaultdict(int), defaultdict(int)
    compared, at, dumped = 0, {}, []
    for i, d in enumerate(designs):
        t0 = time.perf_counter()
        fast = fast_summary(d)
        times.append(time.perf_counter() - t0)
        for s in {k.split(".", 1)[0] for k in fast}:
            sections[s] += 1
        if args.no_compare:
            continue
        full = pipeline_outputs(d)
        if args.dump:
            dumped.append({"fast": fast, "pipeline": full})
        for key, err in compare(fast, full).items():
            compared += 1
            if math.isnan(err):
                if key not in NOT_IN_REFERENCE:
                    over[key] += 1
                    worst[key] = math.inf
                continue
            if err > worst[key]:
                worst[key], at[key] = err, i
            over[key] += err > 1e-3
    print(f"{len(designs)} designs at {args.accuracy}; sections answered: "
          + ", ".join(f"{s} {n}" for s, n in sorted(sections.items())))
    if not args.no_compare:
        for key in sorted(worst, key=worst.get, reverse=True):
            print(f"  {key:60s} worst {worst[key]:.2e} (design {at.get(key, '-')})  "
                  f"over 1e-3: {over[key]}")
        print(f"outputs over 1e-3 (or missing in the pipeline): {sum(over.values())} of "
              f"{compared} compared")
    if args.dump:
        import json

        args.dump.write_text(json.dumps(dumped, default=float))
    print(f"fast_summary: median {1e3 * statistics.median(times):.1f} ms, max "
          f"{1e3 * max(times):.1f} ms per design; load average {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
