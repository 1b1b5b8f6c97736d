"""Fast path against the full FE: table build time, time per design, worst error per output.

Run: ``python tests/bench/bench_fastpath.py [--accuracy normal] [--designs 50] [--workers 2]``.

1. The scaled clamped-disk table (:mod:`diagap.fastpath.plate`): built (or read from the cache),
   then ``--designs`` random clamped disks (radius 0.2–3 mm, thickness 0.3–20 µm, E 50–300 GPa,
   ν 0–0.45, ρ 1000–8000 kg/m³, stress from −0.85 of buckling to the plate model's limit)
   against :func:`diagap.fem.plate.solver.solve_plate`.
2. A study box around the demo design (``--box process``: diaphragm thickness ±5 %, gap ±10 %,
   residual stress ±20 MPa around 10 MPa, i.e. −10 … 30 MPa; ``--box gap``: the gap alone):
   built, then ``--designs`` random designs inside it against the full analysis
   (:func:`diagap.fastpath.study.pipeline_outputs`).

Printed: build time and reference points, median time of one fast evaluation, and the worst
error per output (relative; dB outputs in dB) with the number of outputs above 1e-3 / 0.01 dB.
"""
from __future__ import annotations

import argparse
import time

import numpy as np


def _worst(rows: list) -> dict:
    worst: dict = {}
    for fast, full in rows:
        for k, v in fast.items():
            if k not in full:
                continue
            from diagap.fastpath.grid import is_level_db

            e = abs(v - full[k]) if is_level_db(k) else abs(v / full[k] - 1.0)
            worst[k] = max(worst.get(k, 0.0), e)
    return worst


def _report(title: str, build_s: float, facts: dict, times: list, worst: dict) -> None:
    from diagap.fastpath.grid import is_level_db

    print(f"\n== {title}")
    print(f"table build {build_s:.1f} s, {facts.get('reference_points')} reference points, "
          f"uncertified: {facts.get('uncertified')}")
    print(f"fast evaluation: median {1e3 * np.median(times):.2f} ms, "
          f"max {1e3 * np.max(times):.2f} ms")
    bad = 0
    for k in sorted(worst):
        lim = 0.01 if is_level_db(k) else 1e-3
        flag = "" if worst[k] <= lim else "  <-- above limit"
        bad += worst[k] > lim
        unit = "dB" if is_level_db(k) else "rel"
        print(f"  {k:60s} {worst[k]:.2e} {unit}{flag}")
    print(f"{bad} of {len(worst)} outputs above the limit")


def bench_plate(n: int, accuracy: str, mapper) -> None:
    from diagap.fastpath.plate import PlateScaling, TAU_BUCKLING, plate_summary, plate_table
    from diagap.fem.plate.solver import PlateProblem, solve_plate
    from diagap.sweep.point import flatten_summary

    t0 = time.perf_counter()
    table, facts = plate_table(accuracy, mapper=mapper)
    build = time.perf_counter() - t0
    rng = np.random.default_rng(15)
    rows, times = [], []
    for _ in range(n):
        a = 10 ** rng.uniform(np.log10(0.2e-3), np.log10(3e-3))
        h = 10 ** rng.uniform(np.log10(0.3e-6), np.log10(20e-6))
        h = min(h, a / 12)
        e, nu = rng.uniform(50e9, 300e9), rng.uniform(0.0, 0.45)
        rho = rng.uniform(1000, 8000)
        d = e * h**3 / (12 * (1 - nu**2))
        tau = -0.85 * TAU_BUCKLING + (1e4 + 0.85 * TAU_BUCKLING) * rng.random() ** 3
        sigma = tau * d / (a**2 * h)
        s = PlateScaling(a, d, rho * h, sigma * h)
        t = time.perf_counter()
        fast = plate_summary(table, s, set(facts["uncertified"]))
        times.append(time.perf_counter() - t)
        res = solve_plate(PlateProblem("circle", a, e, nu, h, rho, sigma, "clamped"), accuracy)
        full, _ = flatten_summary({"mechanics": res.to_summary()})
        rows.append((fast, full))
    _report(f"scaled clamped disk, {accuracy}, {n} designs", build, facts, times, _worst(rows))


#: study boxes around the demo design: process spread of thickness, gap and stress, or the gap
BOXES = {"process": (("diaphragm.thickness", 0.95e-6, 1.05e-6), ("backplate.gap", 3.6e-6, 4.4e-6),
                     ("diaphragm.residual_stress", -10e6, 30e6)),
         "gap": (("backplate.gap", 3.6e-6, 4.4e-6),)}


def bench_study(n: int, accuracy: str, mapper, which: str = "process") -> None:
    from diagap import demo_design, with_overrides
    from diagap.fastpath import StudyBox, fast_summary
    from diagap.fastpath.study import pipeline_outputs, study_table

    base = demo_design().with_accuracy(accuracy)
    box = StudyBox(base, BOXES[which])
    t0 = time.perf_counter()
    _, facts = study_table(box, mapper=mapper)
    build = time.perf_counter() - t0
    rng = np.random.default_rng(16)
    rows, times = [], []
    for _ in range(n):
        x = [lo + (hi - lo) * rng.random() for _, lo, hi in box.ranges]
        design = with_overrides(base, dict(zip(box.paths, x)))
        t = time.perf_counter()
        fast = fast_summary(design, box)
        times.append(time.perf_counter() - t)
        rows.append((fast, pipeline_outputs(design)))
    _report(f"study box {which!r} around the demo, {accuracy}, {n} designs", build, facts, times,
            _worst(rows))


def main() -> None:
    from diagap.fastpath.refine import mapper_for

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--accuracy", default="normal")
    ap.add_argument("--designs", type=int, default=50)
    ap.add_argument("--workers", type=int, default=None)
    ap.add_argument("--only", choices=("plate", "study"), default=None)
    ap.add_argument("--box", choices=tuple(BOXES), default="process")
    args = ap.parse_args()
    mapper = mapper_for(args.workers)
    if args.only in (None, "plate"):
        bench_plate(args.designs, args.accuracy, mapper)
    if args.only in (None, "study"):
        bench_study(args.designs, args.accuracy, mapper, args.box)


if __name__ == "__main__":
    main()
