"""Frequency response of the lumped model against closed forms and an independent state-space model.

Parameter sets are invented, MEMS-like capsules (not any product).
"""
from __future__ import annotations

import csv
import math

import numpy as np
import pytest
import scipy.signal
from scipy.constants import epsilon_0, k as k_boltzmann
from scipy.integrate import quad

from diagap.lumped.model import FilmTable, LumpedModel, LumpedModelError, parallel_plate_piston
from diagap.report.csv import write_response_csv
from diagap.lumped.response import (analyse_response, frequency_response, input_referred,
                             output_noise_psd_damping, output_noise_psd_resistor)

AREA = math.pi * (0.4e-3) ** 2
GAP = 4e-6


def piston(**over):
    """An invented parallel-plate piston capsule (V_b at ~60 % of pull-in)."""
    kw = dict(area_m2=AREA, gap_m=GAP, mass_kg=4e-10, stiffness_n_per_m=50.0,
              damping_n_s_per_m=2e-5, bias_voltage_v=10.0, bias_resistance_ohm=1e10,
              back_volume_m3=1e-9, vent_resistance_pa_s_per_m3=1e12,
              parasitic_capacitance_f=0.3e-12)
    kw.update(over)
    return parallel_plate_piston(**kw)


def state_space(m: LumpedModel) -> scipy.signal.StateSpace:
    """Time-domain state model, derived independently of the impedance reduction.

    States x, ẋ, p_b, q (node charge = C_node·v + Γx):
    m ẍ = −bẋ − (k − k_e)x + A(p − p_b) + Γv;  C_bv ṗ_b = Aẋ + (p − p_b)/R_v;  q̇ = −v/R;
    v = (q − Γx)/C_node.  States are scaled so the matrix is well conditioned.
    """
    a, g, cn = m.area_m2, m.transduction_n_per_v, m.node_capacitance_f
    k = m.net_stiffness_n_per_m
    cbv, rv, r = m.back_volume_compliance_m3_per_pa, m.vent_resistance_pa_s_per_m3, \
        m.bias_resistance_ohm
    # v = (q - g x)/cn
    amat = np.array([
        [0.0, 1.0, 0.0, 0.0],
        [(-k - g * g / cn) / m.mass_kg, -m.damping_n_s_per_m / m.mass_kg, -a / m.mass_kg,
         g / cn / m.mass_kg],
        [0.0, a / cbv, -1.0 / (rv * cbv), 0.0],
        [g / (cn * r), 0.0, 0.0, -1.0 / (cn * r)],
    ])
    bmat = np.array([[0.0], [a / m.mass_kg], [1.0 / (rv * cbv)], [0.0]])
    cmat = np.array([[-g / cn, 0.0, 0.0, 1.0 / cn]])
    w0 = math.sqrt(m.stiffness_n_per_m / m.mass_kg)
    x0 = a / m.stiffness_n_per_m
    t = np.diag([1 / x0, 1 / (w0 * x0), 1.0, 1 / (g * x0)])
    ti = np.linalg.inv(t)
    return scipy.signal.StateSpace(t @ amat @ ti, t @ bmat, cmat @ ti, np.zeros((1, 1)))


@pytest.mark.filterwarnings("ignore::scipy.signal.BadCoefficients")
def test_matches_independent_state_space_model():
    # reference: scipy.signal.freqresp of the time-domain state model (general-purpose library)
    m = piston()
    f = np.logspace(0, 5, 61)
    _, h_ref = scipy.signal.freqresp(state_space(m), 2 * np.pi * f)
    h = frequency_response(m, f).voltage_per_pa
    assert np.max(np.abs(h / h_ref - 1)) < 1e-8


def test_response_vanishes_at_dc_with_two_highpass_slopes():
    # common practice, no single source: output → 0 at DC; the electrical RC and the vent each
    # give a first-order high-pass, so |H| ∝ f² far below both corners (+40 dB/decade)
    m = piston()
    h = np.abs(frequency_response(m, [1e-4, 1e-3, 1e3]).voltage_per_pa)
    assert h[0] < 1e-8 * h[2]
    assert math.log10(h[1] / h[0]) == pytest.approx(2.0, abs=1e-3)


