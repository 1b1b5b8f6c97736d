"""Benchmark: the whole `diagap run` pipeline on the demo, and the demo's pull-in alone.

Run on purpose: `python tests/bench/bench_run.py [accuracy]` (not collected by pytest).
Prints the median wall time of each stage over a few repeats (mesh cache warm after the first).
"""
import statistics
import sys
import time

from diagap.fem.coupling.plate import solve_coupled
from diagap.design import demo_design
from diagap.extract import plate_problem
from diagap.pipeline import run_design


def main(accuracy="normal", repeats=3):
    design = demo_design().with_accuracy(accuracy)
    run_design(design)  # warm the mesh cache and imports
    totals, stages = [], {}
    for _ in range(repeats):
        t0 = time.perf_counter()
        res = run_design(design)
        totals.append(time.perf_counter() - t0)
        for k, v in res.timings_s.items():
            stages.setdefault(k, []).append(v)
    print(f"demo run at {accuracy}: median {statistics.median(totals):.2f} s over {repeats}")
    for k, v in stages.items():
        print(f"  {k:<16} {statistics.median(v):7.3f} s")
    b = design.backplate
    pulls = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        solve_coupled(plate_problem(design), accuracy, b.electrode_size_m, b.gap_m,
                      design.electrical.bias_voltage_v)
        pulls.append(time.perf_counter() - t0)
    print(f"pull-in (two mesh levels, bias point, softened mode): median "
          f"{statistics.median(pulls):.2f} s")


if __name__ == "__main__":
    main(*(sys.argv[1:2] or ["normal"]))
