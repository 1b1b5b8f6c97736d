"""The ``diagap`` command line. Only this module prints and chooses exit codes.

Exit codes: 0 success; 2 bad input (design or command-line error: one line on stderr, no output
files); 3 the design collapses (bias at or above pull-in: everything that does not depend on the
bias point is written, the coupled results are marked collapsed); 1 an unexpected internal error.
"""
from __future__ import annotations

import argparse
import json
import logging
import sys
from pathlib import Path

__all__ = ["main", "EXIT_OK", "EXIT_INTERNAL", "EXIT_INPUT", "EXIT_COLLAPSED"]

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_COLLAPSED = 0, 1, 2, 3

_EPILOG = """exit codes:
  0  success
  1  unexpected internal error (please report it, with the design file)
  2  bad input: a design or command-line error, reported on one line; no output files written
  3  the design collapses: the bias voltage is at or above pull-in; outputs that do not depend on
     the bias point are written and the coupled results are marked "collapsed"

CAUTION: bias (polarization) voltages can be hazardous. diagap's results are design estimates; they
do not replace prototypes, measurement, the applicable safety codes or qualified review."""


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version  # slow: only for --version

    try:
        return version("diagap")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "0+unknown"


class _VersionAction(argparse.Action):
    """``--version``: looks the installed version up only when asked."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, default=argparse.SUPPRESS,
                 help="show program's version number and exit"):
        super().__init__(option_strings, dest, nargs=0, default=default, help=help)

    def __call__(self, parser, namespace, values, option_string=None):
        parser._print_message(f"diagap {_version()}\n", sys.stdout)
        parser.exit()


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors on one line with exit code 2."""

    def error(self, message):  # noqa: D401
        self.exit(EXIT_INPUT, f"diagap: error: {message} (see 'diagap {self.prog.split()[-1]} --help')\n"
                  if " " in self.prog else f"diagap: error: {message} (see 'diagap --help')\n")


def add_max_memory(p: argparse.ArgumentParser) -> None:
    """Add ``--max-memory``: the limit of a run's estimated peak memory (a size with a unit)."""
    p.add_argument("--max-memory", metavar="SIZE",
                   help='refuse a run whose estimated peak memory is above SIZE, e.g. "8 GB" '
                   "(default: the design's analysis.max_memory, else 2 GB)")


def max_memory_option(args):
    """The ``--max-memory`` value in bytes (None if not given)."""
    text = getattr(args, "max_memory", None)
    if text is None:
        return None
    from diagap.design import SCHEMA
    from diagap.quantities import option_quantity

    return option_quantity("--max-memory", text, SCHEMA["analysis"]["max_memory"])


