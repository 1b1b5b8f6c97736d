"""Timing of the large-deflection solver (run on purpose: python tests/bench/bench_large_deflection.py).

Demo case (an invented scenario): clamped polysilicon disk, radius 0.5 mm, 1 µm thick,
E = 160 GPa, ν = 0.22, σ0 = 10 MPa, gap 4 µm. A 10-point pressure ramp (10 Pa … 2 kPa,
logarithmic) at "normal" accuracy with contact at the gap: the median wall time of a few runs of
``solve_large_deflection`` (two mesh levels, meshes from the on-disk cache), then the deflections
with their error estimate and the contact pressure. Target: ≤ 10 s median wall time. The CPU
time is printed too: on a shared machine it is the better measure of the work.
"""
from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from diagap.fem.plate.large_deflection import solve_large_deflection  # noqa: E402
from diagap.fem.plate.solver import PlateProblem  # noqa: E402

DEMO = PlateProblem("circle", 0.5e-3, 160e9, 0.22, 1e-6, 2330.0, 10e6, "clamped")
PRESSURES = np.geomspace(10.0, 2000.0, 10)
GAP = 4e-6


def run(clearance):
    return solve_large_deflection(DEMO, PRESSURES, "normal", clearance_m=clearance)


def main(runs: int = 3) -> None:
    run(GAP)  # warm the mesh cache
    for label, clearance in (("ramp only", None), ("ramp + contact", GAP)):
        times, cpu = [], []
        for _ in range(runs):
            t0, c0 = time.perf_counter(), time.process_time()
            res = run(clearance)
            times.append(time.perf_counter() - t0)
            cpu.append(time.process_time() - c0)
        print(f"{label:<16} median {statistics.median(times):6.2f} s wall, "
              f"{statistics.median(cpu):6.2f} s CPU over {runs} runs (levels {res.mesh_dofs} DOFs)")
    print(f"\n{'p (Pa)':>10}{'w0 (µm)':>12}{'linear (µm)':>13}")
    for p, w, wl in zip(res.pressures_pa, res.center_deflection_m, res.linear_center_deflection_m):
        ws = "contact" if w is None else f"{w * 1e6:.5f}"
        print(f"{p:>10.1f}{ws:>12}{wl * 1e6:>13.5f}")
    print(f"contact pressure {res.contact_pressure_pa:.5g} Pa; relative error estimates "
          f"{res.uncertainty}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 3)
