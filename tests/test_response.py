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
from scipy.optimize import brentq

from checks import rel_close, rel_close_array

from diagap.lumped.model import (FilmTable, LumpedModelError, from_capacitance_curve,
                                 parallel_plate_piston)
from diagap.report.csv import write_response_csv
from diagap.lumped.response import (analyse_response, frequency_response, input_referred,
                                    output_noise_psd_damping, output_noise_psd_resistor,
                                    output_noise_psd_vent)

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


RAW = dict(area_m2=AREA, gap_m=GAP, mass_kg=4e-10, stiffness_n_per_m=50.0,
           damping_n_s_per_m=2e-5, bias_voltage_v=10.0, bias_resistance_ohm=1e10,
           back_volume_m3=1e-9, vent_resistance_pa_s_per_m3=1e12,
           parasitic_capacitance_f=0.3e-12)
GAMMA, P0, TEMPERATURE = 1.4, 101325.0, 293.15  # air, ideal diatomic gas; model defaults


def small_signal(raw: dict, include_bias_deflection: bool = True) -> dict:
    """Bias point and small-signal coefficients of the parallel-plate piston from raw inputs.

    C(x) = ε0A/(g − x); static bias k x = ½V²C'(x) on the stable branch (x < g/3); node charge
    q = v·(C + C_p). F = ½v²C'(x): ∂F/∂x at constant q = ½v²C'' − v²C'²/C_t, ∂F/∂q = vC'/C_t;
    ∂v/∂x = −vC'/C_t, ∂v/∂q = 1/C_t (Senturia, Microsystem Design, 2001, ch. 6 [from memory]).
    """
    a, g, k = raw["area_m2"], raw["gap_m"], raw["stiffness_n_per_m"]
    vb, cp = raw["bias_voltage_v"], raw["parasitic_capacitance_f"]
    ea = epsilon_0 * a
    xb = 0.0
    if include_bias_deflection:
        xb = brentq(lambda x: k * x - 0.5 * vb**2 * ea / (g - x) ** 2, 0.0, g / 3, xtol=1e-20,
                    rtol=1e-15)
    c, c1, c2 = ea / (g - xb), ea / (g - xb) ** 2, 2 * ea / (g - xb) ** 3  # C, C', C''
    ct = c + cp + raw.get("preamp_input_capacitance_f", 0.0)
    return dict(xb=xb, c=c, c1=c1, c2=c2, ct=ct, cbv=raw["back_volume_m3"] / (GAMMA * P0),
                fx=0.5 * vb**2 * c2 - vb**2 * c1**2 / ct, fq=vb * c1 / ct,
                vx=-vb * c1 / ct, vq=1.0 / ct, ke=0.5 * vb**2 * c2, gamma=vb * c1)


def state_space(raw: dict, current_input: bool = False) -> scipy.signal.StateSpace:
    """Time-domain state model of the piston capsule, built here from the raw physical inputs.

    Nothing is read from the library's model: the bias point, capacitance, transduction and
    electrostatic stiffness are derived below from the parallel-plate capacitor
    C(x) = ε0A/(g − x) (elementary electrostatics) at constant node charge.
    States x, ẋ, p_b, q (node charge; v = q/(C(x) + C_p)), small-signal about the bias point:
    m ẍ = −bẋ − kx + F_e + A(p − p_b), F_e = ½v²C'(x) linearised in x and q;
    C_bv ṗ_b = Aẋ + (p − p_b)/R_v with C_bv = V/(γp0) (adiabatic back volume, Beranek 1954
    [from memory]); q̇ = −v/R (+ i for the output-impedance model).  Input p (or the current i
    injected into the output node); output v.  States are scaled for conditioning.
    """
    a, m, k, b = (raw[n] for n in ("area_m2", "mass_kg", "stiffness_n_per_m",
                                    "damping_n_s_per_m"))
    vb, r = raw["bias_voltage_v"], raw["bias_resistance_ohm"]
    rv = raw["vent_resistance_pa_s_per_m3"]
    ss = small_signal(raw)
    cbv, ct, fx, fq, vx, vq = (ss[n] for n in ("cbv", "ct", "fx", "fq", "vx", "vq"))
    amat = np.array([
        [0.0, 1.0, 0.0, 0.0],
        [(-k + fx) / m, -b / m, -a / m, fq / m],
        [0.0, a / cbv, -1.0 / (rv * cbv), 0.0],
        [-vx / r, 0.0, 0.0, -vq / r],
    ])
    if current_input:
        bmat = np.array([[0.0], [0.0], [0.0], [1.0]])
    else:
        bmat = np.array([[0.0], [a / m], [1.0 / (rv * cbv)], [0.0]])
    cmat = np.array([[vx, 0.0, 0.0, vq]])
    w0 = math.sqrt(k / m)
    x0 = a / k
    t = np.diag([1 / x0, 1 / (w0 * x0), 1.0, 1 / (ct * vb * x0 / raw["gap_m"])])
    ti = np.linalg.inv(t)
    return scipy.signal.StateSpace(t @ amat @ ti, t @ bmat, cmat @ ti, np.zeros((1, 1)))