def _add_common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--accuracy", choices=("draft", "normal", "fine"),
                   help="override the design's analysis.accuracy")
    p.add_argument("--no-cache", action="store_true", help="do not read or write the mesh cache")
    p.add_argument("-v", "--verbose", action="store_true", help="log progress to stderr")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="diagap", description=(
        "diagap: finite-element design of capacitive microphone capsules - diaphragm mechanics, "
        "air-gap electrostatics with a perforated backplate, pull-in, squeeze-film damping and "
        "noise, a lumped model and an audit of the textbook assumptions."),
        epilog=_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action=_VersionAction)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    run = sub.add_parser("run", help="analyse a design (default: the built-in demo)",
                         description="Analyse a design and write OUT/summary.json and the other "
                         "outputs. With no DESIGN, the built-in demo (an invented scenario).",
                         epilog=_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    run.add_argument("design", nargs="?", help="design file (TOML); omit for the built-in demo")
    run.add_argument("-o", "--out", default="diagap-out", help="output folder (default: diagap-out)")
    run.add_argument("--json", action="store_true", help="print summary.json instead of the table")
    run.add_argument("--no-report", action="store_true",
                     help="write only summary.json and response.csv (no plots, report.html, "
                     "VTK or SPICE files): faster, for scripts")
    add_max_memory(run)
    _add_common(run)

    from diagap.sweep.cli import add_parser as add_sweep_parser

    add_sweep_parser(sub, _add_common)

    from diagap.studies.cli import add_parsers as add_study_parsers

    add_study_parsers(sub, _add_common)

    holes = sub.add_parser(
        "holes", help="evaluate a backplate hole pattern on its own (about a second)",
        description="Capacitance cost of a perforated backplate: the unit-cell capacitance "
        "density at the gap, its ratio to a solid backplate (perforation factor), the open area "
        "and the open-area rule of thumb, with the FE error estimate. Values take units.")
    holes.add_argument("--gap", required=True, help='diaphragm-to-backplate gap, e.g. "4 um"')
    holes.add_argument("--radius", required=True, help='hole radius, e.g. "4 um"')
    holes.add_argument("--pitch", required=True, help='hole pitch, e.g. "20 um"')
    holes.add_argument("--thickness", required=True, help='backplate thickness, e.g. "2 um"')
    holes.add_argument("--lattice", default="hex", choices=("hex", "square"))
    holes.add_argument("--model", default="axisymmetric", choices=("axisymmetric", "3d"),
                       help="unit cell: equal-area axisymmetric cell (default, fast) or the 3D "
                       "lattice prism (slower; a check of the axisymmetric cell)")
    holes.add_argument("--json", action="store_true", help="print JSON")
    _add_common(holes)

    ver = sub.add_parser("verify", help="run built-in validation cases against published references",
                         description="Run the production solvers on problems with published "
                         "closed forms or table values and print FE value, reference, deviation, "
                         "error estimate and tolerance. Exit code 1 if a check fails.")
    _add_common(ver)

    init = sub.add_parser("init", help="write a commented starter design file",
                          description="Write a commented starter design (an invented example).")
    init.add_argument("file", help="path of the new design file (TOML)")
    init.add_argument("--demo", action="store_true", help="write the built-in demo design instead")
    init.add_argument("--force", action="store_true", help="overwrite an existing file")
    return parser


def _cmd_init(args) -> int:
    from diagap.design import DesignError, demo_text, starter_text

    path = Path(args.file)
    if path.exists() and not args.force:
        print(f"diagap: error: {path} exists (use --force to overwrite)", file=sys.stderr)
        return EXIT_INPUT
    if not path.parent.is_dir():
        raise DesignError(f"{path}: the folder {path.parent} does not exist (create it first)")
    try:
        path.write_text(demo_text() if args.demo else starter_text(), encoding="utf-8")
    except OSError as exc:
        raise DesignError(f"{path}: cannot write ({exc.strerror or type(exc).__name__})") from None
    print(f"wrote {path}")
    return EXIT_OK


def check_output_folder(out: Path) -> None:
    """Refuse, before any computation, an output path that cannot become a writable folder:
    a folder is made and removed in the nearest existing folder (this also catches read-only
    file systems and pseudo file systems such as /proc, where permission bits do not tell);
    nothing is left behind."""
    import os
    import tempfile

    from diagap.design import DesignError

    if out.exists() and not out.is_dir():
        raise DesignError(f"-o {out}: exists and is not a folder")
    parent = out
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if not parent.is_dir():
        raise DesignError(f"-o {out}: {parent} is not a folder")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise DesignError(f"-o {out}: cannot write in {parent}")
    try:
        os.rmdir(tempfile.mkdtemp(prefix=".diagap-probe-", dir=parent))
    except OSError as exc:
        raise DesignError(f"-o {out}: cannot create a folder in {parent} "
                          f"({exc.strerror or type(exc).__name__})") from None


def output_error(out: Path, exc: OSError):
    """The one-line input error for an output folder that fails while being written."""
    from diagap.design import DesignError

    where = exc.filename or out
    return DesignError(f"-o {out}: cannot write {where} ({exc.strerror or type(exc).__name__})")


def _cmd_run(args) -> int:
    from diagap.design import demo_design, load_design
    from diagap.pipeline import run_design
    from diagap.table import CAUTION_LINE, summary_table
    from diagap.writer import write_outputs

    design = load_design(args.design) if args.design else demo_design()
    max_memory = max_memory_option(args)
    if args.accuracy:
        design = design.with_accuracy(args.accuracy)
    from diagap.budget import check_run_size

    check_run_size(design, max_memory)
    check_output_folder(Path(args.out))
    drawn: dict = {}  # report plots drawn while the run waits for its second process

    def draw_meanwhile(partial, busy):
        from diagap.report.outputs import draw_early

        draw_early(partial, drawn, busy)
    result = run_design(design, max_memory_b=max_memory,
                        on_wait=None if args.no_report else draw_meanwhile)
    summary = result.summary()
    try:
        write_outputs(result, Path(args.out), report=not args.no_report, drawn=drawn)
    except OSError as exc:
        raise output_error(Path(args.out), exc) from None
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(summary_table(summary))
        for section, why in summary.get("skipped", {}).items():
            print(f"skipped {section}: {why}")
        if design.acoustics is None:
            print("assumed: air at 20 degC and 101.325 kPa for the damping (no [acoustics])")
        print(f"\noutputs written to {Path(args.out)}/")
    if design.electret is not None:
        from diagap.dielectrics import ELECTRET_NOTE, electret_bias_v

        print(f"electret: equivalent bias {electret_bias_v(design):.4g} V; {ELECTRET_NOTE}",
              file=sys.stderr if args.json else sys.stdout)
    code = EXIT_OK
    if result.collapsed:
        cp = summary["coupled"]
        print(f"diagap: design verdict: COLLAPSE - the bias {cp['bias_voltage_v']:g} V is at or "
              f"above the pull-in voltage {cp['pull_in_voltage_v']:.4g} V; results that depend "
              f"on the bias point are not computed (exit code {EXIT_COLLAPSED})", file=sys.stderr)
        code = EXIT_COLLAPSED
    # last line of the output; on stderr with --json so that stdout stays valid JSON
    print(CAUTION_LINE, file=sys.stderr if args.json or result.collapsed else sys.stdout)
    return code


def _cmd_sweep(args) -> int:
    from diagap.sweep.cli import cmd_sweep

    return cmd_sweep(args)


def _cmd_holes(args) -> int:
    from diagap.holes import evaluate_holes, holes_table

    result = evaluate_holes(args.gap, args.radius, args.pitch, args.thickness, args.lattice,
                            args.accuracy or "normal", model=args.model)
    print(json.dumps(result, indent=2) if args.json else holes_table(result))
    return EXIT_OK


def _cmd_verify(args) -> int:
    from diagap.verify import checks_table, run_checks

    checks = run_checks(args.accuracy or "normal")
    print(checks_table(checks))
    return EXIT_OK if all(c.passed for c in checks) else EXIT_INTERNAL


_COMMANDS = {"verify": _cmd_verify, "run": _cmd_run, "init": _cmd_init, "sweep": _cmd_sweep, "holes": _cmd_holes}


def _study_command(name: str):
    def run(args) -> int:
        from diagap.studies.cli import COMMANDS

        return COMMANDS[name](args)
    return run


_COMMANDS.update({name: _study_command(name)
                  for name in ("tolerance", "optimise", "fit", "tables")})


def main(argv: list[str] | None = None) -> int:
    import os
    import warnings

    # numerical warnings are not for the user: results carry their own error estimates and
    # inputs that would make solvers misbehave are refused by the design checks. The variable
    # carries the filter into sweep worker processes (started fresh, not forked).
    saved = os.environ.get("PYTHONWARNINGS")
    if saved is None:
        os.environ["PYTHONWARNINGS"] = "ignore"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return _main(argv)
    finally:
        if saved is None:
            os.environ.pop("PYTHONWARNINGS", None)


def _main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_OK
    logging.basicConfig(level=logging.INFO if getattr(args, "verbose", False) else logging.WARNING,
                        format="diagap: %(message)s")
    logging.getLogger("skfem").setLevel(logging.WARNING)
    if getattr(args, "no_cache", False):
        from diagap.meshes import set_enabled

        set_enabled(False)
    from diagap.design import DesignError

    previous = _exit_on_signals()
    try:
        return _COMMANDS[args.command](args)
    except DesignError as exc:
        print(f"diagap: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("diagap: interrupted", file=sys.stderr)
        return 130
    except ValueError as exc:
        # an input that passed the design checks but that a solver cannot accept
        if type(exc).__module__.startswith(("diagap.fem", "diagap.lumped", "diagap.meshes")):
            print(f"diagap: error: {exc}", file=sys.stderr)
            return EXIT_INPUT
        return _internal(exc, args)
    except Exception as exc:  # noqa: BLE001 - the last line of defence of the CLI
        return _internal(exc, args)
    finally:
        _restore_signals(previous)


def _exit_on_signals() -> dict:
    """SIGTERM and SIGHUP raise SystemExit(128 + signal number), so that ``finally`` blocks run
    (temporary folders are removed, sweep workers stopped); returns the previous handlers."""
    import signal

    def handler(signum, frame):
        raise SystemExit(128 + signum)

    previous = {}
    for name in ("SIGTERM", "SIGHUP"):
        sig = getattr(signal, name, None)
        try:
            previous[sig] = signal.signal(sig, handler)
        except (TypeError, ValueError, OSError):  # no such signal, or not the main thread
            pass
    return previous


def _restore_signals(previous: dict) -> None:
    import signal

    for sig, handler in previous.items():
        signal.signal(sig, signal.SIG_DFL if handler is None else handler)


def _internal(exc: Exception, args) -> int:
    import traceback

    if getattr(args, "verbose", False):
        traceback.print_exc()
    first = str(exc).splitlines()[0] if str(exc) else ""
    print(f"diagap: internal error: {type(exc).__name__}: {first} (run with -v for the "
          "traceback; please report it with the design file)", file=sys.stderr)
    return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
