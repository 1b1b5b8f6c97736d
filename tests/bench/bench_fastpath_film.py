"""Damping outputs from the scaled cell table and radial film against the full damping stage.

Run: ``python tests/bench/bench_fastpath_film.py [--accuracy normal] [--designs 50]
[--workers 2]``.

1. The perforation-cell table (:mod:`diagap.fastpath.flowcell`, both lattices): built (or read
   from the cache), with build time, Stokes FE points and held-out errors.
2. The slip Hagen–Poiseuille resistance of long holes, and the demo's fast summary.
3. ``--designs`` random designs across the validated range (hole radius, pitch, backplate
   thickness, gap, lattice, temperature and pressure → Knudsen number, electrode radius,
   residual stress; the generator of tests/test_fastpath_film.py) against ``solve_plate`` +
   ``damping_stage`` at the same accuracy.

Printed: table build times (shape and cell tables) and FE points, the demo's time per
``damping_outputs`` (wall and CPU, tables in memory; ``--profile`` for a cProfile listing),
median time of one fast evaluation, worst error per
output as a fraction of its limit (1e-3 relative or 0.01 dB; the cell table's CELL_TOL for
outputs carrying the Stokes resistance) and the outputs above it.
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np


def _time_demo(demo, profile: bool) -> None:
    """Wall and CPU time of one ``damping_outputs`` of the demo (tables in memory), median
    of 3 × 20 calls; with ``profile`` the cProfile listing of one call."""
    from diagap.extract import plate_problem
    from diagap.fastpath.film import damping_outputs
    from diagap.fem.plate.solver import solve_plate

    mech = solve_plate(plate_problem(demo), accuracy=demo.analysis.accuracy)
    outputs = {"mechanics.static_shape_area_m2": mech.static_shape_area_m2,
               "mechanics.natural_frequencies_hz_1": float(mech.natural_frequencies_hz[0])}
    damping_outputs(demo, outputs)
    wall, cpu = [], []
    for _ in range(3):
        t, c = time.perf_counter(), time.process_time()
        for _ in range(20):
            damping_outputs(demo, outputs)
        wall.append((time.perf_counter() - t) / 20)
        cpu.append((time.process_time() - c) / 20)
    print(f"demo damping_outputs: {1e3 * np.median(wall):.1f} ms wall, "
          f"{1e3 * np.median(cpu):.1f} ms CPU per evaluation", flush=True)
    if profile:
        import cProfile
        import pstats

        prof = cProfile.Profile()
        prof.runcall(damping_outputs, demo, outputs)
        pstats.Stats(prof).sort_stats("cumtime").print_stats(15)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--accuracy", default="normal")
    ap.add_argument("--designs", type=int, default=50)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--seed", type=int, default=11)
    ap.add_argument("--profile", action="store_true", help="cProfile one demo evaluation")
    args = ap.parse_args()

    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from test_fastpath_film import errors, random_design, stage_outputs

    from diagap.fastpath.flowcell import cell_resistance_scaled, cell_table
    from diagap.fastpath.film import damping_outputs
    from diagap.fastpath.refine import mapper_for

    from diagap.fastpath.shape import shape_table

    t = time.perf_counter()
    shape, facts = shape_table(args.accuracy, mapper=mapper_for(args.workers))
    print(f"shape table {args.accuracy}: {time.perf_counter() - t:.1f} s (0 if cached), "
          f"{facts['reference_points']} plate FE points, held-out error "
          f"{dict(zip(shape.names, np.round(shape.held_out_error, 6)))}", flush=True)
    t = time.perf_counter()
    table, facts = cell_table(args.accuracy, mapper=mapper_for(args.workers))
    print(f"cell table {args.accuracy}: {time.perf_counter() - t:.1f} s (0 if cached), "
          f"{facts['reference_points']} Stokes FE points, segments "
          f"{[len(a.breaks) - 1 for a in table.axes]}, held-out error "
          f"{dict(zip(table.names, np.round(table.held_out_error, 6)))}, "
          f"uncertified {facts['uncertified']}", flush=True)

    # the Hagen–Poiseuille law with first-order Maxwell slip, Q = πr⁴Δp/(8μℓ)·(1 + 4λ/r)
    # (Karniadakis, Beskok & Aluru, Microflows and Nanoflows, Springer 2005, §4.1 [from memory]):
    # lengthening a long hole by Δt adds 8μΔt/(πr⁴(1 + 4λ/r))
    q, gc, kn = 0.2, 0.5, 0.02  # r/R_c, g/R_c, λ/g
    lo, hi = (cell_resistance_scaled(table, (q, gc, tc, kn)) for tc in (3.0, 4.0))
    r, dt = q / gc, 1.0 / gc  # in gaps
    ref = 8.0 * dt / (np.pi * r**4 * (1.0 + 4.0 * kn / r))
    print(f"long hole: added resistance / slip Poiseuille - 1 = {(hi - lo) / ref - 1:.2e}")

    from diagap import demo_design, with_overrides
    from diagap.fastpath import fast_summary

    demo = with_overrides(demo_design(), {"analysis.accuracy": args.accuracy})
    full, _, _ = stage_outputs(demo)
    fast = {k: v for k, v in fast_summary(demo).items() if k.startswith("damping.")}
    err = errors(fast, full)
    print(f"demo fast summary: {len(fast)} damping outputs, worst {max(err.values()):.3f} of "
          f"its limit ({max(err, key=err.get)})")
    _time_demo(demo, args.profile)

    rng = np.random.default_rng(args.seed)
    worst: dict = {}
    times, stage_times = [], []
    for i in range(args.designs):
        design = random_design(rng, args.accuracy)
        t = time.perf_counter()
        full, mech, f1 = stage_outputs(design)
        stage_times.append(time.perf_counter() - t)
        t = time.perf_counter()
        fast = damping_outputs(design, mech, resonance_hz=f1)
        times.append(time.perf_counter() - t)
        err = errors(fast, full)
        for k, e in err.items():
            worst[k] = max(worst.get(k, 0.0), e)
        print(f"design {i + 1}: worst {max(err.values()):.3f} of its limit "
              f"({max(err, key=err.get)})", flush=True)
    print(f"\nfast evaluation: median {1e3 * np.median(times):.1f} ms, max "
          f"{1e3 * np.max(times):.1f} ms; full stage (plate + damping): median "
          f"{np.median(stage_times):.2f} s")
    for k in sorted(worst):
        print(f"  {k:70s} {worst[k]:.3f} of its limit{'  <-- above' if worst[k] > 1 else ''}")


if __name__ == "__main__":
    main()
