r"""Narrow tubes and slots as lossy acoustic transmission lines (low-reduced-frequency model).

Model (Zwikker & Kosten, *Sound Absorbing Materials*, 1949; general form and slits: Stinson,
J. Acoust. Soc. Am. 89 (1991) 550).  In a channel whose cross-section is small against the
wavelength, the pressure p is uniform over a cross-section and the gas obeys, per unit length
(phasors e^{jωt}, volume velocity U, cross-section area S):

    −dp/dx = Z'·U,   Z' = jωρ / (S·F_v),
    −dU/dx = Y'·p,   Y' = jωS/(γp0) · [γ − (γ − 1)·F_t],

with the viscous function F_v (the mean of the oscillating-flow profile over the section relative
to inviscid plug flow) and the thermal function F_t (the same with the thermal diffusivity; the
walls are isothermal).  Both → 1 in a wide channel (inertance ρ/S, adiabatic compressibility) and
→ 0 in a narrow one (viscous flow, isothermal gas).  With q² = jωρ/μ (viscous) or
q_t² = jωρc_p/κ = q²·Pr (thermal):

* circular tube of radius a, shear-wave number s = a√(ωρ/μ), z = s·e^{−jπ/4} (s_t = s√Pr):
  F = 1 − 2J1(z)/(z·J0(z)) = −J2(z)/J0(z) (the second form has no cancellation at small s;
  exponentially scaled Bessel functions, ``scipy.special.jve``, keep large s finite);
* slit of height h between parallel walls (infinitely wide), Z = (h/2)·q:
  F = 1 − tanh(Z)/Z (series for |Z| < 0.05);
* rectangle h × w (h the smaller side): sine series across w, exact across h,
  F = Σ_{n odd} 8/(π²n²) · (q²/k_n²) · [1 − tanh(k_n h/2)/(k_n h/2)], k_n² = q² + (nπ/w)²,
  which → the slit as w/h → ∞ (used beyond w/h = 1000, where the side walls change the flow
  resistance by ≈ 0.63h/w < 0.07 %, White, *Viscous Fluid Flow*, 2006, eq. 3-48).

Limits (checked in tests/test_tubes.py): narrow tube F_v → j s²/8, Z' → 8μ/(πa⁴) per metre
(Hagen–Poiseuille); wide tube F_v → 1 − √2(1 − j)/s, Re Z' → √(2ωρμ)/(a·S) (viscous boundary layer);
narrow slit Z' → 12μ/(w h³).

A channel of length L is the two-port (ABCD) matrix

    [p1]   [cosh ΓL      Z_c sinh ΓL] [p2]
    [U1] = [sinh ΓL/Z_c  cosh ΓL    ] [U2],   Γ = √(Z'Y'),  Z_c = √(Z'/Y'),

U flowing from end 1 to end 2.  Ends (flanged: the channel opens through a wall, as a sound port
in a package or a vent through a diaphragm):

* inertial end correction Δ (added length of plug flow at each end): circle 8a/(3π) ≈ 0.85a
  (Rayleigh, *Theory of Sound*, 1896, §307, uniform-velocity piston in a baffle; Kinsler et al.,
  *Fundamentals of Acoustics*, 4th ed., 2000, §10.8: flanged 0.85a, unflanged 0.61a); for a
  rectangle the same uniform-velocity piston mass, Δ = (1/(2πS))∬ dA dA'/|r − r'|, whose
  integral over a rectangle has the closed form used in :func:`end_correction_m`;
* viscous end resistance of the two ends together: creeping flow through an aperture in a thin wall,
  Sampson's 3μ/a³ for a circle (Phil. Trans. R. Soc. A 182, 1891), Hasimoto's 32μ/(πh²w) for a
  slit of width h and length w (J. Phys. Soc. Japan 13, 1958 [from memory]), which dominates very
  short channels (a vent through a diaphragm).  It is the low-frequency (Stokes) value, kept at all
  frequencies: at audio frequencies it matters only for channels far narrower than the viscous
  boundary layer, where it is exact.

Units: SI throughout (m, Pa, m³/s, Pa·s/m³).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

__all__ = ["Gas", "PRANDTL_AIR", "Channel", "TubeError", "viscous_function_tube",
           "viscous_function_slit", "viscous_function_rectangle", "end_correction_m",
           "rectangle_self_integral_m3"]

#: Prandtl number μc_p/κ of air near room temperature (0.71; Kinsler et al., *Fundamentals of
#: Acoustics*, 2000, Table A.8 [from memory])
PRANDTL_AIR = 0.71
#: unflanged circular end correction / radius (Levine & Schwinger, Phys. Rev. 73, 1948)
UNFLANGED_CIRCLE = 0.6133
_SLIT_SERIES = 0.05


class TubeError(ValueError):
    """A channel's dimensions or the gas properties are out of range."""


def _positive(name: str, value: float) -> float:
    if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
        raise TubeError(f"{name} = {value!r}: must be a finite number > 0")
    return float(value)


