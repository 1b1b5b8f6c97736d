"""Quasi-static distortion of the capsule from its static capacitance–pressure curve.

Below the resonance the diaphragm follows the sound pressure statically: with the static
capacitance C(p) (mechanical stiffening, electrostatic force and the nonlinear C of the deflected
shape all included, from :mod:`diagap.fem.plate.large_deflection`), a sound pressure p(t) = p̂ sin ωt
gives C(t) = C(p(t)). Under constant charge (bias through a large resistor, above the electrical
high-pass) Q = C_b V_b, so the output voltage is

    v(t) = Q / (C(t) + C_s) − V_b = V_b [(C_b + C_s)/(C(t) + C_s) − 1],

C_s the constant shunt capacitance (rim fringing, parasitic, preamplifier input). The total
harmonic distortion is THD = √(Σ_{k≥2} |V_k|²)/|V_1| from the harmonics V_k of v over one period
(FFT of equally spaced samples). The 10 % point is the lowest sound pressure level at which
THD = 10 %, searched below the contact pressure (of either sign), else None (contact first).

Scope: quasi-static (no inertia or film dynamics: valid well below the resonance), constant
charge; the curve is interpolated with a monotone cubic (PCHIP) in p.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

__all__ = ["QuasiStaticTransfer", "thd", "spl_to_pa", "pa_to_spl"]

P_REF = 20e-6


def spl_to_pa(spl_db: float) -> float:
    """Peak amplitude (Pa) of a sine at the sound pressure level ``spl_db`` (dB re 20 µPa rms)."""
    return P_REF * np.sqrt(2.0) * 10 ** (spl_db / 20.0)


def pa_to_spl(p_peak_pa: float) -> float:
    """SPL (dB re 20 µPa rms) of a sine with peak amplitude ``p_peak_pa``."""
    return 20.0 * np.log10(p_peak_pa / (np.sqrt(2.0) * P_REF))


def thd(samples: np.ndarray) -> float:
    """THD of one period of equally spaced samples: √(Σ_{k≥2}|V_k|²)/|V_1|."""
    v = np.fft.rfft(np.asarray(samples, dtype=float))
    h = np.abs(v[1:])
    return float(np.sqrt(np.sum(h[1:] ** 2)) / h[0])


@dataclass(frozen=True)
class QuasiStaticTransfer:
    """C(p) of the biased capsule: ``pressures_pa`` ascending (spanning p = 0), ``capacitances_f``,
    the bias voltage and the constant shunt capacitance (F); contact at the ends of the range
    (``contact_low_pa``, ``contact_high_pa``: None if the curve ends without contact)."""

    pressures_pa: tuple
    capacitances_f: tuple
    bias_voltage_v: float
    shunt_capacitance_f: float = 0.0
    contact_low_pa: float | None = None
    contact_high_pa: float | None = None

    def _curve(self):
        return PchipInterpolator(np.asarray(self.pressures_pa), np.asarray(self.capacitances_f))

    def max_amplitude_pa(self) -> float:
        """Largest peak amplitude inside the curve (both signs)."""
        p = np.asarray(self.pressures_pa)
        return float(min(-p[0], p[-1]))

    def output(self, amplitude_pa: float, n: int = 256) -> np.ndarray:
        """One period of v(t) (V) at the peak sound pressure ``amplitude_pa``."""
        c = self._curve()
        theta = 2 * np.pi * np.arange(n) / n
        cs = self.shunt_capacitance_f
        ct = c(amplitude_pa * np.sin(theta)) + cs
        cb = float(c(0.0)) + cs
        return self.bias_voltage_v * (cb / ct - 1.0)

    def thd(self, amplitude_pa: float) -> float:
        return thd(self.output(amplitude_pa))

    def thd_point_spl_db(self, level: float = 0.10, spl_min_db: float = 60.0) -> float | None:
        """Lowest SPL (dB) where THD = ``level``, None if the curve's end (contact) comes first."""
        top = 0.999 * self.max_amplitude_pa()
        if not top > spl_to_pa(spl_min_db):
            return None
        spls = np.linspace(spl_min_db, pa_to_spl(top), 60)
        vals = np.array([self.thd(spl_to_pa(s)) - level for s in spls])
        above = np.nonzero(vals > 0)[0]
        if above.size == 0:
            return None
        k = int(above[0])
        if k == 0:
            return float(spls[0])
        return float(brentq(lambda s: self.thd(spl_to_pa(s)) - level, spls[k - 1], spls[k],
                            xtol=1e-6))

    def thd_vs_spl(self, spl_db) -> list:
        """[[SPL, THD], ...] for the levels inside the curve."""
        top = self.max_amplitude_pa()
        return [[float(s), self.thd(spl_to_pa(s))] for s in spl_db if spl_to_pa(s) < top]
