r"""A small closed air volume with heat exchange at its walls: complex acoustic compliance.

Physics.  In a cavity small against the wavelength the pressure p is uniform, and the gas density
follows ρ'/ρ0 = p/p0 − θ/T0 (ideal gas).  Far from the walls the gas is compressed adiabatically,
θ_ad/T0 = ((γ − 1)/γ)·p/p0; the walls (a solid of large heat capacity) hold θ = 0, and heat
diffuses in between:  jωθ − α∇²θ = jωθ_ad,  θ = 0 on the walls,  α = κ/(ρc_p) = μ/(ρPr).
With F = ⟨θ⟩/θ_ad the volume-mean temperature relative to the adiabatic one, the compliance
C = ΔV/p is

    C(ω) = (V/(γp0))·[γ − (γ − 1)·F(ω)]           (m³/Pa),

between the isothermal limit V/p0 (F → 0, ω → 0) and the adiabatic limit V/(γp0) (F → 1); its
imaginary part is the thermal loss, an admittance Y = jωC with Re Y = −ω·Im C > 0.

Models.
* Wall area only — the equivalent slab: F from the exact solution for a layer of gas between two
  parallel isothermal walls, F = 1 − tanh(Z)/Z, Z = l·√(jω/α), half-thickness l = V/S_w.  It
  has both limits exactly and, at high frequency, the thermal-boundary-layer asymptote of any
  smooth cavity, F ≈ 1 − (S_w/V)·δ_t(1 − j)/2, δ_t = √(2α/ω) (the boundary-layer admittance of
  the walls; Morse & Ingard, *Theoretical Acoustics*, 1968, §6.4 [from memory]).  Between the
  limits the shape matters: the low-frequency relaxation time k0'/α (k0' = ⟨ψ⟩, −∇²ψ = 1 in the
  cavity, ψ = 0 on the walls) is l²/(3α) for the slab but ≈ 2.2× that for a cube of the same
  V/S_w, so for a cube the slab's Re C is up to 6 % high near 100 Hz and its Im C up to 50 % off.
* A box a × b × c (V = abc, S_w = 2(ab + bc + ca)): the two-asymptote form of Lafarge et al.
  (J. Acoust. Soc. Am. 102, 1997, 1995), F = jω'/(jω' + √(1 + jω'M'/2)), ω' = ωk0'/α,
  M' = 8k0'/Λ'², Λ' = 2V/S_w, with the box's exact k0' (double sine series, exact across the
  third side).  Against the exact series of the box (tests/test_cavity.py): Re C within 1 %,
  Im C within 11 % at every frequency.

At 1 kHz the boundary layer δ_t ≈ 84 µm: a 1 mm³ cube (l = 167 µm) is ≈ 10 % more compliant
than adiabatic.  Units: SI.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from diagap.lumped.tubes import Gas, TubeError, viscous_function_slit

__all__ = ["Cavity", "box_cavity", "box_thermal_permeability_m2"]


@dataclass(frozen=True)
class Cavity:
    """A closed volume ``volume_m3`` with wall area ``wall_area_m2`` (None: adiabatic, lossless).

    Parameters
    ----------
    volume_m3 : V (m³), > 0.
    wall_area_m2 : S_w (m²), at least the area of the sphere of volume V; None for the purely
        adiabatic compliance V/(γp0).
    static_thermal_permeability_m2 : k0' = ⟨ψ⟩ (m²) of the shape; with it the two-asymptote
        form is used, without it the equivalent slab (see the module docstring).
    """

    volume_m3: float
    wall_area_m2: float | None = None
    static_thermal_permeability_m2: float | None = None

    def __post_init__(self):
        v = self.volume_m3
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise TubeError(f"volume_m3 = {v!r}: must be a finite number > 0")
        s = self.wall_area_m2
        if s is not None:
            sphere = (36.0 * math.pi * v * v) ** (1.0 / 3.0)
            if not (isinstance(s, (int, float)) and math.isfinite(s) and s >= sphere * (1 - 1e-9)):
                raise TubeError(f"wall_area_m2 = {s!r}: must be at least {sphere:.4g} m², the "
                                "area of a sphere of that volume")

    @property
    def half_thickness_m(self) -> float:
        """l = V/S_w of the equivalent slab (m)."""
        return self.volume_m3 / self.wall_area_m2

    def thermal_function(self, omega, gas: Gas) -> np.ndarray:
        """F(ω) = ⟨θ⟩/θ_ad (1 without wall area)."""
        w = np.atleast_1d(np.asarray(omega, float))
        if self.wall_area_m2 is None:
            return np.ones(w.shape, complex)
        k0 = self.static_thermal_permeability_m2
        if k0 is not None:
            wp = 1j * w * k0 / gas.thermal_diffusivity_m2_s
            m = 8.0 * k0 / (2.0 * self.half_thickness_m) ** 2
            return wp / (wp + np.sqrt(1.0 + wp * m / 2.0))
        return viscous_function_slit(self.half_thickness_m
                                     * np.sqrt(w / gas.thermal_diffusivity_m2_s))

    def compliance(self, omega, gas: Gas) -> np.ndarray:
        """C(ω) = (V/(γp0))·[γ − (γ − 1)F] (m³/Pa, complex)."""
        g = gas.gamma
        return (self.volume_m3 / (g * gas.static_pressure_pa)
                * (g - (g - 1.0) * self.thermal_function(omega, gas)))

    def admittance(self, omega, gas: Gas) -> np.ndarray:
        """Y = jωC(ω) (m³/(Pa·s)); Re Y is the thermal loss."""
        w = np.atleast_1d(np.asarray(omega, float))
        return 1j * w * self.compliance(w, gas)


def box_thermal_permeability_m2(a_m: float, b_m: float, c_m: float, terms: int = 200) -> float:
    """k0' = ⟨ψ⟩ of a box (m²), −∇²ψ = 1, ψ = 0 on the walls: sine series across a and b, exact
    across c, Σ_{m,n odd} 64/(π⁴m²n²λ)·[1 − tanh(√λ c/2)/(√λ c/2)], λ = (mπ/a)² + (nπ/b)²
    (terms fall as (mn)⁻²λ⁻¹; 200 odd terms each way leave < 1e-6)."""
    m = np.arange(1, 2 * terms, 2, dtype=float)
    lam = (m[:, None] * np.pi / a_m) ** 2 + (m[None, :] * np.pi / b_m) ** 2
    x = np.sqrt(lam) * c_m / 2.0
    bracket = np.where(x < 1e-3, x * x / 3.0, 1.0 - np.tanh(x) / np.maximum(x, 1e-3))
    return float(np.sum(64.0 / (np.pi**4 * m[:, None] ** 2 * m[None, :] ** 2 * lam) * bracket))


def box_cavity(a_m: float, b_m: float, c_m: float) -> Cavity:
    """The cavity of a rectangular box a × b × c: V = abc, S_w = 2(ab + bc + ca)."""
    for name, v in (("a_m", a_m), ("b_m", b_m), ("c_m", c_m)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise TubeError(f"{name} = {v!r}: must be a finite number > 0")
    return Cavity(a_m * b_m * c_m, 2.0 * (a_m * b_m + b_m * c_m + c_m * a_m),
                  box_thermal_permeability_m2(a_m, b_m, c_m))
