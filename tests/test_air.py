"""Air properties (fem.air) vs handbook air tables.

References: air at 20 °C, 101.325 kPa — ρ = 1.204 kg/m³, μ = 1.81–1.825e-5 Pa·s, c = 343.2 m/s,
γ = 1.400 (engineering handbook air tables [from memory]); mean free path 65 nm (Jennings,
J. Aerosol Sci. 19 (1988)), 68 nm often quoted; Sutherland's law with μ_ref = 1.716e-5 Pa·s at
273.15 K, S = 110.4 K (White, Viscous Fluid Flow).
"""
from __future__ import annotations

import pytest

from diagap.fem.air import AirPropertyError, air_properties, sutherland_viscosity


def test_air_at_20c_matches_handbook_table():
    air = air_properties(293.15, 101325.0)
    assert air.density_kg_per_m3 == pytest.approx(1.204, rel=1e-3, abs=0)
    assert 1.81e-5 <= air.viscosity_pa_s <= 1.825e-5
    assert air.speed_of_sound_m_per_s == pytest.approx(343.2, rel=1e-3, abs=0)
    assert air.heat_capacity_ratio == 1.4
    assert 64e-9 <= air.mean_free_path_m <= 68e-9  # Jennings 1988: 65 nm
    assert air.knudsen_number(4e-6) == pytest.approx(air.mean_free_path_m / 4e-6, rel=1e-6, abs=0)


def test_sutherland_law():
    assert sutherland_viscosity(273.15) == pytest.approx(1.716e-5, rel=1e-12, abs=0)  # White
    # μ ∝ T^{3/2}/(T + S): ratio between two temperatures written out independently
    ratio = (373.15 / 273.15) ** 1.5 * (273.15 + 110.4) / (373.15 + 110.4)
    assert sutherland_viscosity(373.15) / sutherland_viscosity(273.15) == pytest.approx(ratio, rel=1e-6, abs=0)


def test_pressure_scaling():
    """Ideal gas: ρ ∝ p, μ independent of p, λ ∝ 1/p."""
    a, b = air_properties(300.0, 1e5), air_properties(300.0, 5e4)
    assert b.density_kg_per_m3 / a.density_kg_per_m3 == pytest.approx(0.5, rel=1e-6, abs=0)
    assert b.viscosity_pa_s == a.viscosity_pa_s
    assert b.mean_free_path_m / a.mean_free_path_m == pytest.approx(2.0, rel=1e-6, abs=0)


@pytest.mark.parametrize("t,p,match", [
    (100.0, 1e5, r"temperature_k = 100 K .*\[150, 600\]"),
    (700.0, 1e5, "temperature_k"),
    (300.0, 10.0, r"static_pressure_pa = 10 Pa .*\[1000, 1e\+06\]"),
    (300.0, 2e6, "static_pressure_pa"),
    (float("nan"), 1e5, "temperature_k"),
])
def test_out_of_range_inputs(t, p, match):
    with pytest.raises(AirPropertyError, match=match):
        air_properties(t, p)
