"""Frequency response of the lumped capsule model: V_out/p, sensitivity, corners, resonance, Q.

The response is the output-node voltage per pascal of sound pressure at the front of the
diaphragm, H(f) = v/p = −(Γ/A)·H_v/(Z·Y_e) from the reduced circuit of :mod:`diagap.lumped.circuit`
(open circuit apart from C_p and C_in; physical sign: a pressure towards the backplate raises C
and, at held charge, lowers the node voltage for V_b > 0, so the mid-band phase is near ±180°).

Figures of merit (all from the same circuit):

* sensitivity at 1 kHz, 20·log10|H| dB re 1 V/Pa;
* electrical high-pass corner f_e = 1/(2π·R_bias·(C0 + C_p + C_in)) (blocked capacitance);
* acoustic corner f_a = 1/(2π·R_v·(C_bv + C_d)), C_d = A²/(k − k_e) the diaphragm's
  constant-voltage compliance in parallel with the back volume (→ 1/(2πR_vC_bv) when C_d ≪ C_bv);
* the −3 dB frequency of |H| relative to its 1 kHz value, which includes both corners and the
  motional capacitance Γ²/(k_net) that the bias circuit also charges;
* resonance: the phase crossing of the diaphragm branch, i.e. the zero of the reactance
  X(ω) = Im Z(ω) of the total branch impedance (mass, film, electrostatic, back volume and the
  electrical load reflected through Γ); velocity is in phase with the net pressure there;
* Q = (ω_r / 2R)·|dX/dω| at the resonance, R = Re Z (series-resonance definition; equals
  √(k m)/b for constant m, b, k);
* the peak frequency of |x/p| when it exists;
* with a sound port and front chamber (``model.package``), the resonance, Q and peak are those of
  the capsule side (front path removed); the front path's own resonance is
  :func:`diagap.lumped.package.front_resonance_hz`.

Noise transfer: thermal noise of R_bias (4k_BTR, V²/Hz, Johnson–Nyquist) through the same
circuit gives the output PSD; dividing by |H|² refers it to the input in Pa²/Hz.  The force noise
4k_BT·b(f) of the damping and the pressure noise 4k_BT·R_v of the vent (Gabrielson, IEEE Trans.
Electron Devices 40, 1993) are provided the same way.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from diagap.fem.constants import BOLTZMANN_J_PER_K
from diagap.lumped.circuit import CircuitSolution, solve_circuit
from diagap.lumped.model import LumpedModel

__all__ = [
    "FrequencyResponse",
    "ResponseResult",
    "frequency_response",
    "analyse_response",
    "default_frequencies",
    "output_noise_psd_resistor",
    "output_noise_psd_damping",
    "output_noise_psd_vent",
    "input_referred",
]

REFERENCE_FREQUENCY_HZ = 1000.0


def default_frequencies(points_per_decade: int = 50) -> np.ndarray:
    """Log-spaced frequencies from 1 Hz to 100 kHz (Hz)."""
    return np.logspace(0.0, 5.0, 5 * points_per_decade + 1)


@dataclass(frozen=True)
class FrequencyResponse:
    """Complex transfer functions on a frequency grid.

    Attributes
    ----------
    frequency_hz : (n,) Hz
    voltage_per_pa : (n,) complex, V/Pa
    displacement_per_pa : (n,) complex, m/Pa (centre displacement)
    """

    frequency_hz: np.ndarray
    voltage_per_pa: np.ndarray
    displacement_per_pa: np.ndarray

    @property
    def magnitude_db_v_per_pa(self) -> np.ndarray:
        return 20.0 * np.log10(np.abs(self.voltage_per_pa))

    @property
    def phase_deg(self) -> np.ndarray:
        """Phase of V/p, unwrapped along frequency (degrees)."""
        return np.degrees(np.unwrap(np.angle(self.voltage_per_pa)))


def frequency_response(model: LumpedModel, freqs_hz=None) -> FrequencyResponse:
    """V_out/p and x/p of ``model`` at ``freqs_hz`` (default 1 Hz – 100 kHz)."""
    f = default_frequencies() if freqs_hz is None else freqs_hz
    sol = solve_circuit(model, f)
    return FrequencyResponse(sol.frequency_hz, sol.output_voltage(pressure_pa=1.0),
                             sol.displacement(pressure_pa=1.0))


def _h_abs(model: LumpedModel, f: float) -> float:
    return float(abs(solve_circuit(model, [f]).output_voltage(pressure_pa=1.0)[0]))


def _reactance(model: LumpedModel, f) -> np.ndarray:
    return solve_circuit(model, f).branch_impedance.imag


def _resonance(model: LumpedModel, f_low: float) -> tuple[float | None, float | None]:
    """First zero of X(ω) above ``f_low`` from − to +, and Q there."""
    grid = np.logspace(np.log10(f_low), 8.0, 801)
    x = _reactance(model, grid)
    idx = np.nonzero((x[:-1] < 0) & (x[1:] >= 0))[0]
    if idx.size == 0:
        return None, None
    i = idx[0]
    fr = brentq(lambda f: _reactance(model, [f])[0], grid[i], grid[i + 1], rtol=1e-13)
    h = 1e-5 * fr
    sol = solve_circuit(model, [fr - h, fr, fr + h])
    z = sol.branch_impedance
    dx_dw = (z[2].imag - z[0].imag) / (2.0 * np.pi * 2.0 * h)
    r = z[1].real
    q = (2.0 * np.pi * fr) * abs(dx_dw) / (2.0 * r) if r > 0 else float("inf")
    return float(fr), float(q)


def _peak(model: LumpedModel, f_res: float | None) -> float | None:
    """Frequency of the maximum of |x/p| near the resonance, None if |x/p| has no peak."""
    if f_res is None:
        return None
    mag = lambda lf: -abs(solve_circuit(model, [10**lf]).displacement(pressure_pa=1.0)[0])  # noqa
    lo, hi = np.log10(f_res) - 1.0, np.log10(f_res) + 0.5
    res = minimize_scalar(mag, bounds=(lo, hi), method="bounded", options={"xatol": 1e-9})
    if res.x - lo < 1e-6 or hi - res.x < 1e-6:
        return None
    return float(10**res.x)


def _lowfreq_3db(model: LumpedModel, f_ref: float) -> float | None:
    """Highest frequency below ``f_ref`` where |H| = |H(f_ref)|/√2."""
    target = _h_abs(model, f_ref) / np.sqrt(2.0)
    grid = np.logspace(np.log10(f_ref), -4.0, 701)
    mags = np.abs(solve_circuit(model, grid).output_voltage(pressure_pa=1.0))
    below = np.nonzero(mags < target)[0]
    if below.size == 0:
        return None
    i = below[0]
    return float(brentq(lambda f: _h_abs(model, f) - target, grid[i], grid[i - 1], rtol=1e-12))


@dataclass(frozen=True)
class ResponseResult:
    """Frequency response and its figures of merit (SI; ``None`` where not defined)."""

    response: FrequencyResponse
    sensitivity_v_per_pa: float
    highpass_corner_hz: float
    acoustic_corner_hz: float
    lowfreq_minus3db_hz: float | None
    resonance_hz: float | None
    quality_factor: float | None
    peak_frequency_hz: float | None

    @property
    def sensitivity_db_v_per_pa(self) -> float:
        return float(20.0 * np.log10(self.sensitivity_v_per_pa))

    def to_summary(self) -> dict:
        """The ``response`` keys of summary.json (units in the key names)."""
        return {
            "sensitivity_db_v_per_pa": self.sensitivity_db_v_per_pa,
            "sensitivity_v_per_pa": self.sensitivity_v_per_pa,
            "highpass_corner_hz": self.highpass_corner_hz,
            "acoustic_corner_hz": self.acoustic_corner_hz,
            "lowfreq_minus3db_hz": self.lowfreq_minus3db_hz,
            "resonance_hz": self.resonance_hz,
            "quality_factor": self.quality_factor,
            "peak_frequency_hz": self.peak_frequency_hz,
        }


def analyse_response(model: LumpedModel, freqs_hz=None) -> ResponseResult:
    """Response on ``freqs_hz`` (default 1 Hz – 100 kHz) and its figures of merit."""
    resp = frequency_response(model, freqs_hz)
    f_e = 1.0 / (2.0 * np.pi * model.electrical_time_constant_s)
    c_d = model.area_m2**2 / model.net_stiffness_n_per_m
    c_bv = model.back_volume_compliance_m3_per_pa
    f_a = 1.0 / (2.0 * np.pi * model.vent_resistance_pa_s_per_m3 * (c_bv + c_d))
    # the diaphragm's own resonance: on the capsule side, without a front path's resonances
    core = model if model.package is None or not model.package.has_front_path else \
        model.replace(package=model.package.without_front())
    f_res, q = _resonance(core, 10.0 * max(f_e, f_a))
    return ResponseResult(
        response=resp,
        sensitivity_v_per_pa=_h_abs(model, REFERENCE_FREQUENCY_HZ),
        highpass_corner_hz=float(f_e),
        acoustic_corner_hz=float(f_a),
        lowfreq_minus3db_hz=_lowfreq_3db(model, REFERENCE_FREQUENCY_HZ),
        resonance_hz=f_res,
        quality_factor=q,
        peak_frequency_hz=_peak(core, f_res),
    )


def _solution(model: LumpedModel, f) -> CircuitSolution:
    return solve_circuit(model, f)


def output_noise_psd_resistor(model: LumpedModel, freqs_hz) -> np.ndarray:
    """Output voltage PSD (V²/Hz) of the bias resistor's thermal noise 4k_BT·R_bias."""
    sol = _solution(model, freqs_hz)
    h = sol.output_voltage(resistor_voltage_v=1.0)
    return 4.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.bias_resistance_ohm * np.abs(h) ** 2


def output_noise_psd_damping(model: LumpedModel, freqs_hz) -> np.ndarray:
    """Output voltage PSD (V²/Hz) of the mechanical-thermal force noise 4k_BT·b(f)."""
    sol = _solution(model, freqs_hz)
    b, _ = model.film(sol.frequency_hz)
    h = sol.output_voltage(force_n=1.0)
    return 4.0 * BOLTZMANN_J_PER_K * model.temperature_k * b * np.abs(h) ** 2


def output_noise_psd_vent(model: LumpedModel, freqs_hz) -> np.ndarray:
    """Output voltage PSD (V²/Hz) of the vent's pressure noise 4k_BT·R_v."""
    sol = _solution(model, freqs_hz)
    h = sol.output_voltage(vent_pressure_pa=1.0)
    return (4.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.vent_resistance_pa_s_per_m3
            * np.abs(h) ** 2)


def input_referred(model: LumpedModel, freqs_hz, psd_out) -> np.ndarray:
    """Refer an output PSD (V²/Hz) to the input: psd_out/|V/p|² (Pa²/Hz)."""
    h = frequency_response(model, freqs_hz).voltage_per_pa
    return np.asarray(psd_out, float) / np.abs(h) ** 2
