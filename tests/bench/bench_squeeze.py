"""Timing and accuracy of the squeeze film (run on purpose: python tests/bench/bench_squeeze.py).

Demo case (an invented scenario): clamped polysilicon disk of radius 0.5 mm, electrode radius
0.45 mm, gap 4 µm, backplate 2 µm, hexagonal holes of radius 4 µm at 20 µm pitch, air at 20 °C
and 101.325 kPa, clamped-plate shape (1 − r²/a²)² as mode shape, 61 frequencies over
20 Hz – 20 kHz. Prints

1. the median wall time of ``squeeze_film`` per accuracy (meshes from the on-disk cache), the
   damping, its estimated error and the A-weighted thermal noise floor;
2. the homogenised-perforation study: distributed sink vs a film with every hole resolved
   (ideal holes, rigid plate) for electrodes of 3, 5 and 8 pitches, at two mesh sizes of the
   resolved film (helpers from tests/test_squeeze.py).
"""
from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # tests/ for the reference helpers
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from diagap.fem.air import air_properties  # noqa: E402
from diagap.fem.film.perforation import cell_resistance, lattice_cell_area  # noqa: E402
from diagap.fem.film.squeeze import film_impedance, squeeze_film  # noqa: E402
from diagap.lumped.noise import mechanical_thermal_noise  # noqa: E402
from test_squeeze import _film_mesh_with_holes, _poisson_on_holes, rigid  # noqa: E402

RADIUS_M = 0.5e-3
FREQS_HZ = np.geomspace(20.0, 20e3, 61)


def demo(accuracy: str):
    air = air_properties(293.15, 101325.0)
    shape = lambda x, y: (1.0 - (x * x + y * y) / RADIUS_M**2) ** 2  # noqa: E731
    return squeeze_film("circle", 0.45e-3, 4e-6, 4e-6, 20e-6, "hex", 2e-6, air, shape,
                        FREQS_HZ, accuracy)


def timing(runs: int = 7) -> None:
    print(f"{'accuracy':<9}{'DOFs (levels)':<24}{'median s':>9}{'b N·s/m':>13}{'rel. err':>10}"
          f"{'f_c MHz':>9}{'noise dBA':>10}")
    for accuracy in ("draft", "normal", "fine"):
        demo(accuracy)  # warm the mesh cache
        times = []
        for _ in range(runs):
            t0 = time.perf_counter()
            res = demo(accuracy)
            times.append(time.perf_counter() - t0)
        noise = mechanical_thermal_noise(FREQS_HZ, res.damping_spectrum_n_s_per_m, 293.15,
                                         math.pi * RADIUS_M**2 / 3)  # A_eff of (1 − r²/a²)²
        print(f"{accuracy:<9}{str(res.dofs):<24}{statistics.median(times):>9.3f}"
              f"{res.damping_n_s_per_m:>13.6e}{res.damping_relative_uncertainty:>10.1e}"
              f"{res.cutoff_frequency_hz / 1e6:>9.3f}{noise.a_weighted_spl_db():>10.2f}")


def homogenisation(ratio: float = 0.2) -> None:
    print("\nresolved holes vs distributed sink (hex, r/p = 0.2, ideal holes, rigid plate)")
    print(f"{'R/p':>5}{'holes':>7}{'resolved h=0.15':>17}{'h=0.075':>10}{'model':>10}{'dev':>8}")
    mu, g = 1.0 / 12.0, 1.0
    rc = math.sqrt(lattice_cell_area(1.0, "hex") / math.pi)
    sink = 1.0 / (lattice_cell_area(1.0, "hex") * cell_resistance(mu, g, ratio, rc))
    for radius in (3.0, 5.0, 8.0):
        vals = []
        for h in (0.15, 0.075):
            mesh, centres = _film_mesh_with_holes("disk", radius, 1.0, ratio, h)
            vals.append(_poisson_on_holes(mesh, centres, ratio, outer_radius=radius))
        model = film_impedance("circle", radius, g, mu, 1e30, sink, rigid, [0.0]).damping_n_s_per_m
        print(f"{radius:>5.0f}{centres.shape[1]:>7}{vals[0]:>17.6f}{vals[1]:>10.6f}"
              f"{model:>10.6f}{model / vals[1] - 1:>8.2%}")


if __name__ == "__main__":
    timing()
    homogenisation()
