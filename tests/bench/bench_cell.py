"""Timing and slow studies of the air-gap electrostatics (not collected by pytest).

Run on purpose, once:  /work/venv/bin/python tests/bench/bench_cell.py [--quick]

1. Axisymmetric cell at normal accuracy, per gap: median wall time with the mesh cache off
   (gmsh meshing included) and on (goal <= 0.5 s per gap).
2. c(g) table over [2g/3, 4g/3] at normal accuracy, cache off (goal <= 3 s).
3. lattice_summary at normal accuracy (goal ~1 s).
4. Axisymmetric (fine) against 3D wedge cells (normal and fine) for hex and square lattices at
   open areas 3–55% (acceptance: |difference| < 5e-4).
5. Rim fringing of the demo electrode pair.
Demo geometry (an invented scenario): gap 4 µm, backplate 2 µm, hex holes r = 4 µm, pitch 20 µm,
electrode radius 0.45 mm, diaphragm radius 0.5 mm.
"""
from __future__ import annotations

import math
import statistics
import sys
import time

from diagap.fem.field.cell_table import capacitance_density_table
from diagap.fem.field.cell import cell_area_m2, cell_capacitance, lattice_summary
from diagap.fem.field.rim import rim_fringing
from diagap.meshes.cache import set_enabled

G, T, A, P = 4e-6, 2e-6, 4e-6, 20e-6


def timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def bench_cell(repeats):
    print("1. axisymmetric cell, normal accuracy (median of %d)" % repeats)
    for g in (2.67e-6, 4e-6, 5.33e-6):
        for cache in (False, True):
            set_enabled(cache)
            cell_capacitance(g, A, P, "hex", T)  # warm imports / fill the cache
            t, r = timed(lambda: cell_capacitance(g, A, P, "hex", T), repeats)
            print(f"   g = {g * 1e6:.2f} um  cache={'on ' if cache else 'off'}  {t:.3f} s  "
                  f"P = {r.perforation_factor:.6f} ± {r.rel_error:.1e}  dofs {r.dofs}")
    set_enabled(True)


def bench_table(repeats):
    set_enabled(False)
    t, tab = timed(lambda: capacitance_density_table(2 * G / 3, 4 * G / 3, A, P, "hex", T),
                   repeats)
    set_enabled(True)
    print(f"2. c(g) table [2g/3, 4g/3], normal, cache off: median {t:.2f} s, "
          f"{tab.gaps_m.size} gaps, fit error {tab.fit_error:.1e}, sample error "
          f"{tab.rel_error:.1e}")


def bench_summary(repeats):
    set_enabled(False)
    t, s = timed(lambda: lattice_summary(G, A, P, "hex", T), repeats)
    set_enabled(True)
    print(f"3. lattice_summary, cache off: median {t:.2f} s (P = {s['perforation_factor']:.6f})")


def study_3d(open_areas, fine_3d):
    print("4. axisymmetric (fine) vs 3D wedge")
    for lattice in ("hex", "square"):
        for oa in open_areas:
            a = math.sqrt(oa * cell_area_m2(P, lattice) / math.pi)
            axi = cell_capacitance(G, a, P, lattice, T, accuracy="fine")
            levels = ("normal", "fine") if fine_3d else ("normal",)
            for acc in levels:
                cube = cell_capacitance(G, a, P, lattice, T, accuracy=acc, model="3d")
                diff = cube.perforation_factor / axi.perforation_factor - 1
                print(f"   {lattice:6s} open {oa:5.3f}  axi {axi.perforation_factor:.6f}  "
                      f"3D[{acc}] {cube.perforation_factor:.6f} ± {cube.rel_error:.1e}  "
                      f"diff {diff:+.1e}  ({cube.dofs} dofs, {cube.runtime_s:.1f} s)")


def bench_rim():
    set_enabled(False)
    t0 = time.perf_counter()
    rim = rim_fringing(0.45e-3, 0.5e-3, G, T)
    set_enabled(True)
    print(f"5. rim fringing (normal, cache off): {time.perf_counter() - t0:.2f} s, "
          f"C_rim = {rim.capacitance_f * 1e15:.3f} fF ± {rim.rel_error:.1e}, "
          f"pair {rim.pair_capacitance_f * 1e12:.4f} pF")


def main(argv):
    quick = "--quick" in argv
    bench_cell(3 if quick else 5)
    bench_table(1 if quick else 3)
    bench_summary(3)
    study_3d((0.03, 0.145, 0.55) if quick else (0.03, 0.145, 0.3, 0.55), fine_3d=not quick)
    bench_rim()


if __name__ == "__main__":
    main(sys.argv[1:])
