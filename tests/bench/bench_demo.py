"""Benchmark: the demo as a person waits for it — end to end, the pipeline alone, the report alone.

Run on purpose (not collected by pytest)::

    python tests/bench/bench_demo.py [--repeats 5] [--accuracy normal]

Prints the median over ``repeats`` warm runs (mesh and solution caches filled by one run first) of

- ``diagap run`` end to end in a fresh interpreter (imports, pipeline, every output file), and
  with ``--no-report`` (summary.json and response.csv only);
- the interpreter start and ``import diagap.cli`` alone;
- ``run_design`` alone, in process, with its stage breakdown (the summary's ``timings_s``);
- ``write_outputs`` alone (report, plots, CSV, SPICE, VTK), in process.

Besides wall-clock times the in-process parts report CPU time of this process (the report's
plots are partly drawn in a forked child, whose CPU time is not counted): on a shared machine the
CPU times are the steadier comparison between versions.
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


def _timed_runs(cmd, repeats: int) -> list[float]:
    subprocess.run(cmd, check=True, capture_output=True)  # warm caches
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        times.append(time.perf_counter() - t0)
    return times


def end_to_end(repeats: int, accuracy: str, report: bool = True) -> list[float]:
    with tempfile.TemporaryDirectory() as tmp:
        cmd = [sys.executable, "-m", "diagap.cli", "run", "-o", str(Path(tmp) / "out"),
               "--accuracy", accuracy] + ([] if report else ["--no-report"])
        return _timed_runs(cmd, repeats)


def startup(repeats: int) -> list[float]:
    return _timed_runs([sys.executable, "-c", "import diagap.cli"], repeats)


def in_process(repeats: int, accuracy: str):
    from diagap.design import demo_design
    from diagap.pipeline import run_design
    from diagap.writer import write_outputs

    design = demo_design().with_accuracy(accuracy)
    result = run_design(design)
    out = {"pipeline": [], "report": [], "pipeline_cpu": [], "report_cpu": []}
    stages = {}
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(repeats):
            t0, c0 = time.perf_counter(), time.process_time()
            result = run_design(design)
            out["pipeline"].append(time.perf_counter() - t0)
            out["pipeline_cpu"].append(time.process_time() - c0)
            for k, v in result.timings_s.items():
                stages.setdefault(k, []).append(v)
            t0, c0 = time.perf_counter(), time.process_time()
            write_outputs(result, Path(tmp) / f"out{i}")
            out["report"].append(time.perf_counter() - t0)
            out["report_cpu"].append(time.process_time() - c0)
    return out, stages


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--accuracy", default="normal", choices=("draft", "normal", "fine"))
    args = ap.parse_args(argv)
    e2e = end_to_end(args.repeats, args.accuracy)
    e2e_bare = end_to_end(args.repeats, args.accuracy, report=False)
    start = startup(args.repeats)
    parts, stages = in_process(args.repeats, args.accuracy)
    print(f"demo at {args.accuracy}, median of {args.repeats} warm runs")
    print(f"  diagap run end to end   {_median(e2e):7.2f} s   (min {min(e2e):.2f}, max {max(e2e):.2f})")
    print(f"  ... with --no-report    {_median(e2e_bare):7.2f} s   (min {min(e2e_bare):.2f})")
    print(f"  interpreter + import    {_median(start):7.2f} s")
    print(f"  pipeline alone          {_median(parts['pipeline']):7.2f} s   "
          f"(CPU {_median(parts['pipeline_cpu']):.2f} s)")
    for k, v in stages.items():
        print(f"    {k:<20} {_median(v):7.3f} s")
    print(f"  report alone            {_median(parts['report']):7.2f} s   "
          f"(CPU of this process {_median(parts['report_cpu']):.2f} s)")


if __name__ == "__main__":
    main()
