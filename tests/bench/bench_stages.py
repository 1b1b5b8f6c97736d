"""Benchmark: CPU time and sparse factorisations per stage of the demo run, in process.

Run on purpose (not collected by pytest)::

    python tests/bench/bench_stages.py [--repeats 3] [--accuracy normal] [--summary out.json]

One warm run first (mesh and solution caches filled), then ``repeats`` runs. For each stage of
:func:`diagap.pipeline.run_design` it prints the median CPU time of this process, the wall time,
and how many sparse LU factorisations (``scipy.sparse.linalg.splu``, also those ARPACK's
shift-invert mode makes) and plate assemblies (:func:`diagap.fem.plate.system.build_plate_system`)
the stage ran. On a shared machine the CPU times and the counts are the steadier comparison
between versions. ``--summary`` writes the summary of the last run as JSON (to compare the values
of two versions). Before each run the in-process memo of assembled plates
(:mod:`diagap.fem.plate.shared`, where the installed version has it) is emptied, so each run does
the work of a fresh ``diagap run`` (``--keep-memo``: keep it, as a sweep of the same design would).
"""
from __future__ import annotations

import argparse
import json
import statistics
import time
from collections import defaultdict


def _counting(module, name, counts, key):
    orig = getattr(module, name)

    def wrapper(*a, **kw):
        counts[key] += 1
        return orig(*a, **kw)

    setattr(module, name, wrapper)
    return orig


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--accuracy", default="normal", choices=("draft", "normal", "fine"))
    ap.add_argument("--summary", default=None)
    ap.add_argument("--keep-memo", action="store_true")
    args = ap.parse_args(argv)

    from scipy.sparse.linalg._dsolve import _superlu

    import diagap.fem.plate.system as system
    import diagap.pipeline as pipeline
    from diagap.design import demo_design

    counts: dict = defaultdict(int)
    _counting(_superlu, "gstrf", counts, "splu")  # every splu, wherever it was imported
    _counting(system, "build_plate_system", counts, "assemble")
    import diagap.fem.plate.solver as solver
    solver.build_plate_system = system.build_plate_system

    rows: dict = defaultdict(lambda: defaultdict(list))
    orig_stage = pipeline._stage

    def stage(result, name, func, *a, **kw):
        before = dict(counts)
        t0, c0 = time.perf_counter(), time.process_time()
        value = orig_stage(result, name, func, *a, **kw)
        rows[name]["cpu"].append(time.process_time() - c0)
        rows[name]["wall"].append(time.perf_counter() - t0)
        for k in ("splu", "assemble"):
            rows[name][k].append(counts[k] - before.get(k, 0))
        return value

    pipeline._stage = stage
    try:
        from diagap.fem.plate.shared import clear_shared_plates
    except ImportError:  # a version without the memo
        def clear_shared_plates():
            return None

    design = demo_design().with_accuracy(args.accuracy)
    pipeline.run_design(design)
    rows.clear()
    totals = defaultdict(list)
    for _ in range(args.repeats):
        if not args.keep_memo:
            clear_shared_plates()
        before = dict(counts)
        t0, c0 = time.perf_counter(), time.process_time()
        result = pipeline.run_design(design)
        totals["cpu"].append(time.process_time() - c0)
        totals["wall"].append(time.perf_counter() - t0)
        for k in ("splu", "assemble"):
            totals[k].append(counts[k] - before.get(k, 0))
    med = statistics.median
    print(f"demo at {args.accuracy}, median of {args.repeats} warm runs in process")
    print(f"  {'stage':<20} {'CPU s':>7} {'wall s':>7} {'LU':>5} {'assemble':>8}")
    for name, r in rows.items():
        print(f"  {name:<20} {med(r['cpu']):7.3f} {med(r['wall']):7.3f} {med(r['splu']):5.0f} "
              f"{med(r['assemble']):8.0f}")
    print(f"  {'run_design':<20} {med(totals['cpu']):7.3f} {med(totals['wall']):7.3f} "
          f"{med(totals['splu']):5.0f} {med(totals['assemble']):8.0f}")
    if args.summary:
        with open(args.summary, "w") as fh:
            json.dump(result.summary(), fh, indent=1, default=str)


if __name__ == "__main__":
    main()