@dataclass(frozen=True)
class Gas:
    """The gas in a channel or cavity (SI): density ρ, viscosity μ, sound speed c, γ, p0, Pr."""

    density_kg_m3: float
    viscosity_pa_s: float
    sound_speed_m_s: float
    gamma: float
    static_pressure_pa: float
    prandtl: float = PRANDTL_AIR

    def __post_init__(self):
        for name in ("density_kg_m3", "viscosity_pa_s", "sound_speed_m_s", "gamma",
                     "static_pressure_pa", "prandtl"):
            _positive(name, getattr(self, name))

    @property
    def thermal_diffusivity_m2_s(self) -> float:
        """κ/(ρc_p) = μ/(ρ·Pr) (m²/s)."""
        return self.viscosity_pa_s / (self.density_kg_m3 * self.prandtl)


def viscous_function_tube(s) -> np.ndarray:
    """F = −J2(z)/J0(z), z = s·e^{−jπ/4}, for shear-wave numbers s ≥ 0 (circular tube).

    Equal to 1 − 2J1(z)/(zJ0(z)); pass s·√Pr for the thermal function."""
    s = np.asarray(s, float)
    z = s * np.exp(-0.25j * np.pi)
    return -special.jve(2, z) / special.jve(0, z)


def viscous_function_slit(s_half) -> np.ndarray:
    """F = 1 − tanh(Z)/Z, Z = s_half·e^{jπ/4}, s_half = (h/2)√(ωρ/μ) (slit of height h)."""
    return _one_minus_tanh_ratio(np.asarray(s_half, float) * np.exp(0.25j * np.pi))


def _one_minus_tanh_ratio(zz) -> np.ndarray:
    """1 − tanh(Z)/Z for complex Z (series for |Z| < 0.05, where the direct form cancels)."""
    zz = np.asarray(zz, complex)
    small = np.abs(zz) < _SLIT_SERIES
    z2 = np.where(small, zz * zz, 0.0)
    series = z2 / 3 - 2 * z2**2 / 15 + 17 * z2**3 / 315 - 62 * z2**4 / 2835
    zs = np.where(small, 1.0, zz)
    return np.where(small, series, 1.0 - np.tanh(zs) / zs)


def viscous_function_rectangle(omega, height_m: float, width_m: float, diffusivity_m2_s: float,
                               terms: int | None = None) -> np.ndarray:
    """F of a rectangular duct h × w (h ≤ w) for the diffusivity ν = μ/ρ (or κ/(ρc_p)).

    The series of the module docstring, summed in the form
    F = [1 − tanh(qw/2)/(qw/2)] − Σ_{n odd} 8/(π²n²)·(q²/k_n²)·tanh(K_n)/K_n, K_n = k_n h/2
    (the first term is the sum of 8/(π²n²)·q²/k_n², the slit across the width), whose terms fall
    as n⁻⁵ once n ≫ w/h: ``terms`` (default 200 + 20·w/h, at most 20 000) odd n are kept."""
    w = np.atleast_1d(np.asarray(omega, float))
    h, b = min(height_m, width_m), max(height_m, width_m)
    q2 = 1j * w / diffusivity_m2_s
    if terms is None:
        terms = int(min(20000, 200 + 20 * b / h))
    n = np.arange(1, 2 * terms, 2, dtype=float)
    kn2 = q2[:, None] + (n[None, :] * np.pi / b) ** 2
    kk = np.sqrt(kn2) * h / 2.0
    ratio = 1.0 - _one_minus_tanh_ratio(kk)
    lead = _one_minus_tanh_ratio(np.sqrt(q2) * b / 2.0)
    return lead - np.sum(8.0 / (np.pi**2 * n**2) * (q2[:, None] / kn2) * ratio, axis=1)


def rectangle_self_integral_m3(a_m: float, b_m: float) -> float:
    """∬ dA dA'/|r − r'| over an a × b rectangle (m³), closed form:
    4[(a³ + b³ − d³)/6 + (ab²/2) asinh(a/b) + (a²b/2) asinh(b/a)], d = √(a² + b²)."""
    a, b = float(a_m), float(b_m)
    d = math.hypot(a, b)
    return 4.0 * ((a**3 + b**3 - d**3) / 6.0 + 0.5 * a * b * b * math.asinh(a / b)
                  + 0.5 * a * a * b * math.asinh(b / a))


def end_correction_m(radius_m: float | None = None, *, slot_m: tuple[float, float] | None = None,
                     flanged: bool = True) -> float:
    """Inertial end correction Δ of one end (m): circle 8a/(3π) flanged (Rayleigh) or 0.6133a
    unflanged (Levine & Schwinger); rectangle (flanged only) (1/(2πS))∬dA dA'/|r − r'|."""
    if slot_m is not None:
        if not flanged:
            raise TubeError("flanged = False: unflanged ends are modelled for circles only")
        h, w = slot_m
        return rectangle_self_integral_m3(h, w) / (2.0 * math.pi * h * w)
    a = _positive("radius_m", radius_m)
    return 8.0 * a / (3.0 * math.pi) if flanged else UNFLANGED_CIRCLE * a


