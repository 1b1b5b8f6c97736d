"""The ``diagap sweep`` subcommand (argparse parser and command). Only this module prints.

Registered by :mod:`diagap.cli` with :func:`add_parser` and :func:`cmd_sweep`.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["add_parser", "cmd_sweep", "VARY_HELP"]

VARY_HELP = """values:
  --vary PATH=START:STOP:N       N values spaced linearly from START to STOP (both included)
  --vary PATH=START:STOP:N:log   N values spaced geometrically (START, STOP > 0)
  --vary PATH=V1,V2,...          the listed values
  PATH is a design key section.key, e.g. backplate.hole_radius. A value is one number with a
  unit, with or without a space (quote it for the shell): 2um, "2 um", 1e12Pa*s/m^3, 20degC;
  a bare number only for a key without a unit (diaphragm.poisson_ratio=0.2,0.3). Values outside
  the key's allowed range are refused. Keys with named choices take names:
  backplate.hole_lattice=hex,square.
  Several --vary give the cartesian product of their values.

examples:
  diagap sweep my.toml --vary backplate.hole_radius=2um:8um:7
  diagap sweep my.toml --vary "backplate.gap=2 um:6 um:5" --vary electrical.bias_voltage=5,10,20
  diagap sweep my.toml --vary "acoustics.vent_resistance=1e10 Pa*s/m^3:1e14 Pa*s/m^3:5:log"
  diagap sweep my.toml --vary backplate.hole_pitch=15um,20um --scheduler tcp://10.0.0.5:8786

outputs (OUT, default diagap-sweep):
  sweep.csv      one row per point: point, point_id, status (ok | failed | collapsed), the
                 varied inputs in SI, wall_time_s, every output, uncertainty.* (estimated
                 relative discretisation error), error
  sweep.jsonl    the record of every finished point (the CSV is rebuilt from it)
  points/*.json  the full summary of each point
  plots/*.png    each key output against each varied input it changes along (none for a
                 sweep of fewer than two finished points)

resuming: run the same command again; points already finished in OUT (ok, failed or collapsed)
are skipped, only the missing ones are computed, and points that failed because of the
environment (disk full or read-only, out of memory, a killed worker) are computed again
(--retry-failed computes all failed ones again). A point that fails (e.g. an invalid
combination) is recorded with its error and its cause (input, environment, error); the sweep
goes on. A folder holding a sweep of another design or over other --vary keys is refused;
--fresh removes that sweep's files (sweep.*, points/, its plots) and starts a clean one.

exit codes:
  0    the sweep is complete and at least one point succeeded (ok or collapsed)
  1    every point failed, at least one because of the environment or an internal error
  2    bad input: a --vary, design, folder or scheduler error, on one line, no files written;
       or every point failed because of its input (e.g. an invalid combination)
  130  interrupted (143 on SIGTERM): the points finished so far are kept; run the same command
       to resume"""


def add_parser(sub, add_common, epilog: str = "") -> argparse.ArgumentParser:
    """Add ``sweep`` to the subparsers ``sub``; ``add_common`` adds --accuracy, --no-cache, -v."""
    p = sub.add_parser("sweep", help="analyse a design over a grid of parameter values",
                       description="Analyse copies of a design over the cartesian product of "
                       "--vary values, in parallel (local processes or a Dask cluster); results "
                       "are appended to OUT/sweep.csv as points finish, and an interrupted sweep "
                       "resumes where it stopped.",
                       epilog=VARY_HELP + ("\n\n" + epilog if epilog else ""),
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("design", nargs="?", help="design file (TOML); omit for the built-in demo")
    p.add_argument("--vary", action="append", required=True, metavar="PATH=SPEC",
                   help="a design key and its values (see below); repeat for more keys")
    p.add_argument("-o", "--out", default="diagap-sweep",
                   help="output folder (default: diagap-sweep)")
    p.add_argument("--workers", type=positive_int, metavar="N",
                   help="local worker processes (default: the number of cores; 1: no pool)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the points on a Dask cluster at ADDRESS (e.g. tcp://host:8786); "
                   "needs the diagap[cluster] extra")
    p.add_argument("--retry-failed", action="store_true",
                   help="compute failed points of an earlier run again")
    p.add_argument("--fresh", action="store_true",
                   help="remove an earlier sweep's files from OUT and start a clean sweep")
    p.add_argument("--no-plots", action="store_true", help="do not write OUT/plots/*.png")
    p.add_argument("--no-progress", action="store_true", help="no progress bar on stderr")
    from diagap.cli import add_max_memory

    add_max_memory(p)
    add_common(p)
    return p


def whole_number(text: str, low: int = 1) -> int:
    """argparse type: a whole number >= ``low`` (one-line message otherwise)."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if n < low:
        raise argparse.ArgumentTypeError(f"{n} must be >= {low}")
    return n


def positive_int(text: str) -> int:
    """argparse type: a whole number >= 1."""
    return whole_number(text, 1)


def non_negative_int(text: str) -> int:
    """argparse type: a whole number >= 0."""
    return whole_number(text, 0)


def cmd_sweep(args) -> int:
    """Run ``diagap sweep``; returns the exit code (2: bad input, one line on stderr)."""
    from diagap.cli import check_output_folder, max_memory_option, output_error
    from diagap.design import DesignError, demo_design, load_design
    from diagap.sweep.run import run_sweep
    from diagap.sweep.spec import SweepError, parse_vary
    from diagap.table import CAUTION_LINE

    try:
        design = load_design(args.design) if args.design else demo_design()
        design = design.with_max_memory(max_memory_option(args))
        variations = [parse_vary(text) for text in args.vary]
        check_output_folder(Path(args.out))
        try:
            res = run_sweep(design, variations, Path(args.out), workers=args.workers,
                            scheduler=args.scheduler, accuracy=args.accuracy,
                            progress=not args.no_progress, retry_failed=args.retry_failed,
                            plots=not args.no_plots, fresh=args.fresh)
        except OSError as exc:
            raise output_error(Path(args.out), exc) from None
    except (SweepError, DesignError) as exc:
        print(f"diagap: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"diagap: interrupted; finished points are kept in {args.out}/, run the same "
              f"command again to resume", file=sys.stderr)
        return 130
    except SystemExit:  # SIGTERM or SIGHUP (diagap.cli): finished points are kept as well
        print(f"diagap: terminated; finished points are kept in {args.out}/", file=sys.stderr)
        raise
    c = res.counts()
    total = len(res.records)
    print(f"sweep: {total} points ({res.computed} computed, {res.reused} already finished): "
          f"{c['ok']} ok, {c['failed']} failed, {c['collapsed']} collapsed")
    print(f"results: {res.csv_path}")
    if res.plot_files:
        print(f"plots: {res.out_dir / 'plots'}/ ({len(res.plot_files)} files)")
    elif not args.no_plots:
        from diagap.sweep.plots import no_plots_reason

        why = no_plots_reason(res.records) or "no output changes along a varied input"
        print(f"plots: none ({why})")
    status = res.exit_status()
    if status:
        kind = "because of their input" if status == 2 else "(see the cause and error columns)"
        print(f"diagap: error: every point of the sweep failed {kind}; see {res.csv_path}",
              file=sys.stderr)
    print(CAUTION_LINE)
    return status
