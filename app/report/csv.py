"""Writer of ``response.csv``: the complex frequency response V_out/p as a table.

Columns: ``frequency_hz``, ``magnitude_db_v_per_pa`` (20·log10|H| re 1 V/Pa), ``phase_deg``
(arg H in degrees, unwrapped along frequency so that it is continuous) and ``magnitude_v_per_pa``.
"""
from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from diagap.names import NAMES

__all__ = ["write_response_csv", "ResponseCsvError", "CSV_COLUMNS"]

#: the header, from the names table (diagap.names, keys "response_csv.<column>")
CSV_COLUMNS = tuple(k.split(".", 1)[1] for k in NAMES if k.startswith("response_csv."))


class ResponseCsvError(ValueError):
    """The arrays given to the CSV writer do not describe a frequency response."""


def _target(path, default_name: str) -> Path:
    p = Path(path)
    return p / default_name if p.is_dir() else p


def write_response_csv(freqs, response, path) -> Path:
    """Write the response table and return the path written.

    Parameters
    ----------
    freqs : array (n,), Hz, > 0.
    response : complex array (n,), V/Pa.
    path : file path, or an existing directory (then ``response.csv`` inside it).
    """
    f = np.asarray(freqs, float)
    h = np.asarray(response, complex)
    if f.ndim != 1 or h.shape != f.shape or f.size == 0:
        raise ResponseCsvError(f"response shape {h.shape}: must match freqs shape {f.shape}")
    if np.any(f <= 0) or np.any(h == 0):
        raise ResponseCsvError("freqs and |response|: must be > 0 at every point")
    mag = np.abs(h)
    phase = np.degrees(np.unwrap(np.angle(h)))
    out = _target(path, "response.csv")
    with open(out, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(CSV_COLUMNS)
        for row in zip(f, 20.0 * np.log10(mag), phase, mag):
            w.writerow([f"{v:.12g}" for v in row])
    return out