@pytest.mark.filterwarnings("ignore::scipy.signal.BadCoefficients")
def test_matches_independent_state_space_model():
    # reference: scipy.signal.freqresp of the time-domain state model (general-purpose library)
    # built from the raw inputs above, not from the model's derived parameters
    m = piston()
    f = np.logspace(0, 5, 61)
    _, h_ref = scipy.signal.freqresp(state_space(RAW), 2 * np.pi * f)
    h = frequency_response(m, f).voltage_per_pa
    assert np.max(np.abs(h / h_ref - 1)) < 1e-8


@pytest.mark.filterwarnings("ignore::scipy.signal.BadCoefficients")
def test_output_noise_obeys_nyquist():
    # Generalised Nyquist theorem (Nyquist 1928; Twiss, J. Appl. Phys. 26 (1955) 599 [from
    # memory]): a passive linear network whose losses all sit at one temperature T shows at its
    # port the open-circuit noise PSD 4 k_B T Re Z_out(f). Z_out from the independent state
    # model (current injected into the output node); k_B from scipy.constants. The three noise
    # sources of the model (bias resistor, mechanical damping, vent) must add up to it.
    m = piston()
    f = np.logspace(0, 5, 41)
    _, z_out = scipy.signal.freqresp(state_space(RAW, current_input=True), 2 * np.pi * f)
    nyquist = 4 * k_boltzmann * TEMPERATURE * z_out.real
    total = (output_noise_psd_resistor(m, f) + output_noise_psd_damping(m, f)
             + output_noise_psd_vent(m, f))
    rel_close_array(total, nyquist, rel=1e-9, what="output noise PSD vs 4kT Re Z_out")  # seen 1e-11


def test_capacitance_curve_model_matches_piston():
    # the model built from sampled C(x) = ε0A/(g − x) (parallel plate) must be the piston model:
    # k_e = ½V²C''(x_b) = V²ε0A/(g − x_b)³ and Γ = V C'(x_b) (Senturia 2001, ch. 6 [from memory])
    raw = dict(RAW)
    vb, g, ea = raw.pop("bias_voltage_v"), raw.pop("gap_m"), epsilon_0 * AREA
    raw.pop("area_m2")
    x = np.linspace(-g / 3, g / 3, 801)
    curve = tuple(zip(x, ea / (g - x)))
    m = from_capacitance_curve(curve, bias_voltage_v=vb, area_m2=AREA, gap_m=g, **raw)
    rel_close(m.electrostatic_stiffness_n_per_m, vb**2 * ea / g**3, rel=1e-5, what="k_e")
    rel_close(m.transduction_n_per_v, vb * ea / g**2, rel=1e-6, what="transduction")
    rel_close(m.rest_capacitance_f, ea / g, rel=1e-9, what="C0")


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
    assert r.highpass_corner_hz == pytest.approx(f_c, rel=1e-12, abs=0)
    assert r.acoustic_corner_hz < f_c / 100
    assert r.lowfreq_minus3db_hz == pytest.approx(f_c, rel=0.01, abs=0)


def test_low_corner_includes_motional_capacitance():
    # free vs blocked capacitance of a linear transducer: below the corner the bias resistor also
    # charges Γ²/k_stiff (Senturia, Microsystem Design, 2001, ch. 6 [from memory]); vent far below
    raw = dict(RAW, vent_resistance_pa_s_per_m3=1e16)
    m = piston(vent_resistance_pa_s_per_m3=1e16)
    ss = small_signal(raw)  # from the raw inputs, not the model's derived values
    k_stiff = raw["stiffness_n_per_m"] - ss["ke"] + AREA**2 / ss["cbv"]
    f_free = 1 / (2 * math.pi * raw["bias_resistance_ohm"] * (ss["ct"] + ss["gamma"]**2 / k_stiff))
    r = analyse_response(m)
    assert r.lowfreq_minus3db_hz == pytest.approx(f_free, rel=0.01, abs=0)
    assert r.lowfreq_minus3db_hz < 0.97 * r.highpass_corner_hz