def test_electrical_corner_is_rc_of_node_capacitance():
    # common practice, no single source: corner at 1/(2πR(C0 + Cp + Cin)), within 1 %;
    # weak coupling (low bias) and a vent corner two decades lower isolate the RC
    m = piston(bias_voltage_v=1.0, vent_resistance_pa_s_per_m3=1e15,
               preamp_input_capacitance_f=0.2e-12)
    c_node = m.rest_capacitance_f + 0.3e-12 + 0.2e-12
    f_c = 1 / (2 * math.pi * 1e10 * c_node)
    r = analyse_response(m)
    assert r.highpass_corner_hz == pytest.approx(f_c, rel=1e-12)
    assert r.acoustic_corner_hz < f_c / 100
    assert r.lowfreq_minus3db_hz == pytest.approx(f_c, rel=0.01)


def test_low_corner_includes_motional_capacitance():
    # free vs blocked capacitance of a linear transducer: below the corner the bias resistor also
    # charges Γ²/k_stiff (Senturia, Microsystem Design, 2001, ch. 6 [from memory]); vent far below
    m = piston(vent_resistance_pa_s_per_m3=1e16)
    g = m.transduction_n_per_v
    k_stiff = m.net_stiffness_n_per_m + m.area_m2**2 / m.back_volume_compliance_m3_per_pa
    f_free = 1 / (2 * math.pi * m.bias_resistance_ohm * (m.node_capacitance_f + g**2 / k_stiff))
    r = analyse_response(m)
    assert r.lowfreq_minus3db_hz == pytest.approx(f_free, rel=0.01)
    assert r.lowfreq_minus3db_hz < 0.97 * r.highpass_corner_hz


def test_acoustic_corner_from_vent():
    # Beranek, Acoustics, 1954, ch. 5 [from memory]: C_bv = V/(γp0); vent corner 1/(2πR_v C_bv)
    # when the diaphragm compliance is small (here 0.25 % of C_bv); electrical corner far lower
    m = piston(bias_resistance_ohm=1e13, stiffness_n_per_m=5000.0, back_volume_m3=3e-9,
               vent_resistance_pa_s_per_m3=3e12)
    c_bv = 3e-9 / (1.4 * 101325.0)
    r = analyse_response(m)
    assert r.highpass_corner_hz < r.acoustic_corner_hz / 100
    assert r.acoustic_corner_hz == pytest.approx(1 / (2 * math.pi * 3e12 * c_bv), rel=0.005)
    assert r.lowfreq_minus3db_hz == pytest.approx(r.acoustic_corner_hz, rel=0.01)


def test_piston_midband_sensitivity():
    # common practice, no single source: between corner and resonance the open-circuit output is
    # (V_b/g)·x·C0/(C0 + Cp) for a rigid piston; x/p = A/k_cq with the constant-charge stiffness
    # k − k_e·Cp/(C0 + Cp) (parallel plate, Senturia 2001 [from memory]) plus the back volume γp0A²/V
    m = piston(bias_resistance_ohm=1e12, vent_resistance_pa_s_per_m3=1e14,
               include_bias_deflection=False)
    c0, cp = epsilon_0 * AREA / GAP, 0.3e-12
    ke = 10.0**2 * c0 / GAP**2
    k_cq = 50.0 - ke * cp / (c0 + cp) + 1.4 * 101325.0 * AREA**2 / 1e-9
    s_ref = (10.0 / GAP) * (AREA / k_cq) * c0 / (c0 + cp)
    r = analyse_response(m)
    assert r.highpass_corner_hz < 5.0 and r.resonance_hz > 5e4
    s = abs(frequency_response(m, [1000.0]).voltage_per_pa[0])
    assert 20 * math.log10(s / s_ref) == pytest.approx(0.0, abs=0.1)
    assert r.sensitivity_db_v_per_pa == pytest.approx(20 * math.log10(s), abs=1e-12)


def test_resonance_and_q_closed_form():
    # single-degree-of-freedom oscillator: ω_r = √(k/m), Q = √(k m)/b (classical); the stiffness
    # is the constant-charge value plus the back volume
    m = piston(bias_resistance_ohm=1e12, vent_resistance_pa_s_per_m3=1e14)
    k_hf = (m.net_stiffness_n_per_m + m.transduction_n_per_v**2 / m.node_capacitance_f
            + m.area_m2**2 / m.back_volume_compliance_m3_per_pa)
    r = analyse_response(m)
    assert r.resonance_hz == pytest.approx(math.sqrt(k_hf / 4e-10) / (2 * math.pi), rel=1e-5)
    assert r.quality_factor == pytest.approx(math.sqrt(k_hf * 4e-10) / 2e-5, rel=1e-4)
    # peak of |x/p| of a second-order system: ω_p = ω_r·√(1 − 1/(2Q²))
    q = r.quality_factor
    assert r.peak_frequency_hz == pytest.approx(r.resonance_hz * math.sqrt(1 - 0.5 / q**2),
                                                rel=1e-4)


