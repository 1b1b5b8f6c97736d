"""Timing and accuracy of the Stokes flow cell (run on purpose: python tests/bench/bench_stokes.py).

Demo hole pattern (an invented scenario): hexagonal holes of radius 4 µm at 20 µm pitch through
a 2 µm backplate, air at 20 °C and 101.325 kPa (Maxwell slip, σ_v = 1). For gaps of 4, 2, 1 and
0.5 µm it prints

1. the median wall time of one cell solve at normal accuracy (both mesh levels), with the
   meshes from the on-disk cache ("warm") and with every cache off ("cold": gmsh included);
2. the resistance per hole, its error estimate and the closed-form sum (Škvor/Bao + Poiseuille
   + Sampson) relative to it.
"""
from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from diagap.fem.air import air_properties  # noqa: E402
from diagap.fem.film.stokes import (cell_flow_resistance, scaled_cell_resistance,  # noqa: E402
                                    slip_length)
from diagap.meshes import cache  # noqa: E402
from diagap.meshes.flow_cell import FlowCellGeometry  # noqa: E402

GAPS_M = (4e-6, 2e-6, 1e-6, 0.5e-6)
RADIUS_M, PITCH_M, THICKNESS_M = 4e-6, 20e-6, 2e-6


def _median_time(func, runs: int) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main(runs: int = 7) -> None:
    air = air_properties(293.15, 101325.0)
    rc = (3**0.5 / 2 * PITCH_M**2 / 3.141592653589793) ** 0.5
    print(f"{'gap um':>7}{'DOFs':>16}{'warm s':>8}{'cold s':>8}{'Z Pa s/m3':>12}"
          f"{'rel err':>9}{'closed/FE-1':>12}")
    for g in GAPS_M:
        geo = FlowCellGeometry(rc / g, RADIUS_M / g, THICKNESS_M / g, PITCH_M / g)
        slip = slip_length(air.mean_free_path_m) / g
        scaled_cell_resistance(geo, slip)  # warm the mesh cache
        warm = _median_time(lambda: scaled_cell_resistance(geo, slip), runs)
        cache.set_enabled(False)
        cold = _median_time(lambda: scaled_cell_resistance(geo, slip), max(3, runs // 2))
        cache.set_enabled(True)
        res = cell_flow_resistance(g, RADIUS_M, PITCH_M, "hex", THICKNESS_M,
                                   air.viscosity_pa_s, air.mean_free_path_m)
        print(f"{g * 1e6:>7.2g}{str(res.dofs):>16}{warm:>8.3f}{cold:>8.3f}"
              f"{res.resistance_pa_s_per_m3:>12.4e}{res.rel_error:>9.1e}"
              f"{100 * res.closed_form_deviation:>11.1f}%")


if __name__ == "__main__":
    main()