def test_acoustic_corner_from_vent():
    # Beranek, Acoustics, 1954, ch. 5 [from memory]: C_bv = V/(γp0); vent corner 1/(2πR_v C_bv)
    # when the diaphragm compliance is small (here 0.25 % of C_bv); electrical corner far lower
    m = piston(bias_resistance_ohm=1e13, stiffness_n_per_m=5000.0, back_volume_m3=3e-9,
               vent_resistance_pa_s_per_m3=3e12)
    c_bv = 3e-9 / (1.4 * 101325.0)
    r = analyse_response(m)
    assert r.highpass_corner_hz < r.acoustic_corner_hz / 100
    assert r.acoustic_corner_hz == pytest.approx(1 / (2 * math.pi * 3e12 * c_bv), rel=0.005, abs=0)
    assert r.lowfreq_minus3db_hz == pytest.approx(r.acoustic_corner_hz, rel=0.01, abs=0)


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
    # 0.01 dB: the corners and the resonance lie ≥ 2 decades away (observed 0.002 dB)
    assert 20 * math.log10(s / s_ref) == pytest.approx(0.0, abs=0.01)
    assert r.sensitivity_db_v_per_pa == pytest.approx(20 * math.log10(s), abs=1e-12)


def test_resonance_and_q_closed_form():
    # single-degree-of-freedom oscillator: ω_r = √(k/m), Q = √(k m)/b (classical); the stiffness
    # is the constant-charge value plus the back volume
    m = piston(bias_resistance_ohm=1e12, vent_resistance_pa_s_per_m3=1e14)
    ss = small_signal(dict(RAW, bias_resistance_ohm=1e12, vent_resistance_pa_s_per_m3=1e14))
    k_hf = RAW["stiffness_n_per_m"] - ss["fx"] + AREA**2 / ss["cbv"]  # from raw inputs
    r = analyse_response(m)
    assert r.resonance_hz == pytest.approx(math.sqrt(k_hf / 4e-10) / (2 * math.pi), rel=1e-5, abs=0)
    assert r.quality_factor == pytest.approx(math.sqrt(k_hf * 4e-10) / 2e-5, rel=1e-4, abs=0)
    # peak of |x/p| of a second-order system: ω_p = ω_r·√(1 − 1/(2Q²))
    q = r.quality_factor
    assert r.peak_frequency_hz == pytest.approx(r.resonance_hz * math.sqrt(1 - 0.5 / q**2),
                                                rel=1e-4, abs=0)


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
                                            rel=1e-5, abs=0)


def test_resistor_noise_integrates_to_kt_over_c():
    # kT/C noise of a resistor across a capacitor (Johnson 1928 / Nyquist 1928): ∫ S_v df = k_BT/C;
    # weak electromechanical coupling (low bias) so the node is a plain RC
    m = piston(bias_voltage_v=0.1)
    c_node = small_signal(dict(RAW, bias_voltage_v=0.1))["ct"]  # C(x_b) + C_p from raw inputs
    integrand = lambda lf: float(output_noise_psd_resistor(m, [math.exp(lf)])[0]) * math.exp(lf)
    total = quad(integrand, math.log(1e-4), math.log(1e6), limit=200)[0]
    rel_close(total, k_boltzmann * 293.15 / c_node, rel=1e-3, what="∫S_v df vs kT/C")


def test_damping_noise_referred_to_input_is_4ktb_over_a2():
    # Gabrielson, IEEE Trans. Electron Devices 40 (1993) 903: pressure-noise PSD 4k_BT·R_a with
    # R_a = b/A² (the force noise acts like a pressure b/A² in series with the diaphragm).
    # The sound pressure reaches the diaphragm through the vent's high-pass
    # jωR_vC_bv/(1 + jωR_vC_bv) (Beranek 1954 [from memory]) while the force noise acts directly,
    # so referred to the input the PSD is 4k_BT·b/A²·(1 + 1/(ωR_vC_bv)²); C_bv = V/(γp0).
    m = piston()
    f = np.array([300.0, 1000.0, 3000.0])
    p_in = input_referred(m, f, output_noise_psd_damping(m, f))
    rc = 1e12 * 1e-9 / (1.4 * 101325.0)
    ref = 4 * k_boltzmann * 293.15 * 2e-5 / AREA**2 * (1 + 1 / (2 * np.pi * f * rc) ** 2)
    rel_close_array(p_in, ref, rel=1e-9, what="input-referred damping noise")


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
    rel_close_array(f, resp.frequency_hz, rel=1e-10, what="frequency")
    rel_close_array(mag * np.exp(1j * ph), resp.voltage_per_pa, rel=1e-9, what="complex response")
    rel_close_array(mag, np.abs(resp.voltage_per_pa), rel=1e-9, what="magnitude")
    # the dB column against the written magnitude (a level: tolerance in dB)
    assert np.max(np.abs(db - 20 * np.log10(np.abs(resp.voltage_per_pa)))) < 1e-8
    assert np.all(np.abs(np.diff(np.degrees(ph))) < 90.0)  # unwrapped
