"""Noise breakdown by source (diagap.lumped.breakdown) against outside references.

* Johnson–Nyquist thermal noise: a resistor R at temperature T has the open-circuit voltage PSD
  4 k_B T R (J. B. Johnson, "Thermal agitation of electricity in conductors", Phys. Rev. 32, 97,
  1928; H. Nyquist, "Thermal agitation of electric charge in conductors", Phys. Rev. 32, 110,
  1928); across a capacitance C it is low-passed, 4 k_B T R/(1 + (ωRC)²), whose integral over all
  frequencies is k_B T/C (equipartition of ½CV², the "kT/C" noise).
* A-weighting from its defining formula, IEC 61672-1:2013 (pole frequencies 20.599, 107.653,
  737.862, 12194.217 Hz, +2.00 dB at 1 kHz), integrated here with scipy.integrate.quad.
* Independent sources: powers add (the variance of a sum of uncorrelated signals).
k_B = 1.380649e-23 J/K (exact, SI 2019); p_ref = 20 µPa (IEC 61672-1).
"""
import math

import numpy as np
import pytest
from scipy.integrate import quad

from diagap.lumped.breakdown import noise_breakdown, output_noise_psds
from diagap.lumped.circuit import solve_circuit
from diagap.lumped.model import parallel_plate_piston
from diagap.lumped.readout import Readout

K_B = 1.380649e-23  # J/K, exact (SI 2019)
P_REF = 20e-6  # Pa
EPS0 = 8.8541878128e-12  # F/m, CODATA 2018 (2022 differs by 7e-10, inside the tolerances)


def a_gain2(f):
    """|A(f)|² from IEC 61672-1:2013, eq. (E.6)-(E.7) [pole frequencies of annex E]."""
    f1, f2, f3, f4 = 20.599, 107.653, 737.862, 12194.217
    ra = f4**2 * f**4 / ((f**2 + f1**2) * math.sqrt((f**2 + f2**2) * (f**2 + f3**2))
                         * (f**2 + f4**2))
    return (ra * 10 ** (2.0 / 20.0)) ** 2


def weighted_integral(psd, lo=20.0, hi=20e3):
    """∫ psd(f)|A(f)|² df over [lo, hi] by adaptive quadrature in ln f."""
    val, _ = quad(lambda u: psd(math.exp(u)) * a_gain2(math.exp(u)) * math.exp(u),
                  math.log(lo), math.log(hi), limit=400, epsabs=0, epsrel=1e-10)
    return val


AREA = math.pi * 0.5e-3**2
GAP = 4e-6
T = 293.15


def piston(**kw):
    base = dict(area_m2=AREA, gap_m=GAP, mass_kg=1e-9, stiffness_n_per_m=1579.0,
                damping_n_s_per_m=1e-3, bias_voltage_v=10.0, bias_resistance_ohm=1e12,
                back_volume_m3=1e-6, vent_resistance_pa_s_per_m3=1e14,
                parasitic_capacitance_f=0.3e-12, preamp_input_capacitance_f=0.2e-12,
                temperature_k=T)
    base.update(kw)
    return parallel_plate_piston(**base)


F = np.logspace(0.0, 5.0, 251)


def test_resistor_only_network_gives_nyquist_noise():
    # no bias: the capsule does not couple, the output node is R ∥ C_node alone
    r = 1e10
    model = piston(bias_voltage_v=0.0, bias_resistance_ohm=r)
    c = EPS0 * AREA / GAP + 0.3e-12 + 0.2e-12
    parts = output_noise_psds(solve_circuit(model, F))
    ref = 4 * K_B * T * r / (1 + (2 * np.pi * F * r * c) ** 2)
    np.testing.assert_allclose(parts["bias_resistor"], ref, rtol=1e-8, atol=0)
    # ωRC ≪ 1: the bare resistor's 4kTR
    low = output_noise_psds(solve_circuit(piston(bias_voltage_v=0.0, bias_resistance_ohm=1e6),
                                          [1.0]))["bias_resistor"][0]
    assert low == pytest.approx(4 * K_B * T * 1e6, rel=1e-8, abs=0)
    # equipartition: the whole spectrum integrates to kT/C
    f = np.logspace(-6, 8, 20001)
    psd = output_noise_psds(solve_circuit(model, f))["bias_resistor"]
    assert np.trapezoid(psd * f, np.log(f)) == pytest.approx(K_B * T / c, rel=1e-4, abs=0)
    # through the breakdown, referred with a flat 1 mV/Pa: the A-weighted level by quadrature
    s0 = 1e-3
    bd = noise_breakdown(F, np.full(F.shape, s0), parts)
    p2 = weighted_integral(lambda x: 4 * K_B * T * r / (1 + (2 * np.pi * x * r * c) ** 2)) / s0**2
    assert bd.levels_dba["bias_resistor"] == pytest.approx(10 * math.log10(p2 / P_REF**2),
                                                           rel=1e-4, abs=0)
    assert bd.levels_dba["mechanical_thermal"] is None and bd.levels_dba["vent"] is None


