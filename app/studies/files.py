"""Study files: measured curves read from CSV, and outputs written all at once with their plots.

Measured CSV: a header row naming each column's quantity and unit, ``bias (V),capacitance (pF)``
or ``frequency (Hz),sensitivity (dB re 1 V/Pa)``
(units with pint, the grammar of :mod:`diagap.quantities`; the column order is free), then one
row of numbers per point. Blank lines and lines starting with ``#`` are skipped.

Outputs are produced in a hidden temporary folder inside OUT and moved in (``os.replace``) only
when every producer has succeeded, so an error leaves no half-written outputs (the evaluation log
of the study stays: it is what a resumed study reads).
"""
from __future__ import annotations

import csv
import json
import os
import re
import secrets
import shutil
from pathlib import Path

import numpy as np

from diagap.design import DesignError
from diagap.quantities import Field, quantity_text

__all__ = ["read_curve", "write_study_files", "json_text"]

_HEADER = re.compile(r"\s*(?P<name>[^()]+?)\s*\((?P<unit>[^()]+)\)\s*")
_MAX_BYTES = 10_000_000


def read_curve(path, columns: dict, positive: tuple = ()) -> dict:
    """Columns of a measured CSV in SI.

    Parameters
    ----------
    path : path of the CSV file
    columns : dict
        Wanted quantity → its SI unit, e.g. ``{"bias": "V", "capacitance": "F"}``; a header
        matches when its name starts with the quantity (``"capacitance, total (pF)"``).
    positive : tuple of str
        Quantities of ``columns`` whose every value must be above zero (a measured capacitance,
        a frequency).

    Raises
    ------
    DesignError
        Unreadable file, a missing or unit-less column, a wrong dimension or a cell that is not a
        number (one line naming the file, line and column).
    """
    p = Path(path)
    try:
        if p.stat().st_size > _MAX_BYTES:
            raise DesignError(f"{p}: larger than {_MAX_BYTES // 1_000_000} MB")
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise DesignError(f"{p}: file not found") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise DesignError(f"{p}: cannot read ({type(exc).__name__})") from None
    rows = [(n, r) for n, r in enumerate(csv.reader(text.splitlines()), start=1)
            if r and any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    if not rows:
        raise DesignError(f"{p}: empty (expected a header such as 'bias (V),capacitance (pF)')")
    _, header = rows[0]
    index, factor = {}, {}
    for want, unit in columns.items():
        names = want.split("|")
        for j, h in enumerate(header):
            m = _HEADER.fullmatch(h)
            if m and any(m.group("name").lower().startswith(n) for n in names):
                where = f"{p}: column {h.strip()!r}"
                text = m.group("unit").strip()
                if unit == "dB":  # a level: "dB", "dB re 1 V/Pa"
                    if not text.lower().startswith("db"):
                        raise DesignError(f"{where}: expected a level in dB, e.g. "
                                          f"'sensitivity (dB re 1 V/Pa)'")
                    factor[want] = 1.0
                else:
                    factor[want] = quantity_text(where, f"1 {text}", Field(unit))
                index[want] = j
                break
        else:
            raise DesignError(f"{p}: no column '{names[0]} (UNIT)' in the header "
                              f"({','.join(header)}); e.g. 'bias (V),capacitance (pF)'")
    out = {k: [] for k in columns}
    for n, row in rows[1:]:
        for want, j in index.items():
            cell = row[j].strip() if j < len(row) else ""
            try:
                x = float(cell)
            except ValueError:
                raise DesignError(f"{p}:{n}: {header[j].strip()} = {cell!r} is not a number"
                                  ) from None
            if not np.isfinite(x):
                raise DesignError(f"{p}:{n}: {header[j].strip()} = {cell!r} is not finite")
            if want in positive and not x > 0:
                raise DesignError(f"{p}:{n}: {header[j].strip()} = {cell!r}: must be positive")
            out[want].append(x * factor[want])
    return {k: np.array(v) for k, v in out.items()}


def json_text(doc: dict) -> str:
    from diagap.writer import json_ready

    return json.dumps(json_ready(doc), indent=2, allow_nan=False) + "\n"


def write_study_files(out_dir, producers) -> list[Path]:
    """Write ``producers`` (``(relative name, f(path))`` pairs) into ``out_dir`` at once."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    tmp = out / f".study-{os.getpid()}-{secrets.token_hex(6)}.tmp"
    try:
        tmp.mkdir(mode=0o700)
        from diagap.writer import move_into, produce_into

        return move_into(tmp, out, produce_into(tmp, producers))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
