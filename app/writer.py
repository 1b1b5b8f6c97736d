"""Writes a run's output files all at once: nothing is left half-written, nothing stale is kept.

Files are first written into a hidden temporary folder beside OUT (``.diagap-<OUT name>-*``)
and then moved into OUT one by one (``os.replace`` is atomic per file); an error while producing
them leaves OUT as it was. The temporary folder is removed on any exit of :func:`write_outputs`,
including KeyboardInterrupt and the SystemExit that the CLI raises on SIGTERM; one left by a
killed process (SIGKILL) is removed by the next run into the same OUT once it is two hours old.

A run owns its folder's diagap files: after the new files are in place, the files of an earlier
run that this run did not write are removed (only diagap's own outputs,
:func:`diagap.report.outputs.earlier_outputs`); the hidden manifest ``.diagap-outputs.json``, one
of the outputs, lists the files of this run.
"""
from __future__ import annotations

import json
import math
import os
import shutil
import secrets
import time
from pathlib import Path

__all__ = ["write_outputs", "json_ready", "STALE_TMP_S", "produce_into", "move_into"]

STALE_TMP_S = 2 * 3600.0  # a temporary folder older than this belongs to a killed run


def json_ready(obj):
    """Convert numpy scalars/arrays and non-finite floats to plain JSON values."""
    import numpy as np

    if isinstance(obj, dict):
        return {str(k): json_ready(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_ready(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return json_ready(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        x = float(obj)
        return x if math.isfinite(x) else None
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj


def _producers(result, report: bool = True, drawn: dict | None = None):
    """(relative file name, function(path)) pairs for every output this run can produce
    (``report=False``: summary.json and response.csv only)."""
    from diagap.report.outputs import report_files

    summary = json_ready(result.summary())
    yield "summary.json", lambda p: p.write_text(json.dumps(summary, indent=2) + "\n",
                                                 encoding="utf-8")
    yield from report_files(result, report=report, drawn=drawn)


def _tmp_prefix(out: Path) -> str:
    return f".diagap-{out.resolve().name or 'out'}-"


def _remove_stale_temps(out: Path) -> None:
    """Remove temporary folders beside ``out`` older than :data:`STALE_TMP_S` (left by killed
    runs; a run writes its outputs in seconds)."""
    now = time.time()
    for tmp in out.parent.glob(".diagap-*"):
        try:
            if tmp.is_dir() and not tmp.is_symlink() and now - tmp.stat().st_mtime > STALE_TMP_S:
                shutil.rmtree(tmp, ignore_errors=True)
        except OSError:
            pass


def _remove_earlier(out: Path, earlier: set[str], names: list[str]) -> None:
    """Remove the diagap files ``earlier`` of an earlier run that this run did not write."""
    for name in sorted(earlier - set(names)):
        path = out / name
        path.unlink(missing_ok=True)
        if path.parent != out:
            try:
                path.parent.rmdir()  # only if now empty
            except OSError:
                pass


def write_outputs(result, out: Path, report: bool = True, drawn: dict | None = None
                  ) -> list[Path]:
    """Write every output of ``result`` into ``out`` (created if needed).

    Parameters
    ----------
    result : RunResult
        From :func:`diagap.run_design`.
    out : str or Path
        The output folder: summary.json, response.csv, model.cir, report.html, plots/, VTK files.
    report : bool
        False writes summary.json and response.csv only (no plots, HTML, SPICE or VTK).
    drawn : dict, optional
        Plots already drawn while the run was waiting for its second process
        (:func:`diagap.report.outputs.draw_early`).

    Returns
    -------
    list of Path
        The files written. Everything is produced in a temporary folder beside ``out`` first;
        only when all producers have succeeded are the files moved in (names may contain
        sub-folders, ``plots/response.png``). Then the diagap files of an earlier run into
        ``out`` that this run did not produce are removed (other files are kept).
    """
    from diagap.report.outputs import earlier_outputs

    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    _remove_stale_temps(out)
    # the name is fixed before the folder exists, so that a signal arriving at any moment after
    # mkdir still finds the folder in the ``finally`` below (pid + random: no other run's name)
    tmp = out.parent / f"{_tmp_prefix(out)}{os.getpid()}-{secrets.token_hex(6)}"
    try:
        tmp.mkdir(mode=0o700)
        names = produce_into(tmp, _producers(result, report, drawn))
        earlier = earlier_outputs(out)
        written = move_into(tmp, out, names)
        _remove_earlier(out, earlier, names)
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def produce_into(tmp: Path, producers) -> list[str]:
    """Run ``producers`` (``(relative name, f(path))`` pairs) into the folder ``tmp``; the names
    (which may contain sub-folders, ``plots/response.png``) in order."""
    names = []
    for fname, func in producers:
        target = tmp / fname
        target.parent.mkdir(parents=True, exist_ok=True)
        func(target)
        names.append(fname)
    return names


def move_into(tmp: Path, out: Path, names) -> list[Path]:
    """Move the files ``names`` from ``tmp`` into ``out`` (each an atomic rename); the paths."""
    written = []
    for fname in names:
        dest = out / fname
        dest.parent.mkdir(parents=True, exist_ok=True)
        os.replace(tmp / fname, dest)
        written.append(dest)
    return written