def test_charge_pump_shares_the_bias_leg_without_double_counting():
    # R_s in series with R_b: the thermal noise of the leg is 4kT(R_b + R_s)·|H_R|², split R_b:R_s
    r_b, r_s = 1e10, 2e9
    model = piston(bias_voltage_v=0.0, bias_resistance_ohm=r_b + r_s)
    c = EPS0 * AREA / GAP + 0.5e-12
    parts = output_noise_psds(solve_circuit(model, F), Readout(0.0, charge_pump_resistance_ohm=r_s))
    lowpass = 1 + (2 * np.pi * F * (r_b + r_s) * c) ** 2
    np.testing.assert_allclose(parts["bias_resistor"], 4 * K_B * T * r_b / lowpass, rtol=1e-8,
                               atol=0)
    np.testing.assert_allclose(parts["bias_supply"], 4 * K_B * T * r_s / lowpass, rtol=1e-8, atol=0)
    # a given supply density replaces its thermal noise, through the same path
    given = output_noise_psds(solve_circuit(model, F),
                              Readout(0.0, charge_pump_resistance_ohm=r_s,
                                      charge_pump_noise_v_per_rthz=1e-6))
    np.testing.assert_allclose(given["bias_supply"], 1e-12 / lowpass, rtol=1e-8, atol=0)


def test_contributions_power_sum_to_the_total():
    model = piston(damping_n_s_per_m=2e-2)
    sol = solve_circuit(model, F)
    readout = Readout(30e-9, noise_corner_hz=500.0, charge_pump_resistance_ohm=1e8,
                      charge_pump_noise_v_per_rthz=2e-6)
    parts = output_noise_psds(sol, readout)
    assert set(parts) == {"mechanical_thermal", "bias_resistor", "vent", "readout", "bias_supply"}
    bd = noise_breakdown(F, sol.output_voltage(pressure_pa=1.0), parts)
    power = sum(10 ** (v / 10) for v in bd.levels_dba.values())
    assert power == pytest.approx(10 ** (bd.total_dba / 10), rel=2e-3, abs=0)
    assert sum(bd.shares().values()) == pytest.approx(1.0, rel=2e-3, abs=0)
    # several sources matter here (no one source is the total)
    assert sorted(bd.shares().values())[-2] > 0.01


def test_snr_of_a_readout_dominated_design_by_hand():
    # a stiff, lightly damped piston (resonance ~ 200 kHz) with corners far below 20 Hz: |H| is
    # flat in the band, and a 100 nV/√Hz readout lies > 25 dB above every thermal source
    model = piston(damping_n_s_per_m=1e-5, bias_resistance_ohm=1e13)
    sol = solve_circuit(model, F)
    h = sol.output_voltage(pressure_pa=1.0)
    s = abs(solve_circuit(model, [1000.0]).output_voltage(pressure_pa=1.0)[0])  # V/Pa at 1 kHz
    band = (F >= 20) & (F <= 20e3)
    assert np.max(np.abs(20 * np.log10(np.abs(h[band]) / s))) < 0.15  # dB, flat in the band
    for e_n, f_c in ((100e-9, 0.0), (100e-9, 1000.0)):
        readout = Readout(e_n, noise_corner_hz=f_c)
        bd = noise_breakdown(F, h, output_noise_psds(sol, readout))
        assert bd.shares()["readout"] > 0.995
        # by hand: e_n²(1 + f_c/f)/S², A-weighted over 20 Hz - 20 kHz, re 20 µPa; SNR = 94 - L
        p2 = (e_n / s) ** 2 * weighted_integral(lambda x: 1.0 + f_c / x)
        noise = 10 * math.log10(p2 / P_REF**2)
        snr = 94.0 - noise  # the nominal 94 dB SPL of 1 Pa
        assert bd.snr_db == pytest.approx(snr, rel=1e-3, abs=0)  # about 0.04 dB
        assert bd.levels_dba["readout"] == pytest.approx(noise, rel=1e-3, abs=0)


def test_bias_supply_noise_is_silent_without_a_source():
    model = piston()
    sol = solve_circuit(model, F)
    parts = output_noise_psds(sol, Readout(10e-9))
    bd = noise_breakdown(F, sol.output_voltage(pressure_pa=1.0), parts)
    assert bd.levels_dba["bias_supply"] is None
    assert bd.levels_dba["readout"] is not None


class _Packaged:
    """The model of a solved circuit, marked as having package elements."""

    package = "package elements"

    def __init__(self, model):
        self._m = model

    def __getattr__(self, name):
        return getattr(self._m, name)


class _WithElementNoise:
    """A solved circuit of a packaged model that reports its thermal sources per element (as
    ``thermal_noise_output_psds`` does): the breakdown must take them from there."""

    def __init__(self, solution, psds):
        self._s, self._psds = solution, psds
        self.model = _Packaged(solution.model)

    def __getattr__(self, name):
        return getattr(self._s, name)

    def thermal_noise_output_psds(self, temperature_k):
        return dict(self._psds)


def test_thermal_sources_come_from_the_circuit_when_it_lists_them():
    r_b, r_s = 1e10, 1e9
    model = piston(bias_resistance_ohm=r_b + r_s)
    sol = solve_circuit(model, F)
    leg = np.full(F.shape, 4e-16)
    given = {"back_volume": np.full(F.shape, 1e-16), "bias_resistor": leg}
    parts = output_noise_psds(_WithElementNoise(sol, given),
                              Readout(1e-8, charge_pump_resistance_ohm=r_s))
    assert set(parts) == {"back_volume", "bias_resistor", "readout", "bias_supply"}
    np.testing.assert_allclose(parts["back_volume"], 1e-16, rtol=1e-15, atol=0)
    # the leg's thermal noise keeps the bias resistor's share R_b/(R_b + R_s)
    np.testing.assert_allclose(parts["bias_resistor"], 4e-16 * r_b / (r_b + r_s), rtol=1e-12,
                               atol=0)
