"""Benchmark: a tolerance study and a 3-variable optimisation of the built-in demo design (an
invented scenario). Not collected by pytest; run it on purpose.

Goals, once the fast tables exist (medians on two cores): 1000 tolerance samples <= 60 s; a
3-variable optimisation <= 2 min. Without the fast path every evaluation runs the full FE
pipeline (seconds each); use --samples and --starts small then, and read the per-evaluation time.
Each repeat writes into a fresh folder, so nothing is replayed from an earlier run.

    python tests/bench/bench_studies.py                         # 1000 samples, 3 starts
    python tests/bench/bench_studies.py --samples 4 --starts 1 --repeats 1 --accuracy draft
"""
from __future__ import annotations

import argparse
import statistics
import tempfile
import time

from diagap.design import demo_design
from diagap.evaluate import fast_path_installed
from diagap.studies.optimise import parse_optimise, run_optimise
from diagap.studies.tolerance import parse_tolerances, run_tolerance

TOLERANCES = {
    "inputs": {"diaphragm.thickness": "normal 5 %", "backplate.gap": "uniform 10 %",
               "diaphragm.residual_stress": "normal 2 MPa"},
    "spec": ["response.sensitivity_db_v_per_pa = -46 +- 1", "coupled.bias_margin <= 0.5",
             "coupled.resonance_at_bias_hz >= 20 kHz"],
}
OPTIMISE = {
    "maximise": "response.snr_db",
    "constraints": ["coupled.bias_margin <= 0.5", "coupled.resonance_at_bias_hz >= 20 kHz"],
    "variables": {"backplate.hole_radius": "2 um .. 6 um", "backplate.hole_pitch": "14 um .. 30 um",
                  "backplate.electrode_radius": "0.3 mm .. 0.48 mm"},
}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--samples", type=int, default=1000)
    ap.add_argument("--starts", type=int, default=3)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--accuracy", default=None)
    ap.add_argument("--exact", action="store_true")
    args = ap.parse_args()
    design = demo_design()
    if args.accuracy:
        design = design.with_accuracy(args.accuracy)
    print(f"fast path installed: {fast_path_installed()}")
    tol = parse_tolerances({**TOLERANCES, "samples": args.samples}, design)
    opt = parse_optimise({**OPTIMISE, "starts": args.starts}, design)
    t_tol, t_opt = [], []
    for _ in range(args.repeats):
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            res = run_tolerance(design, tol, tmp, exact=args.exact, workers=args.workers)
            t_tol.append(time.perf_counter() - t0)
            print(f"tolerance: {res.evaluations} evaluations ({res.evaluator}) in "
                  f"{t_tol[-1]:.1f} s, yield {res.yield_fraction:.3f}")
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            res = run_optimise(design, opt, tmp, exact=args.exact, workers=args.workers)
            t_opt.append(time.perf_counter() - t0)
            print(f"optimise: {res.evaluations} evaluations in {t_opt[-1]:.1f} s, optimum "
                  f"{res.optimum}, feasible {res.feasible}")
    print(f"median: tolerance {statistics.median(t_tol):.1f} s (goal 60 s for 1000 samples), "
          f"optimise {statistics.median(t_opt):.1f} s (goal 120 s)")


if __name__ == "__main__":
    main()
