"""Mechanical-thermal noise (lumped.noise) and A-weighting (lumped.weighting).

References: IEC 61672-1:2013 (A-weighting formula and table); Gabrielson, IEEE Trans. Electron
Devices 40 (1993) 903 (force noise 4 k_B T b); CODATA / SI 2019 Boltzmann constant via
scipy.constants (reference library); ISO/IEC acoustics convention p_ref = 20 µPa.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import constants, integrate

from checks import rel_close_array
from diagap.lumped.noise import (
    NoiseError,
    a_weighted_level_db,
    mechanical_thermal_noise,
    spl_db,
)
from diagap.lumped.weighting import WeightingError, a_weighting_db, a_weighting_gain

# IEC 61672-1:2013 table, nominal octave centres -> A (dB); evaluated at the exact base-10
# midband frequencies 1000·10^(3n/10) Hz (IEC 61260), as the standard's table is.
IEC_TABLE = {31.5: -39.4, 63: -26.2, 125: -16.1, 250: -8.6, 500: -3.2, 1000: 0.0, 2000: 1.2,
             4000: 1.0, 8000: -1.1, 16000: -6.6}


@pytest.mark.parametrize("n,nominal", list(enumerate(IEC_TABLE, start=-5)))
def test_a_weighting_matches_iec_table(n, nominal):
    exact = 1000.0 * 10 ** (3 * n / 10)
    assert abs(a_weighting_db(exact) - IEC_TABLE[nominal]) <= 0.1  # IEC 61672-1:2013 table


def test_a_weighting_normalisation_and_gain():
    assert a_weighting_db(1000.0) == pytest.approx(0.0, abs=0.005)  # IEC 61672-1: A(1 kHz) = 0
    assert a_weighting_gain(0.0) == 0.0 and a_weighting_db(0.0) == -np.inf
    # written out independently from the IEC 61672-1:2013 formula, gain and level on 10 Hz-20 kHz
    f1, f2, f3, f4 = 20.599, 107.653, 737.862, 12194.217
    f = np.geomspace(10, 20000, 50)
    ra = f4**2 * f**4 / ((f**2 + f1**2) * np.sqrt((f**2 + f2**2) * (f**2 + f3**2))
                         * (f**2 + f4**2))
    rel_close_array(a_weighting_gain(f), ra * 10 ** (2.0 / 20), rel=1e-12, what="A gain")
    assert np.max(np.abs(a_weighting_db(f) - (20 * np.log10(ra) + 2.0))) < 1e-10
    with pytest.raises(WeightingError, match="frequency_hz"):
        a_weighting_db(-1.0)


def test_force_noise_is_4kTb():
    """Gabrielson 1993: S_F = 4 k_B T b; k_B from scipy.constants (CODATA)."""
    f = np.geomspace(20, 20000, 7)
    b = np.linspace(1e-5, 2e-5, 7)
    noise = mechanical_thermal_noise(f, b, 293.15, 2.6e-7)
    rel_close_array(noise.force_psd_n2_per_hz, 4 * constants.k * 293.15 * b, rel=1e-14,
                    what="force noise PSD")
    rel_close_array(noise.pressure_psd_pa2_per_hz, 4 * constants.k * 293.15 * b / 2.6e-7**2,
                    rel=1e-14, what="pressure noise PSD")


def test_a_weighted_level_vs_quadrature():
    """Flat PSD: L_A = 10 log10(S0 ∫|A|² df / p_ref²), integral by scipy quad."""
    s0 = 1e-10
    ref = integrate.quad(lambda f: a_weighting_gain(f) ** 2, 20, 20000, limit=200,
                         epsabs=0.0, epsrel=1e-12)[0]
    expected = 10 * np.log10(s0 * ref / 20e-6**2)
    assert a_weighted_level_db([20.0, 20000.0], s0) == pytest.approx(expected, abs=1e-6)
    # a 1/f spectrum, interpolated log-log from a coarse grid, is integrated exactly
    f = np.geomspace(20, 20000, 4)
    ref_pink = integrate.quad(lambda x: 1e-8 / x * a_weighting_gain(x) ** 2, 20, 20000,
                              limit=200, epsabs=0.0, epsrel=1e-12)[0]
    assert a_weighted_level_db(f, 1e-8 / f) == pytest.approx(
        10 * np.log10(ref_pink / 20e-6**2), abs=1e-6)


def test_spl_reference():
    assert spl_db(1.0) == pytest.approx(93.98, abs=0.01)  # 1 Pa = 94 dB SPL (re 20 µPa)
    assert spl_db(20e-6) == pytest.approx(0.0, abs=1e-12)


def test_noise_level_scales_with_damping():
    f = np.array([20.0, 20000.0])
    n1 = mechanical_thermal_noise(f, 1e-5, 293.15, 2.6e-7).a_weighted_spl_db()
    n2 = mechanical_thermal_noise(f, 1e-4, 293.15, 2.6e-7).a_weighted_spl_db()
    assert n2 - n1 == pytest.approx(10.0, abs=1e-9)  # PSD ∝ b: ×10 → +10 dB


@pytest.mark.parametrize("call,match", [
    (lambda: a_weighted_level_db([100.0, 20000.0], 1e-10), "cover the band"),
    (lambda: a_weighted_level_db([20.0, 10.0], 1e-10), "increasing"),
    (lambda: a_weighted_level_db([20.0, 20000.0], -1.0), ">= 0"),
    (lambda: mechanical_thermal_noise([20.0, 2e4], 1e-5, -3.0, 1e-7), "temperature_k"),
    (lambda: mechanical_thermal_noise([20.0, 2e4], 1e-5, 293.0, 0.0), "effective_area_m2"),
    (lambda: spl_db(0.0), "pressure_rms_pa"),
])
def test_noise_errors(call, match):
    with pytest.raises(NoiseError, match=match):
        call()
