"""Fast path against the full FE: table build time, time per design, worst error per output.

Run: ``python tests/bench/bench_fastpath.py [--accuracy normal] [--designs 50] [--workers 2]``.

1. The scaled diaphragm tables (:mod:`diagap.fastpath.plate`; disk and square, clamped and
   simply supported, three τ pieces each): built (or read from the cache), then ``--designs``
   random diaphragms across the validated range (:func:`random_problems`) against
   :func:`diagap.fem.plate.solver.solve_plate`.
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


def random_problems(n: int, seed: int = 15) -> list:
    """``n`` diaphragms across the validated range (:data:`diagap.fastpath.plate_range.
    VALIDATED_RANGE`): the four shape/edge pairs in turn, every fifth compressed down to 0.9 of
    buckling, the others with τ log-uniform over 0.1 … 1e10; ν over its range; L 0.2–2 mm;
    E 2–300 GPa (lower where a thin film needs it); |σ| <= 5 GPa, h from 15 nm to L/20."""
    from diagap.fastpath.plate_range import VALIDATED_RANGE, buckling_tau
    from diagap.fem.plate.solver import PlateProblem

    rng = np.random.default_rng(seed)
    combos = [(s, e) for s in ("circle", "square") for e in ("clamped", "simply-supported")]
    out = []
    for i in range(n):
        shape, edge = combos[i % 4]
        box = VALIDATED_RANGE[(shape, edge)]
        nu = rng.uniform(box.nu_min, box.nu_max) if box.nu_enters else rng.uniform(-0.9, 0.49)
        length = 10 ** rng.uniform(np.log10(0.2e-3), np.log10(2e-3))
        rho = rng.uniform(1000.0, 8000.0)
        if i % 5 == 0:
            tau = -box.compression * buckling_tau(shape, edge, nu) * rng.random()
        else:
            tau = 10 ** rng.uniform(-1.0, np.log10(box.tau_max))
        k = 12 * (1 - nu * nu)
        e_cap = k * 5e9 * (length / 15e-9) ** 2 / max(abs(tau), 1e-9)
        e = 10 ** rng.uniform(np.log10(min(2e9, e_cap / 3)), np.log10(min(300e9, e_cap)))
        h_max = min(length / 20, length * np.sqrt(k * 5e9 / (e * max(abs(tau), 1e-9))))
        h = 10 ** rng.uniform(np.log10(15e-9), np.log10(h_max))
        sigma = tau * e * h * h / (k * length * length)
        size = length if shape == "circle" else 2 * length
        out.append(PlateProblem(shape, size, e, nu, h, rho, sigma, edge))
    return out


def bench_plate(n: int, accuracy: str, mapper) -> None:
    from diagap.fastpath.plate import PIECES, plate_outputs, plate_tables
    from diagap.fem.plate.solver import solve_plate
    from diagap.sweep.point import flatten_summary

    combos = [(s, e) for s in ("circle", "square") for e in ("clamped", "simply-supported")]
    facts_all, build = {}, 0.0
    for shape, edge in combos:
        for piece in PIECES:
            t0 = time.perf_counter()
            (_, facts), = plate_tables(accuracy, shape, edge, pieces=(piece,),
                                       mapper=mapper).values()
            dt = time.perf_counter() - t0
            build += dt
            print(f"  table {shape} {edge} {piece}: {dt:.1f} s, "
                  f"{facts.get('reference_points')} reference points, "
                  f"uncertified {facts.get('uncertified')}")
            facts_all["reference_points"] = facts_all.get("reference_points", 0) + \
                (facts.get("reference_points") or 0)
            facts_all.setdefault("uncertified", []).extend(facts.get("uncertified", []))
    rows, times = [], []
    for problem in random_problems(n):
        t = time.perf_counter()
        fast = plate_outputs(problem, accuracy)
        times.append(time.perf_counter() - t)
        full, _ = flatten_summary({"mechanics": solve_plate(problem, accuracy).to_summary()})
        rows.append((fast, full))
    left = sum(1 for fast, full in rows for k in full
               if k.startswith("mechanics.distinct") and k not in fast)
    print(f"distinct frequencies left out (merge undecided): {left}")
    _report(f"scaled diaphragms (disk, square; clamped, simply supported), {accuracy}, "
            f"{n} designs", build, facts_all, times, _worst(rows))


#: study boxes around the demo design: process spread of thickness, gap and stress, or the gap
BOXES = {"process": (("diaphragm.thickness", 0.95e-6, 1.05e-6), ("backplate.gap", 3.6e-6, 4.4e-6),
                     ("diaphragm.residual_stress", -10e6, 30e6)),
         "gap": (("backplate.gap", 3.6e-6, 4.4e-6),),
         # the boxes of tests/bench/bench_studies.py: its tolerance box (thickness normal 5 %,
         # gap uniform 10 %, stress normal 1 MPa, ±4σ) and its optimisation bounds
         "tolerance": (("diaphragm.thickness", 0.8e-6, 1.2e-6), ("backplate.gap", 3.6e-6, 4.4e-6),
                       ("diaphragm.residual_stress", 6e6, 14e6)),
         "optimise": (("backplate.hole_radius", 2e-6, 6e-6), ("backplate.hole_pitch", 14e-6, 30e-6),
                      ("backplate.electrode_radius", 0.3e-3, 0.48e-3))}


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
