"""The ``diagap tolerance``, ``diagap optimise``, ``diagap fit`` and ``diagap tables``
subcommands. Only this module
of the studies prints; registered by :mod:`diagap.cli` with :func:`add_parsers`."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from diagap.sweep.cli import non_negative_int, positive_int

__all__ = ["add_parsers", "COMMANDS"]

_RESUME = ("resuming: finished evaluations are kept in OUT/evaluations.jsonl; run the same "
           "command again after an interruption and only the missing ones are computed.\n"
           "exit codes: 0 success, 2 bad input (one line on stderr, no outputs written), "
           "130 interrupted.")


def _runner_options(p, exact: bool = True) -> None:
    if exact:
        p.add_argument("--exact", action="store_true",
                       help="evaluate every design with the full FE pipeline (default: the "
                       "fast tables where they cover the design)")
    p.add_argument("--workers", type=positive_int, default=1, metavar="K",
                   help="local worker processes (default 1: this process)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="run the evaluations on a Dask "
                   "cluster (e.g. tcp://host:8786); needs the diagap[cluster] extra")
    p.add_argument("--no-progress", action="store_true", help="no progress bar on stderr")


def add_parsers(sub, add_common) -> None:
    """Add the three subcommands to ``sub``."""
    fmt = argparse.RawDescriptionHelpFormatter
    t = sub.add_parser("tolerance", help="spread of outputs and yield under process tolerances",
                       description="Sample the [tolerances] section's varied design values, "
                       "evaluate each sample and write OUT/tolerance.json (statistics, yield, "
                       "sensitivity indices), OUT/samples.csv and histograms.",
                       epilog=_RESUME, formatter_class=fmt)
    t.add_argument("design", help="design file (TOML) with a [tolerances] section")
    t.add_argument("-o", "--out", default="diagap-tolerance", help="output folder")
    t.add_argument("-n", "--samples", type=positive_int, help="number of samples N")
    t.add_argument("--method", choices=("lhs", "sobol"), help="Latin hypercube or Sobol")
    t.add_argument("--seed", type=int, help="seed of the sampling")
    _runner_options(t)
    add_common(t)
    o = sub.add_parser("optimise", help="best objective within limits on other outputs",
                       description="Solve the [optimise] section's problem (SLSQP from several "
                       "starts), check the optimum with the full FE and write OUT/optimise.json "
                       "and a trade-off plot.", epilog=_RESUME, formatter_class=fmt)
    o.add_argument("design", help="design file (TOML) with an [optimise] section")
    o.add_argument("-o", "--out", default="diagap-optimise", help="output folder")
    o.add_argument("--starts", type=positive_int, help="number of starting points")
    _runner_options(o)
    add_common(o)
    f = sub.add_parser("fit", help="fit design values to a measured C-V curve",
                       description="Fit free design values (default residual stress and gap) "
                       "to a measured capacitance-versus-bias curve (total capacitance at the "
                       "terminals, parasitic included) with the coupled FE model; write "
                       "OUT/fit.json (values, 95 % intervals, residual) and a residual plot.",
                       formatter_class=fmt, epilog="CSV: a header such as 'bias (V),capacitance "
                       "(pF)', then one row of numbers per point.\n" + _RESUME)
    f.add_argument("design", help="design file (TOML): the nominal design")
    f.add_argument("--cv", required=True, metavar="FILE.csv", help="the measured C-V curve")
    f.add_argument("--response", metavar="FILE.csv", help="a measured frequency response "
                   "fitted together with the C-V curve (header such as 'frequency (Hz),"
                   "sensitivity (dB re 1 V/Pa)'; each evaluation runs the pipeline)")
    f.add_argument("--free", metavar="PATH,PATH", help="free design values (default "
                   "diaphragm.residual_stress,backplate.gap)")
    f.add_argument("-o", "--out", default="diagap-fit", help="output folder")
    f.add_argument("--starts", type=non_negative_int, metavar="N", help="space-filling starts "
                   "searched besides the design's own values (default 4 per free value; 0: "
                   "the local fit starts from the design alone)")
    f.add_argument("--local-fits", type=positive_int, metavar="K", help="local fits run from "
                   "the best starts (default 2); the lowest misfit wins")
    _runner_options(f, exact=False)
    add_common(f)
    b = sub.add_parser("tables", help="build the fast path's global tables (or list them)",
                       description="Build, or with --check only look up, the scaled tables of "
                       "an accuracy setting that the fast path reads: diaphragms, backplate "
                       "cells, electrode rim, flow cell and film shape. They are cached on disk "
                       "and refined until held-out FE points agree within their tolerance "
                       "(1e-3); building them all takes minutes to hours on two cores, once.",
                       epilog="exit codes: 0 success, 2 bad input (one line on stderr).",
                       formatter_class=fmt)
    b.add_argument("--check", action="store_true",
                   help="compute nothing: list which tables exist in the cache")
    b.add_argument("--only", metavar="NAME,NAME", help="a subset of the tables (names as "
                   "listed by --check)")
    _runner_options(b, exact=False)
    add_common(b)


def _load(args, section):
    from diagap.studies.spec import load_study

    design, table = load_study(args.design, section)
    if args.accuracy:
        design = design.with_accuracy(args.accuracy)
    return design, table


def _cmd_tolerance(args) -> int:
    from dataclasses import replace

    from diagap.studies.files import json_text, write_study_files
    from diagap.studies.plots import histogram
    from diagap.studies.tolerance import parse_tolerances, run_tolerance

    design, table = _load(args, "tolerances")
    spec = parse_tolerances(table, design)
    spec = replace(spec, **{k: v for k, v in (("samples", args.samples), ("method", args.method),
                                              ("seed", args.seed)) if v is not None})
    res = run_tolerance(design, spec, Path(args.out), exact=args.exact, workers=args.workers,
                        scheduler=args.scheduler, progress=not args.no_progress)
    _table_note(res.tables)
    doc = res.to_json()
    files = [("tolerance.json", lambda p: p.write_text(json_text(doc), encoding="utf-8")),
             ("samples.csv", lambda p: _samples_csv(p, res))]
    for k, y in res.outputs.items():
        lims = [lim for lim in spec.limits if lim.path == k]
        files.append((f"plots/{k}.png", lambda p, k=k, y=y, lims=lims: histogram(k, y, lims, p)))
    write_study_files(Path(args.out), files)
    print(f"tolerance: {doc['samples']} samples ({res.computed} computed now, evaluator "
          f"{res.evaluator}), {res.failed} could not be evaluated")
    for k, s in doc["outputs"].items():
        if s["mean"] is not None:
            print(f"  {k}: mean {s['mean']:.6g}, std {s['std']:.3g}, p05 {s['p05']:.6g}, "
                  f"p95 {s['p95']:.6g}")
    print(f"yield: {doc['yield']:.1%}" + ("" if spec.limits else " (no spec limits given)"))
    print(f"outputs written to {Path(args.out)}/")
    return 0


def _table_note(tables) -> None:
    """Say on stderr why a study ran without its fast table (the points ran the full FE)."""
    if tables and not tables.get("used") and tables.get("reason"):
        print(f"diagap: note: fast table not used, points ran the full FE: {tables['reason']}",
              file=sys.stderr)


def _samples_csv(path, res) -> None:
    import csv

    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        keys = list(res.outputs)
        w.writerow(["sample", *(v.path for v in res.spec.inputs), *keys, "meets_spec"])
        for j in range(len(res.passed)):
            w.writerow([j, *(f"{x:.12g}" for x in res.inputs[j]),
                        *(f"{res.outputs[k][j]:.12g}" for k in keys), bool(res.passed[j])])


def _cmd_optimise(args) -> int:
    from dataclasses import replace

    from diagap.studies.files import json_text, write_study_files
    from diagap.studies.optimise import parse_optimise, run_optimise
    from diagap.studies.plots import tradeoff

    design, table = _load(args, "optimise")
    spec = parse_optimise(table, design)
    if args.starts:
        spec = replace(spec, starts=args.starts)
    res = run_optimise(design, spec, Path(args.out), exact=args.exact, workers=args.workers,
                       scheduler=args.scheduler, progress=not args.no_progress)
    _table_note(res.tables)
    doc = res.to_json()
    other = spec.constraints[0].path if spec.constraints else spec.objective
    write_study_files(Path(args.out), [
        ("optimise.json", lambda p: p.write_text(json_text(doc), encoding="utf-8")),
        ("plots/tradeoff.png",
         lambda p: tradeoff(spec.objective, other, res.history, res.values, p))])
    print(f"optimise: {res.evaluations} evaluations computed now; optimum:")
    for k, v in res.optimum.items():
        print(f"  {k} = {v:.6g}")
    print(f"  {spec.objective} = {res.values[spec.objective]:.6g} (full FE check)")
    print(f"constraints met in the full FE check: {'yes' if res.feasible else 'NO'}; active: "
          f"{', '.join(res.active) or 'none'}")
    print(f"outputs written to {Path(args.out)}/")
    return 0 if res.feasible else 1


def _cmd_fit(args) -> int:
    from diagap.design import load_design
    from diagap.studies.cvmodel import CVModel
    from diagap.studies.files import json_text, read_curve, write_study_files
    from diagap.studies.fit import DEFAULT_FREE, fit_cv
    from diagap.studies.plots import cv_fit

    design = load_design(args.design)
    if args.accuracy:
        design = design.with_accuracy(args.accuracy)
    free = tuple(s.strip() for s in args.free.split(",")) if args.free else DEFAULT_FREE
    data = read_curve(args.cv, {"bias": "V", "capacitance": "F"}, positive=("capacitance",))
    response = None
    if args.response:
        r = read_curve(args.response, {"frequency": "Hz", "sensitivity|level|magnitude": "dB"},
                       positive=("frequency",))
        response = (r["frequency"], r["sensitivity|level|magnitude"])
    from diagap.cli import check_output_folder

    check_output_folder(Path(args.out))
    client, owned = None, False
    if args.scheduler is not None:  # refuse an unreachable cluster before building the model
        from diagap.studies.runner import connect

        client, owned = connect(args.scheduler)
    try:
        model = CVModel(design)
        res = fit_cv(model, data["bias"], data["capacitance"], free, response=response,
                     out_dir=Path(args.out), workers=args.workers, scheduler=client,
                     progress=not args.no_progress, starts=args.starts,
                     local_fits=args.local_fits)
    finally:
        if owned:
            client.close()
    doc = res.to_json()
    files = [("fit.json", lambda p: p.write_text(json_text(doc), encoding="utf-8")),
             ("plots/cv_fit.png",
              lambda p: cv_fit(res.biases_v, res.measured_f, res.fitted_f, p))]
    if response is not None:
        from diagap.studies.plots import response_fit

        r = doc["response"]
        files.append(("plots/response_fit.png", lambda p: response_fit(
            response[0], response[1], r["fitted_db"], p)))
    write_study_files(Path(args.out), files)
    for k, v in doc["parameters"].items():
        lo, hi = v["ci95"]
        ci = "not identifiable" if lo is None else f"95 % interval [{lo:.6g}, {hi:.6g}]"
        print(f"  {k} = {v['value']:.6g} {v['unit']} ({ci})")
    print(f"rms residual: {res.rms_residual * 1e15:.3g} fF over {res.biases_v.size} points "
          f"({res.evaluations} model evaluations, {res.computed} computed now)")
    if response is not None:
        print(f"response: rms residual {doc['response']['rms_residual_db']:.3g} dB over "
              f"{doc['response']['points']} points")
    for w in res.warnings:
        print(f"diagap: warning: {w}", file=sys.stderr)
    print(f"outputs written to {Path(args.out)}/")
    return 0


def _cmd_tables(args) -> int:
    from diagap.fastpath.catalog import table_names, table_status
    from diagap.fastpath.refine import close_mapper, mapper_for
    from diagap.sweep.spec import SweepError

    accuracy = args.accuracy or "normal"
    names = None
    if args.only:
        names = [n.strip() for n in args.only.split(",") if n.strip()]
        bad = [n for n in names if n not in table_names()]
        if bad or not names:
            raise SweepError(f"--only {args.only!r}: unknown table {bad[0] if bad else ''!r}; "
                             f"allowed: {', '.join(table_names())}")
    client, owned = None, False
    if args.scheduler is not None and not args.check:
        from diagap.studies.runner import connect

        client, owned = connect(args.scheduler)
    print(f"fast-path tables at accuracy {accuracy!r}"
          + (" (look-up only)" if args.check else ""), flush=True)

    def show(st) -> None:
        if st.state == "missing":
            print(f"  {st.name:40s} missing", flush=True)
            return
        cert = "certified" if not st.uncertified else \
            f"uncertified: {', '.join(st.uncertified)}"
        print(f"  {st.name:40s} {st.state:6s} {st.points:6d} FE points, held-out error "
              f"{st.held_out_error:.2e}, {st.seconds:7.1f} s, {cert}", flush=True)

    mapper = None if args.check else mapper_for(args.workers, client)
    try:
        rows = table_status(accuracy, mapper, build=not args.check, names=names, on_table=show)
    finally:
        close_mapper(mapper)
        if owned:
            client.close()
    missing = sum(r.state == "missing" for r in rows)
    print(f"{len(rows) - missing} of {len(rows)} tables available"
          + (f"; build the missing ones with: diagap tables --accuracy {accuracy}"
             if missing else ""))
    return 0


def _guard(func):
    def run(args) -> int:
        from diagap.sweep.spec import SweepError

        try:
            return func(args)
        except SweepError as exc:
            print(f"diagap: error: {exc}", file=sys.stderr)
            return 2
        except KeyboardInterrupt:
            print(f"diagap: interrupted; finished evaluations are kept in {args.out}/, run the "
                  f"same command again to resume", file=sys.stderr)
            return 130
    return run


COMMANDS = {"tolerance": _guard(_cmd_tolerance), "optimise": _guard(_cmd_optimise),
            "fit": _guard(_cmd_fit), "tables": _guard(_cmd_tables)}
