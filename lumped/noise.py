"""Mechanical-thermal noise of the diaphragm from the film damping, and its A-weighted level.

Fluctuation–dissipation (Nyquist) for a mechanical resistance b (N·s/m) in equilibrium at
temperature T (Gabrielson, IEEE Trans. Electron Devices 40 (1993) 903): one-sided force noise

    S_F(f) = 4 k_B T b(f)                       (N²/Hz),

acting on the diaphragm's centre coordinate. Referred to the acoustic input through the
effective area A_eff = ∫φ dA (the force a uniform pressure p produces is p·A_eff), the equivalent
input pressure noise is

    S_p(f) = 4 k_B T b(f) / A_eff²              (Pa²/Hz),

independent of the mechanical transfer function, which signal and noise share. The A-weighted
noise floor over the audio band 20 Hz – 20 kHz is

    p_A² = ∫ S_p(f) |A(f)|² df,   L_A = 10 log10(p_A² / p_ref²) dB SPL,  p_ref = 20 µPa,

with A(f) from :mod:`diagap.lumped.weighting` (IEC 61672-1:2013). The integral runs over a logarithmic
grid (∫ S|A|² f d ln f, Simpson's rule, 801 points), the spectrum being interpolated log-log
between the given frequencies. k_B = 1.380649e-23 J/K (exact, SI 2019).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.integrate import simpson

from diagap.fem.constants import BOLTZMANN_J_PER_K, P_REF_PA
from diagap.lumped.weighting import AUDIO_BAND_HZ, a_weighting_gain

__all__ = ["NoiseError", "ThermalNoise", "a_weighted_level_db",
           "mechanical_thermal_noise", "spl_db"]

_N_GRID = 801


class NoiseError(ValueError):
    """Invalid input to a noise computation."""


def spl_db(pressure_rms_pa: float) -> float:
    """Sound pressure level 20 log10(p / 20 µPa) (dB SPL)."""
    if not pressure_rms_pa > 0:
        raise NoiseError(f"pressure_rms_pa = {pressure_rms_pa!r} must be > 0")
    return 20.0 * float(np.log10(pressure_rms_pa / P_REF_PA))


def _spectrum(frequencies_hz, psd) -> tuple[np.ndarray, np.ndarray]:
    f = np.asarray(frequencies_hz, dtype=float)
    s = np.broadcast_to(np.asarray(psd, dtype=float), f.shape)
    if f.ndim != 1 or f.size < 2 or np.any(np.diff(f) <= 0) or f[0] <= 0:
        raise NoiseError("frequencies_hz must be a 1-D increasing array of >= 2 values > 0 Hz")
    if not (np.all(np.isfinite(s)) and np.all(s >= 0)):
        raise NoiseError("the noise spectrum must be finite and >= 0")
    return f, np.array(s)


def a_weighted_level_db(frequencies_hz, pressure_psd_pa2_per_hz,
                        band_hz: tuple[float, float] = AUDIO_BAND_HZ) -> float:
    """A-weighted level (dB SPL) of a pressure PSD over a band (default 20 Hz – 20 kHz).

    Parameters
    ----------
    frequencies_hz : array_like
        Increasing frequencies (Hz) that cover ``band_hz``.
    pressure_psd_pa2_per_hz : array_like or float
        One-sided pressure PSD (Pa²/Hz) at those frequencies.
    band_hz : (float, float)
        Integration band (Hz).
    """
    f, s = _spectrum(frequencies_hz, pressure_psd_pa2_per_hz)
    lo, hi = band_hz
    if not (0 < lo < hi):
        raise NoiseError(f"band_hz = {band_hz!r} must satisfy 0 < low < high")
    if f[0] > lo * (1 + 1e-9) or f[-1] < hi * (1 - 1e-9):
        raise NoiseError(f"frequencies_hz span [{f[0]:g}, {f[-1]:g}] Hz and must cover the band "
                         f"[{lo:g}, {hi:g}] Hz")
    grid = np.geomspace(lo, hi, _N_GRID)
    if np.all(s > 0):
        sg = np.exp(np.interp(np.log(grid), np.log(f), np.log(s)))
    else:
        sg = np.interp(np.log(grid), np.log(f), s)
    p2 = simpson(sg * a_weighting_gain(grid) ** 2 * grid, x=np.log(grid))
    if not p2 > 0:
        raise NoiseError("the weighted noise power is zero: no level in dB")
    return 10.0 * float(np.log10(p2 / P_REF_PA**2))


@dataclass(frozen=True, eq=False)
class ThermalNoise:
    """Mechanical-thermal noise spectra (SI), arrays follow ``frequencies_hz``.

    Attributes
    ----------
    frequencies_hz : ndarray
    force_psd_n2_per_hz : ndarray
        4 k_B T b(f) on the centre coordinate (N²/Hz).
    pressure_psd_pa2_per_hz : ndarray
        Input-referred pressure PSD 4 k_B T b / A_eff² (Pa²/Hz).
    temperature_k, effective_area_m2 : float
    """

    frequencies_hz: np.ndarray
    force_psd_n2_per_hz: np.ndarray
    pressure_psd_pa2_per_hz: np.ndarray
    temperature_k: float
    effective_area_m2: float

    def a_weighted_spl_db(self, band_hz: tuple[float, float] = AUDIO_BAND_HZ) -> float:
        """A-weighted input-referred noise floor (dB SPL)."""
        return a_weighted_level_db(self.frequencies_hz, self.pressure_psd_pa2_per_hz, band_hz)

    def to_summary(self) -> dict:
        return {
            "noise_dba_spl": self.a_weighted_spl_db(),
            "pressure_noise_density_pa_per_rthz": np.sqrt(self.pressure_psd_pa2_per_hz).tolist(),
            "frequencies_hz": self.frequencies_hz.tolist(),
            "temperature_k": self.temperature_k,
        }


def mechanical_thermal_noise(frequencies_hz, damping_n_s_per_m, temperature_k: float,
                             effective_area_m2: float) -> ThermalNoise:
    """Thermal force and input-referred pressure noise from the damping b(f).

    Parameters
    ----------
    frequencies_hz : array_like
        Increasing frequencies (Hz, > 0).
    damping_n_s_per_m : float or array_like
        Damping b(f) referred to the centre velocity (N·s/m), scalar or one value per frequency.
    temperature_k : float
        Temperature (K), > 0.
    effective_area_m2 : float
        A_eff = ∫φ dA of the mode referred to the centre (m²), > 0.
    """
    f, b = _spectrum(frequencies_hz, damping_n_s_per_m)
    if not temperature_k > 0:
        raise NoiseError(f"temperature_k = {temperature_k!r} must be > 0")
    if not effective_area_m2 > 0:
        raise NoiseError(f"effective_area_m2 = {effective_area_m2!r} must be > 0")
    force = 4.0 * BOLTZMANN_J_PER_K * float(temperature_k) * b
    return ThermalNoise(f, force, force / float(effective_area_m2) ** 2, float(temperature_k),
                        float(effective_area_m2))
