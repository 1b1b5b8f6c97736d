"""Lossy tubes and slots (lumped/tubes.py) against series, quadrature and closed forms written here.

Sources: Zwikker & Kosten, *Sound Absorbing Materials*, 1949, and Stinson, J. Acoust. Soc. Am. 89
(1991) 550 (viscous/thermal functions); Hagen–Poiseuille; White, *Viscous Fluid Flow*, 3rd ed.,
2006, eq. 3-48 (rectangular duct); Rayleigh, *Theory of Sound*, 1896, §307 and Kinsler et al.,
*Fundamentals of Acoustics*, 2000, §10.8 (end corrections).
"""
import math

import numpy as np
import pytest
from scipy import integrate

from diagap.lumped.tubes import (Channel, Gas, end_correction_m, rectangle_self_integral_m3,
                                 viscous_function_rectangle, viscous_function_slit,
                                 viscous_function_tube)

GAS = Gas(density_kg_m3=1.204, viscosity_pa_s=1.813e-5, sound_speed_m_s=343.2, gamma=1.4,
          static_pressure_pa=101325.0)


def _bessel_series(n, z, terms=120):
    """J_n(z) by its power series Σ (−1)^k (z/2)^{2k+n}/(k!(k+n)!) (Abramowitz & Stegun 9.1.10)."""
    total, term = 0j, (z / 2) ** n / math.factorial(n)
    for k in range(terms):
        total += term
        term *= -(z / 2) ** 2 / ((k + 1) * (k + 1 + n))
    return total


