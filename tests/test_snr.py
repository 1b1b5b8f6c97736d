"""SNR of the demo recomputed by hand from the output noise spectrum and the response.

A-weighting from its defining formula (IEC 61672-1:2013, pole frequencies 20.599, 107.653,
737.862, 12194.217 Hz, +2.00 dB at 1 kHz), band 20 Hz - 20 kHz, trapezoidal rule on a dense log
grid, 20 µPa reference, SNR re 94 dB SPL (1 Pa rms). The output-voltage noise PSDs of the three
sources are the library's (checked against Nyquist's theorem in tests/test_response.py); the
equivalent input noise divides them by |V/p|² at each frequency (the definition diagap reports;
DESIGN.md), and the integral, the weighting and the levels are done here."""
import numpy as np
import pytest

from diagap.design import demo_design
from diagap.lumped.response import (frequency_response, output_noise_psd_damping,
                                    output_noise_psd_resistor, output_noise_psd_vent)
from diagap.pipeline import run_design


def _a_gain2(f):
    f1, f2, f3, f4 = 20.599, 107.653, 737.862, 12194.217
    ra = f4**2 * f**4 / ((f**2 + f1**2) * np.sqrt((f**2 + f2**2) * (f**2 + f3**2)) * (f**2 + f4**2))
    return (ra * 10 ** (2.0 / 20)) ** 2


@pytest.fixture(scope="module")
def demo():
    res = run_design(demo_design().with_accuracy("draft"))
    return res.summary()["response"], res.sections["response"].objects["model"]


def test_snr_by_hand_from_output_noise_and_response(demo):
    s, model = demo
    grid = np.geomspace(20.0, 20e3, 4000)
    out = (output_noise_psd_damping(model, grid) + output_noise_psd_resistor(model, grid)
           + output_noise_psd_vent(model, grid))  # V²/Hz at the output
    h = np.abs(frequency_response(model, grid).voltage_per_pa)  # V/Pa
    p2 = np.trapezoid(out / h**2 * _a_gain2(grid), grid)  # Pa², A-weighted input noise
    noise_db = 10 * np.log10(p2 / (20e-6) ** 2)
    assert abs(s["noise_dba_spl"] - noise_db) < 0.02  # dB
    assert abs(s["snr_db"] - (94.0 - noise_db)) < 0.02  # dB, re 1 Pa = 94 dB SPL
    # the sensitivity is |V/p| at 1 kHz in dB re 1 V/Pa
    h1k = abs(frequency_response(model, [1000.0]).voltage_per_pa[0])
    assert abs(s["sensitivity_db_v_per_pa"] - 20 * np.log10(h1k)) < 1e-9
    # noise reported in the summary spectrum is the same input-referred density
    data = np.array(s["input_noise_density_pa_per_rthz"])
    f, density = data[:, 0], data[:, 1]
    inside = (f >= 20) & (f <= 20e3)
    ref = np.interp(np.log(f[inside]), np.log(grid), np.log(out / h**2))
    assert np.max(np.abs(np.log(density[inside] ** 2) - ref)) < 1e-3  # relative, on the PSD


def test_noise_contributions_add_up(demo):
    # the total is the power sum of its contributions (mechanical-thermal, bias resistor, vent)
    s, _ = demo
    parts = s["noise_contributions_dba_spl"]
    total = 10 * np.log10(sum(10 ** (v / 10) for v in parts.values()))
    assert abs(total - s["noise_dba_spl"]) < 0.01  # dB
