"""Writes a run's output files all at once: nothing is left half-written.

Files are first written into a temporary folder beside OUT and then moved into OUT one by one
(``os.replace`` is atomic per file); an error while producing them leaves OUT as it was.
"""
from __future__ import annotations

import json
import math
import os
import shutil
import tempfile
from pathlib import Path

__all__ = ["write_outputs", "json_ready"]


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


def _producers(result, report: bool = True):
    """(relative file name, function(path)) pairs for every output this run can produce
    (``report=False``: summary.json and response.csv only)."""
    from diagap.report.outputs import report_files

    summary = json_ready(result.summary())
    yield "summary.json", lambda p: p.write_text(json.dumps(summary, indent=2) + "\n",
                                                 encoding="utf-8")
    yield from report_files(result, report=report)


def write_outputs(result, out: Path, report: bool = True) -> list[Path]:
    """Write every output of ``result`` into ``out`` (created if needed).

    Parameters
    ----------
    result : RunResult
        From :func:`diagap.run_design`.
    out : str or Path
        The output folder: summary.json, response.csv, model.cir, report.html, plots/, VTK files.
    report : bool
        False writes summary.json and response.csv only (no plots, HTML, SPICE or VTK).

    Returns
    -------
    list of Path
        The files written. Everything is produced in a temporary folder beside ``out`` first;
        only when all producers have succeeded are the files moved in (names may contain
        sub-folders, ``plots/response.png``).
    """
    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=".diagap-", dir=out.parent))
    try:
        names = []
        for fname, func in _producers(result, report):
            target = tmp / fname
            target.parent.mkdir(parents=True, exist_ok=True)
            func(target)
            names.append(fname)
        written = []
        for fname in names:
            dest = out / fname
            dest.parent.mkdir(parents=True, exist_ok=True)
            os.replace(tmp / fname, dest)
            written.append(dest)
        return written
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
