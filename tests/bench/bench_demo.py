"""Benchmark: the demo as a person waits for it — end to end, the pipeline alone, the report alone.

Run on purpose (not collected by pytest)::

    python tests/bench/bench_demo.py [--repeats 5] [--accuracy normal]

Prints the median over ``repeats`` warm runs (mesh and solution caches filled by one run first) of

- ``diagap run`` end to end in a fresh interpreter (imports, pipeline, every output file);
- ``run_design`` alone, in process, with its stage breakdown;
- ``write_outputs`` alone (report, plots, CSV, SPICE, VTK), in process.
"""
from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path


def _median(values):
    return statistics.median(values)


def end_to_end(repeats: int, accuracy: str) -> list[float]:
    times = []
    with tempfile.TemporaryDirectory() as tmp:
        cmd = [sys.executable, "-m", "diagap.cli", "run", "-o", str(Path(tmp) / "out"),
               "--accuracy", accuracy]
        subprocess.run(cmd, check=True, capture_output=True)  # warm caches
        for _ in range(repeats):
            t0 = time.perf_counter()
            subprocess.run(cmd, check=True, capture_output=True)
            times.append(time.perf_counter() - t0)
    return times


def in_process(repeats: int, accuracy: str):
    from diagap.design import demo_design
    from diagap.pipeline import run_design
    from diagap.writer import write_outputs

    design = demo_design().with_accuracy(accuracy)
    result = run_design(design)
    pipeline, report, stages = [], [], {}
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(repeats):
            t0 = time.perf_counter()
            result = run_design(design)
            pipeline.append(time.perf_counter() - t0)
            for k, v in result.timings_s.items():
                stages.setdefault(k, []).append(v)
            t0 = time.perf_counter()
            write_outputs(result, Path(tmp) / f"out{i}")
            report.append(time.perf_counter() - t0)
    return pipeline, report, stages


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--accuracy", default="normal", choices=("draft", "normal", "fine"))
    args = ap.parse_args(argv)
    e2e = end_to_end(args.repeats, args.accuracy)
    pipeline, report, stages = in_process(args.repeats, args.accuracy)
    print(f"demo at {args.accuracy}, median of {args.repeats} warm runs")
    print(f"  diagap run end to end   {_median(e2e):7.2f} s   (min {min(e2e):.2f}, max {max(e2e):.2f})")
    print(f"  pipeline alone          {_median(pipeline):7.2f} s")
    for k, v in stages.items():
        print(f"    {k:<20} {_median(v):7.3f} s")
    print(f"  report alone            {_median(report):7.2f} s")


if __name__ == "__main__":
    main()
