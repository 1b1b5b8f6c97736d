"""Timing and accuracy of the diaphragm mechanics (run on purpose: python tests/bench/bench_mechanics.py).

Demo case (an invented scenario): clamped polysilicon disk, radius 0.5 mm, 1 µm thick,
E = 160 GPa, ν = 0.22, ρ = 2330 kg/m³ (typical values, Sharpe et al. 1997), σ0 = 10 MPa.
Prints the median wall time of a few runs of ``solve_plate`` per accuracy setting (meshes from
the on-disk cache, and once with the cache off), then the accuracy table against the exact
Bessel solution of the plate with tension (see tests/test_plate_validation.py).
"""
from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # tests/ for the exact solutions
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from diagap.fem.plate.solver import PlateProblem, solve_plate  # noqa: E402
from diagap.meshes import cache  # noqa: E402
from test_plate_validation import disk_exact  # noqa: E402

DEMO = PlateProblem("circle", 0.5e-3, 160e9, 0.22, 1e-6, 2330.0, 10e6, "clamped")
KEYS = ("center_compliance_m_per_pa", "volume_compliance_m3_per_pa", "effective_mass_kg",
        "effective_stiffness_n_per_m", "effective_area_m2")


def timed(accuracy: str, runs: int) -> tuple[float, object]:
    times, result = [], None
    for _ in range(runs):
        t0 = time.perf_counter()
        result = solve_plate(DEMO, accuracy)
        times.append(time.perf_counter() - t0)
    return statistics.median(times), result


def main(runs: int = 5) -> None:
    print(f"{'accuracy':<10}{'DOFs (levels)':<22}{'median s (cached mesh)':>24}{'cold mesh s':>14}")
    results = {}
    for accuracy in ("draft", "normal", "fine"):
        solve_plate(DEMO, accuracy)  # warm the mesh cache
        t_warm, res = timed(accuracy, runs if accuracy != "fine" else 1)
        cache.set_enabled(False)
        t_cold, _ = timed(accuracy, 1)
        cache.set_enabled(True)
        results[accuracy] = res
        print(f"{accuracy:<10}{str(res.mesh_dofs):<22}{t_warm:>24.3f}{t_cold:>14.3f}")
    exact = disk_exact(DEMO)
    res = results["normal"]
    print("\nnormal accuracy against the exact Bessel solution (plate with tension)")
    print(f"{'quantity':<32}{'FE':>14}{'exact':>14}{'error':>11}{'estimate':>11}")
    rows = [(k, getattr(res, k), exact[k], res.uncertainty[k]) for k in KEYS]
    for i in range(4):
        rows.append((f"f{i + 1}_hz", res.natural_frequencies_hz[i],
                     exact["natural_frequencies_hz"][i], res.uncertainty[f"natural_frequency_{i + 1}_hz"]))
    for name, fe, ex, est in rows:
        print(f"{name:<32}{fe:>14.6e}{ex:>14.6e}{fe / ex - 1:>11.2e}{est:>11.2e}")
    print(f"distinct frequencies (Hz): {np.round(res.distinct_frequencies_hz, 1).tolist()}")


if __name__ == "__main__":
    main()
