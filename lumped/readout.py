"""The readout after the capsule: voltage noise, clipping, digital full scale and bias supply.

Model (SI; all voltages at the readout's input, which is the output node ``v`` of
:mod:`diagap.lumped.circuit`):

* The readout is a voltage amplifier of gain G (V/V) whose input capacitance C_in is part of the
  node capacitance C_node = C0 + C_p + C_in (it loads the capsule there, in the sensitivity, the
  electrical high-pass and the distortion). The signal and every noise at the node see the same
  gain, so G drops out of everything referred to the acoustic input; it only scales the output
  sensitivity, 20·log10(G·|H|) dB re 1 V/Pa.
* Input-referred voltage noise, one-sided PSD (V²/Hz), white with a 1/f corner f_c::

      S_e(f) = e_n² (1 + f_c / f),

  added to the node voltage (a series source at the amplifier input: it does not drive the
  diaphragm). Its input-referred pressure PSD is S_e/|H(f)|², H = v/p the capsule's response.
* Clipping: the largest input amplitude V_clip (peak, about the bias point). A sine of sound
  pressure p_rms gives a node amplitude √2·|H(f)|·p_rms, so the readout clips at

      L_clip = 20·log10( V_clip / (√2 |H(1 kHz)| p_ref) )   dB SPL,   p_ref = 20 µPa,

  on the linear sensitivity (the capsule's own harmonics near that level are left out: below
  10 % THD they change the peak by less than about 10 %, < 1 dB).
* Digital output: a full-scale sine is 0 dBFS (its peak just reaches the converter's full scale
  V_fs, referred to the readout input; AES17 convention [from memory]). With the full scale given
  as an input amplitude V_fs (peak), or as the SPL L_fs of the sine that reaches it,

      sensitivity_dbfs = 20·log10( √2 |H(1 kHz)| · 1 Pa / V_fs ) = 93.98 dB − L_fs,

  the digital level of the 1 Pa tone (the nominal "94 dB SPL"; 20·log10(1 Pa/20 µPa) = 93.98 dB),
  and the digital output saturates at L_fs.
* Bias supply (a charge pump): its source resistance R_s lies in series with the bias resistor
  R_b, so the circuit's bias leg is R_b + R_s; its noise is a voltage e_s in series with that leg,
  i.e. on the bias voltage, and reaches the node through the same transfer as the bias
  resistor's own noise, v = H_R·e_s (H_R = ``CircuitSolution.output_voltage(
  resistor_voltage_v=1)``). By default e_s is the thermal noise of R_s, S_s = 4 k_B T R_s
  (Johnson–Nyquist); a given density replaces it.

The overload point is the lowest of the levels at which each mechanism limits the microphone
(:func:`overload_point`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from diagap.fem.constants import BOLTZMANN_J_PER_K, P_REF_PA

__all__ = ["ReadoutError", "Readout", "readout_output_psds", "sine_spl_db", "overload_point",
           "REFERENCE_SPL_DB"]

#: the reference tone of SNR: 94 dB SPL, the trade's nominal level of 1 Pa rms (exactly
#: 20·log10(1 Pa / 20 µPa) = 93.98 dB); SNR = 94 dB − the A-weighted noise floor
REFERENCE_SPL_DB = 94.0


class ReadoutError(ValueError):
    """An invalid readout parameter."""


def _check(cond: bool, name: str, value, allowed: str) -> None:
    if not cond:
        raise ReadoutError(f"{name} = {value!r}: must be {allowed}")


def sine_spl_db(amplitude_v: float, sensitivity_v_per_pa: float) -> float:
    """SPL (dB re 20 µPa rms) of the sine whose node amplitude (peak) is ``amplitude_v`` for a
    sensitivity ``sensitivity_v_per_pa`` (V/Pa, rms per rms)."""
    _check(amplitude_v > 0, "amplitude_v", amplitude_v, "> 0")
    _check(sensitivity_v_per_pa > 0, "sensitivity_v_per_pa", sensitivity_v_per_pa, "> 0")
    return 20.0 * math.log10(amplitude_v / (math.sqrt(2.0) * sensitivity_v_per_pa * P_REF_PA))


@dataclass(frozen=True)
class Readout:
    """The readout (preamplifier or converter front end) and its bias supply, SI.

    Parameters
    ----------
    noise_density_v_per_rthz : white input-referred voltage noise e_n (V/√Hz), >= 0.
    noise_corner_hz : 1/f corner f_c (Hz), >= 0 (0: white).
    gain : voltage gain G (V/V), > 0.
    input_capacitance_f : C_in (F), part of the node capacitance (set in the lumped model).
    clip_amplitude_v : largest input amplitude before clipping (V peak), None: not limited.
    full_scale_input_v : input amplitude (V peak) of a 0 dBFS sine, or None.
    full_scale_spl_db : SPL (dB) of a 0 dBFS sine at 1 kHz, or None (at most one full scale).
    charge_pump_resistance_ohm : source resistance R_s of the bias supply (Ω), >= 0.
    charge_pump_noise_v_per_rthz : its noise density (V/√Hz); None: thermal √(4 k_B T R_s).
    """

    noise_density_v_per_rthz: float
    noise_corner_hz: float = 0.0
    gain: float = 1.0
    input_capacitance_f: float = 0.0
    clip_amplitude_v: float | None = None
    full_scale_input_v: float | None = None
    full_scale_spl_db: float | None = None
    charge_pump_resistance_ohm: float = 0.0
    charge_pump_noise_v_per_rthz: float | None = None

    def __post_init__(self):
        for name in ("noise_density_v_per_rthz", "noise_corner_hz", "input_capacitance_f",
                     "charge_pump_resistance_ohm"):
            v = getattr(self, name)
            _check(math.isfinite(v) and v >= 0, name, v, "a finite number >= 0")
        _check(math.isfinite(self.gain) and self.gain > 0, "gain", self.gain, "> 0")
        for name in ("clip_amplitude_v", "full_scale_input_v"):
            v = getattr(self, name)
            _check(v is None or (math.isfinite(v) and v > 0), name, v, "None or > 0")
        n = self.charge_pump_noise_v_per_rthz
        _check(n is None or (math.isfinite(n) and n >= 0), "charge_pump_noise_v_per_rthz", n,
               "None or >= 0")
        _check(self.full_scale_input_v is None or self.full_scale_spl_db is None,
               "full_scale_spl_db", self.full_scale_spl_db,
               "None when full_scale_input_v is given (one full scale)")

    @property
    def gain_db(self) -> float:
        """20·log10 G (dB)."""
        return 20.0 * math.log10(self.gain)

    @property
    def digital(self) -> bool:
        """True when a digital full scale is given."""
        return self.full_scale_input_v is not None or self.full_scale_spl_db is not None

    def input_noise_psd(self, frequency_hz) -> np.ndarray:
        """S_e(f) = e_n²(1 + f_c/f), input-referred voltage PSD (V²/Hz)."""
        f = np.asarray(frequency_hz, float)
        return self.noise_density_v_per_rthz**2 * (1.0 + self.noise_corner_hz / f)

    def charge_pump_noise_psd(self, temperature_k: float) -> float:
        """S_s (V²/Hz): the given density squared, else 4 k_B T R_s."""
        if self.charge_pump_noise_v_per_rthz is not None:
            return self.charge_pump_noise_v_per_rthz**2
        return 4.0 * BOLTZMANN_J_PER_K * temperature_k * self.charge_pump_resistance_ohm

    def full_scale_peak_v(self, sensitivity_v_per_pa: float) -> float | None:
        """V_fs, input amplitude (peak) of a 0 dBFS sine: given, or √2·|H|·p_ref·10^(L_fs/20)."""
        if self.full_scale_input_v is not None:
            return self.full_scale_input_v
        if self.full_scale_spl_db is not None:
            return (math.sqrt(2.0) * sensitivity_v_per_pa * P_REF_PA
                    * 10.0 ** (self.full_scale_spl_db / 20.0))
        return None

    def sensitivity_dbfs(self, sensitivity_v_per_pa: float) -> float | None:
        """Digital sensitivity (dBFS for 1 Pa = 94 dB SPL at 1 kHz), None without a full scale."""
        v_fs = self.full_scale_peak_v(sensitivity_v_per_pa)
        if v_fs is None:
            return None
        return 20.0 * math.log10(math.sqrt(2.0) * sensitivity_v_per_pa * 1.0 / v_fs)

    def clip_spl_db(self, sensitivity_v_per_pa: float) -> float | None:
        """SPL (dB) at which the input amplitude reaches ``clip_amplitude_v``, or None."""
        if self.clip_amplitude_v is None:
            return None
        return sine_spl_db(self.clip_amplitude_v, sensitivity_v_per_pa)

    def full_scale_level_db(self, sensitivity_v_per_pa: float) -> float | None:
        """SPL (dB) of a 0 dBFS sine, or None without a digital output."""
        if self.full_scale_spl_db is not None:
            return self.full_scale_spl_db
        v_fs = self.full_scale_peak_v(sensitivity_v_per_pa)
        return None if v_fs is None else sine_spl_db(v_fs, sensitivity_v_per_pa)


def readout_output_psds(readout: Readout, solution, temperature_k: float) -> dict:
    """Output-node voltage PSDs (V²/Hz) of the readout's own noise and of the bias supply.

    ``solution`` is a :class:`diagap.lumped.circuit.CircuitSolution` whose model's bias leg
    already holds R_b + R_s. Returns ``{"readout": S_e(f), "bias_supply": S_s·|H_R(f)|²}``.
    """
    f = solution.frequency_hz
    h_r = solution.output_voltage(resistor_voltage_v=1.0)
    return {"readout": readout.input_noise_psd(f),
            "bias_supply": readout.charge_pump_noise_psd(temperature_k) * np.abs(h_r) ** 2}


def overload_point(limits: dict) -> tuple[float | None, str | None]:
    """(lowest level, its mechanism) of ``limits`` (mechanism → SPL dB or None); (None, None)
    when no mechanism limits within the computed range."""
    known = [(v, k) for k, v in limits.items() if v is not None and math.isfinite(v)]
    if not known:
        return None, None
    level, name = min(known, key=lambda t: t[0])
    return float(level), name
