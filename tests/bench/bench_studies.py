"""Benchmark: a tolerance study and a 3-variable optimisation of the built-in demo design (an
invented scenario). Not collected by pytest; run it on purpose.

Goals, once the fast tables exist (medians on two cores): 1000 tolerance samples <= 60 s; a
3-variable optimisation <= 2 min; building the tables <= 3 min. Each study first builds its
fast tables (the tolerance study a table over its box; the optimisation, with two or more
workers, its patches of the global tables, diagap.fastpath.patches, unless the global tables
already cover its bounds); the first run of each study measures that build (or its read from the on-disk cache of ``DIAGAP_CACHE_DIR``, when an
earlier run built it: point the variable at an empty folder for a cold build), the repeats
measure the study with the table in memory. Without the fast path every evaluation runs the full
FE pipeline (seconds each); use --samples and --starts small then, and read the per-evaluation
time. Each run writes into a fresh folder, so nothing is replayed from an earlier run.

    python tests/bench/bench_studies.py                         # 1000 samples, 3 starts
    python tests/bench/bench_studies.py --samples 4 --starts 1 --repeats 1 --accuracy draft
"""
from __future__ import annotations

import argparse
import os
import statistics
import tempfile
import time

from diagap.design import demo_design
from diagap.evaluate import fast_path_installed
from diagap.studies.optimise import parse_optimise, run_optimise
from diagap.studies.tolerance import parse_tolerances, run_tolerance

TOLERANCES = {
    "inputs": {"diaphragm.thickness": "normal 5 %", "backplate.gap": "uniform 10 %",
               "diaphragm.residual_stress": "normal 1 MPa"},
    "spec": ["response.sensitivity_db_v_per_pa = -46 +- 1", "coupled.bias_margin <= 0.5",
             "coupled.resonance_at_bias_hz >= 20 kHz"],
}
OPTIMISE = {
    "maximise": "response.snr_db",
    "constraints": ["coupled.bias_margin <= 0.5", "coupled.resonance_at_bias_hz >= 20 kHz"],
    "variables": {"backplate.hole_radius": "2 um .. 6 um", "backplate.hole_pitch": "14 um .. 30 um",
                  "backplate.electrode_radius": "0.3 mm .. 0.48 mm"},
}


def _load() -> str:
    one, five, fifteen = os.getloadavg()
    return f"load average {one:.2f} {five:.2f} {fifteen:.2f} on {os.cpu_count()} cores"


def _timed(run, label: str, describe) -> tuple[float, float]:
    """(wall time, table seconds) of one study in a fresh folder."""
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        res = run(tmp)
        wall = time.perf_counter() - t0
    table = res.tables or {}
    used = "table used" if table.get("used") else f"no table ({table.get('reason', '')})"
    print(f"{label}: {wall:.1f} s ({used}, table {table.get('seconds', 0.0):.1f} s); "
          f"{describe(res)}; {_load()}", flush=True)
    return wall, float(table.get("seconds", 0.0))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--samples", type=int, default=1000)
    ap.add_argument("--starts", type=int, default=3)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--accuracy", default=None)
    ap.add_argument("--exact", action="store_true")
    ap.add_argument("--skip", choices=("tolerance", "optimise"), help="leave one study out")
    args = ap.parse_args()
    design = demo_design()
    if args.accuracy:
        design = design.with_accuracy(args.accuracy)
    print(f"fast path installed: {fast_path_installed()}; accuracy "
          f"{design.analysis.accuracy}; {args.workers} workers; {_load()}", flush=True)
    tol = parse_tolerances({**TOLERANCES, "samples": args.samples}, design)
    opt = parse_optimise({**OPTIMISE, "starts": args.starts}, design)
    lines = []
    if args.skip != "tolerance":
        def tolerance(tmp):
            return run_tolerance(design, tol, tmp, exact=args.exact, workers=args.workers)

        def t_text(res):
            return (f"{res.evaluations} evaluations ({res.evaluator}), yield "
                    f"{res.yield_fraction:.3f}")

        first, build = _timed(tolerance, "tolerance, first run", t_text)
        times = [_timed(tolerance, f"tolerance, repeat {i + 1}", t_text)[0]
                 for i in range(args.repeats)]
        lines.append(f"tolerance table: {build:.1f} s (first run {first:.1f} s in all)")
        if times:
            lines.append(f"tolerance, {args.samples} samples with the table: median "
                         f"{statistics.median(times):.1f} s of {len(times)} (goal 60 s for 1000)")
    if args.skip != "optimise":
        def optimise(tmp):
            return run_optimise(design, opt, tmp, exact=args.exact, workers=args.workers)

        def o_text(res):
            return (f"{res.evaluations} evaluations ({res.evaluator}), optimum "
                    f"{ {k: float(f'{v:.4g}') for k, v in res.optimum.items()} }, feasible "
                    f"{res.feasible}")

        first, build = _timed(optimise, "optimise, first run", o_text)
        times = [_timed(optimise, f"optimise, repeat {i + 1}", o_text)[0]
                 for i in range(args.repeats)]
        lines.append(f"optimise table: {build:.1f} s (first run {first:.1f} s in all)")
        if times:
            lines.append(f"optimise, 3 variables, {args.starts} starts with the table: median "
                         f"{statistics.median(times):.1f} s of {len(times)} (goal 120 s)")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