@dataclass(frozen=True)
class Channel:
    """A straight channel: circular (``radius_m``) or rectangular (``slot_m`` = (height, width))
    cross-section, length ``length_m``; flanged ends (see the module docstring).

    ``ends`` adds the end corrections of both ends to the series impedance (inertial Δ at each end
    and the viscous end resistance); a sound port whose outer end radiates takes ``ends=False`` and
    adds its own radiation load (:mod:`diagap.lumped.package`)."""

    length_m: float
    radius_m: float | None = None
    slot_m: tuple[float, float] | None = None

    def __post_init__(self):
        if (self.radius_m is None) == (self.slot_m is None):
            raise TubeError("a channel needs exactly one of radius_m or slot_m")
        if self.radius_m is not None:
            _positive("radius_m", self.radius_m)
        else:
            h, w = (float(v) for v in self.slot_m)
            _positive("slot height", h)
            _positive("slot width", w)
            object.__setattr__(self, "slot_m", (min(h, w), max(h, w)))
        _positive("length_m", self.length_m)

    @property
    def area_m2(self) -> float:
        if self.radius_m is not None:
            return math.pi * self.radius_m**2
        return self.slot_m[0] * self.slot_m[1]

    @property
    def end_correction_m(self) -> float:
        """Δ of one flanged end (m)."""
        return end_correction_m(self.radius_m, slot_m=self.slot_m)

    def functions(self, omega, gas: Gas) -> tuple[np.ndarray, np.ndarray]:
        """(F_v, F_t) at angular frequencies ``omega`` (rad/s)."""
        w = np.atleast_1d(np.asarray(omega, float))
        nu = gas.viscosity_pa_s / gas.density_kg_m3
        if self.radius_m is not None:
            s = self.radius_m * np.sqrt(w / nu)
            return viscous_function_tube(s), viscous_function_tube(s * math.sqrt(gas.prandtl))
        h, b = self.slot_m
        if b / h > 1e3:
            s = 0.5 * h * np.sqrt(w / nu)
            return viscous_function_slit(s), viscous_function_slit(s * math.sqrt(gas.prandtl))
        return (viscous_function_rectangle(w, h, b, nu),
                viscous_function_rectangle(w, h, b, gas.thermal_diffusivity_m2_s))

    def line_parameters(self, omega, gas: Gas) -> tuple[np.ndarray, np.ndarray]:
        """(Z', Y') per metre: series impedance (Pa·s/m⁴) and shunt admittance (m⁴/(Pa·s))."""
        w = np.atleast_1d(np.asarray(omega, float))
        fv, ft = self.functions(w, gas)
        s = self.area_m2
        z = 1j * w * gas.density_kg_m3 / (s * fv)
        y = 1j * w * s / (gas.gamma * gas.static_pressure_pa) * (gas.gamma - (gas.gamma - 1) * ft)
        return z, y

    def end_resistance_pa_s_per_m3(self, gas: Gas) -> float:
        """Viscous resistance of the two ends together (Sampson; Hasimoto for a slot)."""
        mu = gas.viscosity_pa_s
        if self.radius_m is not None:
            return 3.0 * mu / self.radius_m**3
        h, w = self.slot_m
        return 32.0 * mu / (math.pi * h * h * w)

    def end_impedance(self, omega, gas: Gas) -> np.ndarray:
        """Both ends: jωρ·2Δ/S + the viscous end resistance (Pa·s/m³)."""
        w = np.atleast_1d(np.asarray(omega, float))
        return (1j * w * gas.density_kg_m3 * 2.0 * self.end_correction_m / self.area_m2
                + self.end_resistance_pa_s_per_m3(gas))

    def abcd(self, omega, gas: Gas) -> np.ndarray:
        """Two-port matrix of the channel without its ends, shape (n, 2, 2)."""
        z, y = self.line_parameters(omega, gas)
        gl = np.sqrt(z * y) * self.length_m
        zc = np.sqrt(z / y)
        out = np.empty(gl.shape + (2, 2), complex)
        out[:, 0, 0] = out[:, 1, 1] = np.cosh(gl)
        out[:, 0, 1] = zc * np.sinh(gl)
        out[:, 1, 0] = np.sinh(gl) / zc
        return out

    def series_impedance(self, omega, gas: Gas, ends: bool = True) -> np.ndarray:
        """Series arm B of the channel's two-port (Pa·s/m³), plus both ends with ``ends``: the
        impedance of a channel between two volumes whose own compliance (volume S·L) is
        negligible against theirs."""
        b = self.abcd(omega, gas)[:, 0, 1]
        return b + self.end_impedance(omega, gas) if ends else b

    def static_resistance_pa_s_per_m3(self, gas: Gas) -> float:
        """Low-frequency resistance (Pa·s/m³): Re Z'·L at a frequency far below the viscous
        crossover (→ 8μL/(πa⁴) for a tube, 12μL/(wh³) for a slit) plus the end resistance."""
        nu = gas.viscosity_pa_s / gas.density_kg_m3
        small = self.radius_m if self.radius_m is not None else self.slot_m[0]
        omega = 1e-6 * nu / small**2
        z, _ = self.line_parameters([omega], gas)
        return float(z[0].real) * self.length_m + self.end_resistance_pa_s_per_m3(gas)
