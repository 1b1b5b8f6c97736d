"""Frequency weighting A of IEC 61672-1:2013 (sound level meters), as a closed formula.

    R_A(f) = f4² f⁴ / [(f² + f1²) √((f² + f2²)(f² + f3²)) (f² + f4²)],
    A(f)   = 20 log10 R_A(f) + 2.00 dB        (the +2.00 dB makes A(1 kHz) = 0 dB),

with the pole frequencies f1 = 20.599, f2 = 107.653, f3 = 737.862, f4 = 12194.217 Hz
(IEC 61672-1:2013, annex E). Frequencies in Hz; the weighting is a power (amplitude) gain
10^(A/20) applied to pressure, so a pressure PSD is weighted by its square.
"""
from __future__ import annotations

import numpy as np

__all__ = ["A_WEIGHTING_POLES_HZ", "AUDIO_BAND_HZ", "WeightingError", "a_weighting_db",
           "a_weighting_gain"]

A_WEIGHTING_POLES_HZ = (20.599, 107.653, 737.862, 12194.217)
_A1000_DB = 2.00
AUDIO_BAND_HZ = (20.0, 20000.0)


class WeightingError(ValueError):
    """Invalid frequency for a weighting curve."""


def _frequencies(frequency_hz) -> np.ndarray:
    f = np.asarray(frequency_hz, dtype=float)
    if not np.all(np.isfinite(f)) or np.any(f < 0):
        raise WeightingError("frequency_hz must be finite and >= 0 Hz")
    return f


def _r_a(f: np.ndarray) -> np.ndarray:
    f1, f2, f3, f4 = A_WEIGHTING_POLES_HZ
    f2_ = f * f
    return (f4**2 * f2_**2 / ((f2_ + f1**2) * np.sqrt((f2_ + f2**2) * (f2_ + f3**2))
                              * (f2_ + f4**2)))


def a_weighting_gain(frequency_hz) -> np.ndarray | float:
    """Linear A-weighting amplitude gain 10^(A(f)/20) (1); 0 at 0 Hz.

    Parameters
    ----------
    frequency_hz : float or array_like
        Frequency (Hz), >= 0.
    """
    f = _frequencies(frequency_hz)
    gain = _r_a(f) * 10.0 ** (_A1000_DB / 20.0)
    return float(gain) if gain.ndim == 0 else gain


def a_weighting_db(frequency_hz) -> np.ndarray | float:
    """A-weighting A(f) in dB (IEC 61672-1:2013); −inf at 0 Hz.

    Parameters
    ----------
    frequency_hz : float or array_like
        Frequency (Hz), >= 0.
    """
    gain = np.asarray(a_weighting_gain(frequency_hz))
    with np.errstate(divide="ignore"):
        db = 20.0 * np.log10(gain)
    return float(db) if db.ndim == 0 else db
