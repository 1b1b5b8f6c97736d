"""Noise breakdown: each source referred to the acoustic input, A-weighted, and the totals.

Every noise source k is known by the one-sided PSD S_k(f) (V²/Hz) it produces at the output node.
The sources are independent (distinct dissipative elements and the readout), so their powers add.
Referred to the acoustic input through the capsule's response H(f) = v/p (V/Pa),

    S_p,k(f) = S_k(f) / |H(f)|²                         (Pa²/Hz),

the equivalent input noise of source k; weighted by the A curve of IEC 61672-1:2013 over the
audio band 20 Hz – 20 kHz (:func:`diagap.lumped.noise.a_weighted_level_db`),

    L_k = 10·log10( ∫ S_p,k |A|² df / p_ref² )         dB(A) SPL,  p_ref = 20 µPa,

and the total L = 10·log10( ∫ Σ_k S_p,k |A|² df / p_ref² ), which is the power sum of the L_k
(up to the log-log interpolation of the integral, < 0.01 dB). SNR = 94 dB − L (the 1 Pa, 1 kHz
reference tone against the A-weighted floor); dynamic range = overload point − L.

Sources. The thermal (fluctuation–dissipation, 4 k_B T·Re Z) sources of the circuit come from
``CircuitSolution.thermal_noise_output_psds(T)`` where the circuit provides it; otherwise from
the damping, bias-resistor and vent noise of :mod:`diagap.lumped.response`. With a readout
(:mod:`diagap.lumped.readout`) its input noise and the bias supply's noise are added; the bias
leg then holds R_b + R_s, so the thermal noise the circuit reports for that leg, 4 k_B T(R_b + R_s)
·|H_R|², is split: the bias resistor keeps the share R_b/(R_b + R_s), and the supply's own noise
S_s·|H_R|² (4 k_B T R_s by default) is its own entry, so nothing is counted twice.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from diagap.lumped.noise import a_weighted_level_db
from diagap.lumped.readout import REFERENCE_SPL_DB, Readout, readout_output_psds
from diagap.lumped.weighting import AUDIO_BAND_HZ, a_weighting_gain

__all__ = ["NoiseBreakdown", "noise_breakdown", "output_noise_psds", "BIAS_RESISTOR"]

#: the name of the bias resistor's thermal noise among the circuit's sources
BIAS_RESISTOR = "bias_resistor"


@dataclass(frozen=True, eq=False)
class NoiseBreakdown:
    """Input-referred noise by source (SI; arrays follow ``frequency_hz``).

    Attributes
    ----------
    frequency_hz : (n,) Hz.
    input_psd_pa2_per_hz : source → S_p,k(f) (Pa²/Hz).
    levels_dba : source → L_k (dB(A) SPL), None for a source with no noise.
    total_dba : L (dB(A) SPL) of the summed spectrum.
    """

    frequency_hz: np.ndarray
    input_psd_pa2_per_hz: dict
    levels_dba: dict
    total_dba: float

    @property
    def total_input_psd(self) -> np.ndarray:
        """Σ_k S_p,k(f) (Pa²/Hz)."""
        return sum(self.input_psd_pa2_per_hz.values())

    @property
    def snr_db(self) -> float:
        """94 dB SPL (1 Pa) minus the A-weighted floor (dB)."""
        return REFERENCE_SPL_DB - self.total_dba

    def weighted_density(self, source: str) -> np.ndarray:
        """A-weighted input-referred density √S_p,k·|A(f)| (Pa/√Hz) of one source."""
        return np.sqrt(self.input_psd_pa2_per_hz[source]) * a_weighting_gain(self.frequency_hz)

    def shares(self) -> dict:
        """source → share of the total A-weighted noise power (fraction; 0 for silent ones)."""
        total = 10.0 ** (self.total_dba / 10.0)
        return {k: (0.0 if v is None else 10.0 ** (v / 10.0) / total)
                for k, v in self.levels_dba.items()}


def _level(f, psd, band) -> float | None:
    if not np.any(np.asarray(psd) > 0):
        return None
    return a_weighted_level_db(f, psd, band)


def noise_breakdown(frequency_hz, voltage_per_pa, output_psds: dict,
                    band_hz: tuple[float, float] = AUDIO_BAND_HZ) -> NoiseBreakdown:
    """Refer output PSDs to the input, A-weight them and level each source and the total.

    Parameters
    ----------
    frequency_hz : (n,) increasing frequencies covering ``band_hz`` (Hz).
    voltage_per_pa : (n,) complex or real response H(f) at the output node (V/Pa).
    output_psds : source → output-node PSD (V²/Hz), arrays of shape (n,) (or scalars).
    band_hz : integration band (Hz).
    """
    f = np.asarray(frequency_hz, float)
    h2 = np.abs(np.asarray(voltage_per_pa)) ** 2
    inputs = {k: np.broadcast_to(np.asarray(v, float), f.shape) / h2
              for k, v in output_psds.items()}
    levels = {k: _level(f, v, band_hz) for k, v in inputs.items()}
    total = a_weighted_level_db(f, sum(inputs.values()), band_hz)
    return NoiseBreakdown(f, inputs, levels, float(total))


def _capsule_sources(model, frequency_hz) -> dict:
    """The thermal sources of a capsule without package elements: film damping, bias leg and
    vent (:mod:`diagap.lumped.response`)."""
    from diagap.lumped.response import (output_noise_psd_damping, output_noise_psd_resistor,
                                        output_noise_psd_vent)

    return {"mechanical_thermal": output_noise_psd_damping(model, frequency_hz),
            BIAS_RESISTOR: output_noise_psd_resistor(model, frequency_hz),
            "vent": output_noise_psd_vent(model, frequency_hz)}


def output_noise_psds(solution, readout: Readout | None = None) -> dict:
    """Output-node PSDs (V²/Hz) of every noise source of the solved circuit (and the readout).

    ``solution`` is a :class:`diagap.lumped.circuit.CircuitSolution`; its model's temperature is
    the noise temperature. See the module docstring for the split of the bias leg.
    """
    model = solution.model
    t = model.temperature_k
    if getattr(model, "package", None) is not None:  # every dissipative element of the package
        parts = dict(solution.thermal_noise_output_psds(t))
    else:  # the capsule's own three sources, named as in earlier summaries
        parts = _capsule_sources(model, solution.frequency_hz)
    if readout is None:
        return parts
    r_total = model.bias_resistance_ohm
    r_s = readout.charge_pump_resistance_ohm
    if BIAS_RESISTOR in parts and r_s > 0:
        parts[BIAS_RESISTOR] = parts[BIAS_RESISTOR] * ((r_total - r_s) / r_total)
    parts.update(readout_output_psds(readout, solution, t))
    return parts
