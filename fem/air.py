"""Properties of dry air as an ideal gas: density, viscosity, speed of sound, mean free path.

Formulas (SI units throughout):

* density, ideal gas: ρ = p / (R T), R = 287.05 J/(kg·K) (specific gas constant of dry air);
* dynamic viscosity, Sutherland's law (F. M. White, *Viscous Fluid Flow*, McGraw-Hill, eq. 1-36):
  μ = μ_ref (T/T_ref)^{3/2} (T_ref + S)/(T + S), μ_ref = 1.716e-5 Pa·s, T_ref = 273.15 K,
  S = 110.4 K; independent of pressure (dilute gas);
* speed of sound: c = √(γ R T), γ = 1.4 (diatomic ideal gas);
* mean free path from kinetic theory: λ = (μ/p)·√(π R T / 2), which gives ~65 nm at 20 °C and
  101.325 kPa (Jennings, J. Aerosol Sci. 19 (1988) quotes 65 nm).

At 20 °C and 101.325 kPa: ρ = 1.204 kg/m³, μ = 1.813e-5 Pa·s, c = 343.2 m/s, λ = 65.1 nm.
There is no finite-element part here; no discretisation error.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from diagap.fem.validate import Checks

__all__ = [
    "AirProperties",
    "AirPropertyError",
    "air_properties",
    "sutherland_viscosity",
    "R_SPECIFIC_J_PER_KG_K",
    "HEAT_CAPACITY_RATIO",
]

R_SPECIFIC_J_PER_KG_K = 287.05
HEAT_CAPACITY_RATIO = 1.4
_MU_REF_PA_S = 1.716e-5
_T_REF_K = 273.15
_SUTHERLAND_K = 110.4
_T_RANGE_K = (150.0, 600.0)
_P_RANGE_PA = (1.0e3, 1.0e6)


class AirPropertyError(ValueError):
    """A temperature or pressure outside the range where the air model is used."""


_check = Checks(AirPropertyError)


@dataclass(frozen=True)
class AirProperties:
    """State and transport properties of air (all SI).

    Attributes
    ----------
    temperature_k : float
        Absolute temperature (K).
    static_pressure_pa : float
        Static (ambient) pressure p0 (Pa).
    density_kg_per_m3 : float
        Ideal-gas density (kg/m³).
    viscosity_pa_s : float
        Dynamic viscosity, Sutherland's law (Pa·s).
    speed_of_sound_m_per_s : float
        Adiabatic speed of sound (m/s).
    heat_capacity_ratio : float
        γ = c_p/c_v (1).
    mean_free_path_m : float
        Molecular mean free path (m).
    """

    temperature_k: float
    static_pressure_pa: float
    density_kg_per_m3: float
    viscosity_pa_s: float
    speed_of_sound_m_per_s: float
    heat_capacity_ratio: float
    mean_free_path_m: float

    def knudsen_number(self, length_m: float) -> float:
        """Kn = λ / length (1) for a characteristic length in metres (e.g. the gap)."""
        _check.positive("length_m", length_m)
        return self.mean_free_path_m / length_m


def sutherland_viscosity(temperature_k: float) -> float:
    """Dynamic viscosity of air (Pa·s) by Sutherland's law (White, *Viscous Fluid Flow*)."""
    t = temperature_k
    return _MU_REF_PA_S * (t / _T_REF_K) ** 1.5 * (_T_REF_K + _SUTHERLAND_K) / (t + _SUTHERLAND_K)


def air_properties(temperature_k: float, static_pressure_pa: float) -> AirProperties:
    """Air properties at a temperature and static pressure.

    Parameters
    ----------
    temperature_k : float
        Absolute temperature (K), 150–600 K.
    static_pressure_pa : float
        Static pressure (Pa), 1 kPa – 1 MPa.

    Returns
    -------
    AirProperties

    Raises
    ------
    AirPropertyError
        If an input lies outside its range (the message names the field, value and range).
    """
    t = _check.in_range("temperature_k", temperature_k, *_T_RANGE_K, unit="K")
    p = _check.in_range("static_pressure_pa", static_pressure_pa, *_P_RANGE_PA, unit="Pa")
    r = R_SPECIFIC_J_PER_KG_K
    mu = sutherland_viscosity(t)
    return AirProperties(
        temperature_k=t,
        static_pressure_pa=p,
        density_kg_per_m3=p / (r * t),
        viscosity_pa_s=mu,
        speed_of_sound_m_per_s=math.sqrt(HEAT_CAPACITY_RATIO * r * t),
        heat_capacity_ratio=HEAT_CAPACITY_RATIO,
        mean_free_path_m=mu / p * math.sqrt(math.pi * r * t / 2.0),
    )
