"""SNR of the demo reproduced by hand from the reported input-referred noise spectrum.

A-weighting from its defining formula (IEC 61672-1:2013, pole frequencies 20.599, 107.653,
737.862, 12194.217 Hz, +2.00 dB at 1 kHz), band 20 Hz - 20 kHz, trapezoidal rule on a log grid
(interpolating the PSD log-log), 20 uPa reference, SNR re 94 dB SPL (1 Pa)."""
import numpy as np
import pytest

from diagap.design import demo_design
from diagap.pipeline import run_design


def _a_gain2(f):
    f1, f2, f3, f4 = 20.599, 107.653, 737.862, 12194.217
    ra = f4**2 * f**4 / ((f**2 + f1**2) * np.sqrt((f**2 + f2**2) * (f**2 + f3**2)) * (f**2 + f4**2))
    return (ra * 10 ** (2.0 / 20)) ** 2


def test_snr_by_hand():
    s = run_design(demo_design().with_accuracy("draft")).summary()["response"]
    data = np.array(s["input_noise_density_pa_per_rthz"])
    f, density = data[:, 0], data[:, 1]
    grid = np.logspace(np.log10(20.0), np.log10(20e3), 4000)
    psd = np.exp(np.interp(np.log(grid), np.log(f), np.log(density**2)))
    p2 = np.trapezoid(psd * _a_gain2(grid), grid)
    noise_db = 10 * np.log10(p2 / (20e-6) ** 2)
    assert s["noise_dba_spl"] == pytest.approx(noise_db, abs=0.05)
    assert s["snr_db"] == pytest.approx(94.0 - noise_db, abs=0.05)
    # the total is the power sum of its contributions (mechanical-thermal, bias resistor, vent)
    parts = s["noise_contributions_dba_spl"]
    total = 10 * np.log10(sum(10 ** (v / 10) for v in parts.values()))
    assert total == pytest.approx(s["noise_dba_spl"], abs=0.01)