def _bessel_hankel(n, z):
    """J_n(z) for large |z| by Hankel's asymptotic expansion (A&S 9.2.5–9.2.10, 12 terms)."""
    mu = 4 * n * n
    p, q, a = 0j, 0j, 1.0 + 0j
    for k in range(24):
        a_k = a if k == 0 else a
        if k % 2 == 0:
            p += (-1) ** (k // 2) * a_k
        else:
            q += (-1) ** (k // 2) * a_k
        a = a * (mu - (2 * k + 1) ** 2) / ((k + 1) * 8 * z)
    chi = z - (n / 2 + 0.25) * math.pi
    return np.sqrt(2 / (math.pi * z)) * (p * np.cos(chi) - q * np.sin(chi))


@pytest.mark.parametrize("s", [0.05, 0.5, 1.0, 3.0, 8.0, 20.0])
def test_tube_function_against_power_series(s):
    """F = 1 − 2J1(z)/(zJ0(z)), z = s e^{−jπ/4} (Stinson 1991), Bessel series in the test."""
    z = s * np.exp(-0.25j * np.pi)
    ref = 1 - 2 * _bessel_series(1, z) / (z * _bessel_series(0, z))
    got = viscous_function_tube(s)
    assert abs(got / ref - 1) <= 1e-6


@pytest.mark.parametrize("s", [60.0, 200.0, 500.0])
def test_tube_function_against_hankel_expansion(s):
    z = s * np.exp(-0.25j * np.pi)
    ref = 1 - 2 * _bessel_hankel(1, z) / (z * _bessel_hankel(0, z))
    assert abs(viscous_function_tube(s) / ref - 1) <= 1e-6


@pytest.mark.parametrize("s", [0.05, 0.3, 2.0, 10.0, 100.0])
def test_slit_function_against_profile_quadrature(s):
    """Mean of the oscillating slit-flow profile 1 − cosh(qy)/cosh(qh/2) by quadrature."""
    qh2 = s * np.exp(0.25j * np.pi)
    f = lambda y, part: getattr(1 - np.cosh(qh2 * y) / np.cosh(qh2), part)  # noqa: E731
    re = integrate.quad(f, 0, 1, args=("real",), epsabs=0, epsrel=1e-10, limit=200)[0]
    im = integrate.quad(f, 0, 1, args=("imag",), epsabs=0, epsrel=1e-10, limit=200)[0]
    assert abs(viscous_function_slit(s) / complex(re, im) - 1) <= 1e-6


def test_poiseuille_limit_of_a_narrow_tube():
    """Z' → 8μ/(πa⁴) per metre (Hagen–Poiseuille) when s = a√(ωρ/μ) ≪ 1."""
    ch = Channel(1e-3, radius_m=2e-6)
    z, _ = ch.line_parameters([2 * math.pi * 100.0], GAS)
    ref = 8 * GAS.viscosity_pa_s / (math.pi * 2e-6**4)
    assert z[0].real == pytest.approx(ref, rel=1e-6, abs=0)
    assert ch.static_resistance_pa_s_per_m3(GAS) == pytest.approx(
        ref * 1e-3 + 3 * GAS.viscosity_pa_s / 2e-6**3, rel=1e-9, abs=0)  # + Sampson (1891)


def test_boundary_layer_limit_of_a_wide_tube():
    """Wide tube: Re Z' → √(2ωρμ)/(a·S), Im Z' → ωρ/S·(1 + √2/s) (viscous boundary layer)."""
    a, w = 5e-3, 2 * math.pi * 20e3
    ch = Channel(1e-2, radius_m=a)
    s = a * math.sqrt(w * GAS.density_kg_m3 / GAS.viscosity_pa_s)
    z, y = ch.line_parameters([w], GAS)
    area = math.pi * a * a
    r_ref = math.sqrt(2 * w * GAS.density_kg_m3 * GAS.viscosity_pa_s) / (a * area)
    assert z[0].real == pytest.approx(r_ref, rel=3.0 / s, abs=0)
    assert z[0].imag == pytest.approx(w * GAS.density_kg_m3 / area * (1 + math.sqrt(2) / s),
                                      rel=3.0 / s**2, abs=0)
    # thermal: adiabatic compressibility plus the boundary-layer term
    st = s * math.sqrt(GAS.prandtl)
    y_ref = w * area / (GAS.gamma * GAS.static_pressure_pa) * (1 + (GAS.gamma - 1) * math.sqrt(2)
                                                              / st)
    assert y[0].imag == pytest.approx(y_ref, rel=3.0 / st**2, abs=0)


def test_isothermal_limit_of_a_narrow_tube():
    ch = Channel(1e-3, radius_m=1e-6)
    _, y = ch.line_parameters([2 * math.pi * 10.0], GAS)
    assert y[0].imag == pytest.approx(2 * math.pi * 10.0 * math.pi * 1e-12
                                      / GAS.static_pressure_pa, rel=1e-6, abs=0)


def test_rectangular_duct_poiseuille_series():
    """Low-frequency resistance of an h × w duct against White (2006) eq. 3-48:
    Q = (wh³/12μ)(−dp/dx)[1 − (192h/(π⁵w)) Σ_{n odd} tanh(nπw/2h)/n⁵]."""
    for h, w in ((1e-5, 1e-4), (1e-5, 1e-5), (2e-6, 6e-5)):
        ch = Channel(1e-3, slot_m=(h, w))
        n = np.arange(1, 400, 2)
        q = w * h**3 / (12 * GAS.viscosity_pa_s) * (
            1 - 192 * h / (np.pi**5 * w) * np.sum(np.tanh(n * np.pi * w / (2 * h)) / n**5))
        got = ch.static_resistance_pa_s_per_m3(GAS) - ch.end_resistance_pa_s_per_m3(GAS)
        assert got == pytest.approx(1e-3 / q, rel=1e-6, abs=0)


def test_rectangle_tends_to_the_slit():
    nu = GAS.viscosity_pa_s / GAS.density_kg_m3
    w = 2 * np.pi * np.array([100.0, 1e4])
    h = 1e-5
    rect = viscous_function_rectangle(w, h, 500 * h, nu)
    slit = viscous_function_slit(0.5 * h * np.sqrt(w / nu))
    # side walls cost ≈ 0.63 h/w of the flow (White 2006, eq. 3-48)
    assert np.all(np.abs(rect / slit - 1) < 1.5 * 0.63 / 500)
    assert np.all(np.abs(rect / slit - 1) > 0.3 * 0.63 / 500)


def test_end_corrections():
    """Circle flanged 8a/(3π) ≈ 0.85a (Rayleigh; Kinsler et al.), unflanged 0.6133a (Levine &
    Schwinger 1948); rectangle: the self-integral ∬1/r against numerical quadrature, and the unit
    square's ⟨1/r⟩ = 4 ln(1 + √2) − (4/3)(√2 − 1) [from memory]."""
    assert end_correction_m(1e-3) == pytest.approx(8e-3 / (3 * math.pi), rel=1e-12, abs=0)
    assert end_correction_m(1e-3) == pytest.approx(0.85e-3, rel=0.002, abs=0)
    assert end_correction_m(1e-3, flanged=False) == pytest.approx(0.6133e-3, rel=1e-4, abs=0)
    sq = 4 * math.log(1 + math.sqrt(2)) - 4 / 3 * (math.sqrt(2) - 1)
    assert rectangle_self_integral_m3(1.0, 1.0) == pytest.approx(sq, rel=1e-12, abs=0)
    a, b = 2.0, 0.5
    num = 4 * integrate.dblquad(lambda v, u: (a - u) * (b - v) / math.hypot(u, v), 0, a, 0, b,
                                epsabs=0, epsrel=1e-10)[0]
    assert rectangle_self_integral_m3(a, b) == pytest.approx(num, rel=1e-7, abs=0)
    # a square slot's end correction is close to that of the equal-area circle
    assert end_correction_m(slot_m=(1e-3, 1e-3)) == pytest.approx(
        end_correction_m(1e-3 / math.sqrt(math.pi)), rel=0.02, abs=0)


def test_abcd_is_reciprocal_and_lossless_line_is_a_delay():
    ch = Channel(0.05, radius_m=0.01)
    m = ch.abcd([2 * math.pi * 500.0], GAS)[0]
    assert np.linalg.det(m) == pytest.approx(1.0, rel=1e-12, abs=0)
    # low loss: cosh(ΓL) ≈ cos(kL)
    k = 2 * math.pi * 500.0 / GAS.sound_speed_m_s
    assert m[0, 0].real == pytest.approx(math.cos(k * 0.05), rel=2e-3, abs=0)


def test_viscous_end_resistances():
    """Creeping flow through an aperture in a thin wall: circle 3μ/a³ (Sampson, Phil. Trans. R.
    Soc. A 182, 1891); slit of half-width c and length w, flux per length πc²Δp/(8μ) (Hasimoto,
    J. Phys. Soc. Japan 13, 1958 [from memory])."""
    mu = GAS.viscosity_pa_s
    assert Channel(1e-6, radius_m=5e-6).end_resistance_pa_s_per_m3(GAS) == pytest.approx(
        3 * mu / 5e-6**3, rel=1e-12, abs=0)
    c, w = 1e-6, 3e-4
    flux = math.pi * c * c / (8 * mu) * w
    assert Channel(1e-6, slot_m=(2 * c, w)).end_resistance_pa_s_per_m3(GAS) == pytest.approx(
        1 / flux, rel=1e-12, abs=0)
