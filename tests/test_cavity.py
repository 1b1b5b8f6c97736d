"""Cavities with thermal wall losses (lumped/cavity.py): limits, boundary-layer asymptote and the
exact series of a rectangular box, computed here.

Sources: ideal-gas thermodynamics (isothermal V/p0, adiabatic V/(γp0)); the thermal boundary
layer of a wall, F ≈ 1 − (S/V)·δ_t(1 − j)/2 (Morse & Ingard, *Theoretical Acoustics*, 1968, §6.4
[from memory]); heat diffusion in a box with isothermal walls by separation of variables
(Carslaw & Jaeger, *Conduction of Heat in Solids*, 1959, §6.3 [from memory]).
"""
import math

import numpy as np
import pytest

from diagap.lumped.cavity import Cavity, box_cavity
from diagap.lumped.tubes import Gas, TubeError

GAS = Gas(density_kg_m3=1.204, viscosity_pa_s=1.813e-5, sound_speed_m_s=343.2, gamma=1.4,
          static_pressure_pa=101325.0)
ALPHA = GAS.viscosity_pa_s / (GAS.density_kg_m3 * GAS.prandtl)


def _box_series(omega, a, b, c, terms=400):
    """Exact volume-mean temperature of a box: Σ_{m,n odd} 64/(π⁴m²n²)(q²/k²)[1 − tanh(kc/2)/(kc/2)]."""
    q2 = 1j * omega / ALPHA
    m = np.arange(1, 2 * terms, 2, dtype=float)
    k2 = q2 + (m[:, None] * np.pi / a) ** 2 + (m[None, :] * np.pi / b) ** 2
    kk = np.sqrt(k2) * c / 2
    return np.sum(64 / (np.pi**4 * m[:, None] ** 2 * m[None, :] ** 2) * (q2 / k2)
                  * (1 - np.tanh(kk) / kk))


@pytest.mark.parametrize("cav", [Cavity(1e-9, 6e-6), box_cavity(2e-3, 1e-3, 0.5e-3)],
                         ids=["wall-area", "box"])
def test_isothermal_and_adiabatic_limits(cav):
    v = cav.volume_m3
    c_lo = cav.compliance([2 * math.pi * 1e-4], GAS)[0]
    c_hi = cav.compliance([2 * math.pi * 1e9], GAS)[0]
    assert c_lo.real == pytest.approx(v / GAS.static_pressure_pa, rel=1e-4, abs=0)
    assert c_hi.real == pytest.approx(v / (GAS.gamma * GAS.static_pressure_pa), rel=1e-3, abs=0)


def test_lossless_without_wall_area():
    c = Cavity(1e-9).compliance([10.0, 1e4], GAS)
    assert np.all(c == 1e-9 / (GAS.gamma * GAS.static_pressure_pa))


def test_boundary_layer_asymptote_and_positive_loss():
    cav = Cavity(1e-9, 6e-6)
    w = 2 * math.pi * np.array([3e4, 3e5])
    delta = np.sqrt(2 * ALPHA / w)
    f_ref = 1 - 6e-6 / 1e-9 * delta * (1 - 1j) / 2
    assert np.all(np.abs(cav.thermal_function(w, GAS) / f_ref - 1) < 1e-6)
    y = cav.admittance(np.logspace(0, 6, 13), GAS)
    assert np.all(y.real > 0)  # a passive loss at every frequency


def test_one_cubic_millimetre_at_one_kilohertz():
    """About 10 % above the adiabatic compliance at 1 kHz in a 1 mm³ cube (common practice)."""
    c = box_cavity(1e-3, 1e-3, 1e-3).compliance([2 * math.pi * 1e3], GAS)[0]
    assert 0.07 < c.real / (1e-9 / (GAS.gamma * GAS.static_pressure_pa)) - 1 < 0.13


@pytest.mark.parametrize("dims", [(1e-3, 1e-3, 1e-3), (2e-3, 2e-3, 0.25e-3)])
def test_box_model_against_exact_series(dims):
    """The two-asymptote form with the box's k0' against the exact box series: Re C within 1 %,
    Im C within 12 % (the model error stated in lumped/cavity.py)."""
    cav = box_cavity(*dims)
    for f in (10.0, 100.0, 1e3, 1e4):
        w = 2 * math.pi * f
        exact = GAS.gamma - (GAS.gamma - 1) * _box_series(w, *dims)
        model = GAS.gamma - (GAS.gamma - 1) * cav.thermal_function([w], GAS)[0]
        assert abs(model.real / exact.real - 1) < 0.01
        assert abs(model.imag / exact.imag - 1) < 0.12


def test_bad_wall_area():
    with pytest.raises(TubeError, match="wall_area_m2"):
        Cavity(1e-9, 1e-7)
