"""Timing of the distributed frequency response (run on purpose:
python tests/bench/bench_distributed.py [runs]).

Demo design (an invented scenario, app/data/demo.toml) at its "normal" accuracy: the inputs
(c(g) table, rim fringing, air) come from the pipeline stages; then, timed, the whole
``distributed_response`` for the 30 log-spaced frequencies 10 Hz – 100 kHz: the plate mesh
levels, the bias equilibrium on each, the Ritz basis, the film eigenbases (cached after the first
run: the first run is reported separately) and 30 × 2 frequency solves. Prints the median wall
time, the 1 kHz sensitivity, its estimated error and the lumped-vs-distributed difference.
"""
from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from diagap.design import load_design  # noqa: E402
from diagap.extract import plate_problem, response_inputs  # noqa: E402
from diagap.fem.plate.solver import solve_plate  # noqa: E402
from diagap.fem.response import film as film_module  # noqa: E402
from diagap.fem.response.coupled import distributed_response  # noqa: E402
from diagap.lumped.response import frequency_response  # noqa: E402
from diagap.stages import (coupled_stage, damping_stage, electrostatics_stage,  # noqa: E402
                           lumped_model)

DEMO = Path(__file__).resolve().parents[2] / "app" / "data" / "demo.toml"


def main(runs: int = 3) -> None:
    design = load_design(DEMO)
    acc = design.analysis.accuracy
    prob = plate_problem(design)
    mech = solve_plate(prob, acc)
    es = electrostatics_stage(design, mech)
    cp = coupled_stage(design, prob, es, mech)
    damp = damping_stage(design, mech, cp.objects["coupled"].resonance_at_bias_hz)
    model = lumped_model(design, mech, es, cp, damp)
    inp = response_inputs(design, es.objects["density"], es.objects["rim"], damp.objects["air"])
    f = np.logspace(1.0, 5.0, 30)
    times, cold = [], None
    for k in range(runs + 1):
        if k == 0:
            film_module.film_operator.cache_clear()
        t0 = time.perf_counter()
        res = distributed_response(inp, f, acc)
        dt = time.perf_counter() - t0
        if k == 0:
            cold = dt
        else:
            times.append(dt)
    i = int(np.argmin(np.abs(f - 1000.0)))
    lumped = frequency_response(model, f).voltage_per_pa[i]
    print(f"distributed solve, demo, accuracy {acc}, {f.size} frequencies, DOFs {res.dofs}")
    print(f"  first run (film eigenbases computed): {cold:.2f} s")
    print(f"  median of {runs} runs:                 {statistics.median(times):.2f} s")
    print(f"  |v/p| at {f[i]:.0f} Hz: {20 * np.log10(abs(res.voltage_per_pa[i])):.4f} dB re 1 V/Pa "
          f"(est. rel. error {res.voltage_rel_error[i]:.2e}); lumped "
          f"{20 * np.log10(abs(lumped)):.4f} dB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 3)