def test_overdamped_has_no_peak():
    m = piston(damping_n_s_per_m=5e-3)
    r = analyse_response(m)
    assert r.quality_factor < 0.5 and r.peak_frequency_hz is None


def test_film_table_stiffness_raises_resonance():
    # a frequency-independent film stiffness adds to k: ω_r² = (k_hf + k_film)/m
    base = piston(bias_resistance_ohm=1e12, vent_resistance_pa_s_per_m3=1e14)
    table = FilmTable((1.0, 1e6), (2e-5, 2e-5), (30.0, 30.0))
    m = base.replace(film_damping=table)
    r0, r1 = analyse_response(base), analyse_response(m)
    w0 = 2 * math.pi * r0.resonance_hz
    assert r1.resonance_hz == pytest.approx(r0.resonance_hz * math.sqrt(1 + 30.0 / (4e-10 * w0**2)),
                                            rel=1e-5)


def test_resistor_noise_integrates_to_kt_over_c():
    # kT/C noise of a resistor across a capacitor (Johnson 1928 / Nyquist 1928): ∫ S_v df = k_BT/C;
    # weak electromechanical coupling (low bias) so the node is a plain RC
    m = piston(bias_voltage_v=0.1)
    integrand = lambda lf: float(output_noise_psd_resistor(m, [math.exp(lf)])[0]) * math.exp(lf)
    total = quad(integrand, math.log(1e-4), math.log(1e6), limit=200)[0]
    assert total == pytest.approx(k_boltzmann * 293.15 / m.node_capacitance_f, rel=1e-3)


def test_damping_noise_referred_to_input_is_4ktb_over_a2():
    # Gabrielson, IEEE Trans. Electron Devices 40 (1993) 903: pressure-noise PSD 4k_BT·R_a with
    # R_a = b/A² (the force noise acts like a pressure b/A² in series with the diaphragm)
    m = piston()
    f = np.array([300.0, 1000.0, 3000.0])
    p_in = input_referred(m, f, output_noise_psd_damping(m, f))
    ref = 4 * k_boltzmann * 293.15 * 2e-5 / AREA**2
    assert np.allclose(p_in, ref, rtol=2e-3)


def test_summary_keys():
    s = analyse_response(piston()).to_summary()
    for key in ("sensitivity_db_v_per_pa", "highpass_corner_hz", "acoustic_corner_hz",
                "resonance_hz", "quality_factor"):
        assert isinstance(s[key], float) and math.isfinite(s[key])


@pytest.mark.parametrize("field, value, match", [
    ("mass_kg", 0.0, "mass_kg"),
    ("vent_resistance_pa_s_per_m3", math.inf, "vent_resistance"),
    ("electrostatic_stiffness_n_per_m", 60.0, "pull-in"),
    ("damping_n_s_per_m", -1.0, "damping_n_s_per_m"),
    ("sound_speed_m_s", 250.0, "sound_speed"),
])
def test_invalid_fields_are_named(field, value, match):
    with pytest.raises(LumpedModelError, match=match):
        piston().replace(**{field: value})


def test_bias_above_pull_in_rejected():
    with pytest.raises(LumpedModelError, match="pull-in"):
        piston(bias_voltage_v=20.0)


def test_nonpositive_frequency_rejected():
    with pytest.raises(LumpedModelError, match="freqs_hz"):
        frequency_response(piston(), [0.0, 10.0])


def test_csv_round_trip(tmp_path):
    m = piston()
    resp = frequency_response(m)
    path = write_response_csv(resp.frequency_hz, resp.voltage_per_pa, tmp_path)
    assert path.name == "response.csv"
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == ["frequency_hz", "magnitude_db_v_per_pa", "phase_deg",
                             "magnitude_v_per_pa"]
    f = np.array([float(r["frequency_hz"]) for r in rows])
    mag = np.array([float(r["magnitude_v_per_pa"]) for r in rows])
    db = np.array([float(r["magnitude_db_v_per_pa"]) for r in rows])
    ph = np.radians([float(r["phase_deg"]) for r in rows])
    assert np.allclose(f, resp.frequency_hz, rtol=1e-10)
    assert np.allclose(mag * np.exp(1j * ph), resp.voltage_per_pa, rtol=1e-9)
    assert np.allclose(db, 20 * np.log10(mag), atol=1e-9)
    assert np.all(np.abs(np.diff(np.degrees(ph))) < 90.0)  # unwrapped
