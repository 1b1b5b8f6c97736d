"""Closed-form (textbook) estimates that the audit compares with the finite-element results.

All in SI. Each formula names its source; these are the "simple model" of a condenser capsule:
a rigid parallel-plate piston on a spring, an ideal capacitor, an incompressible continuum film and
a first-order electrical high-pass.
"""
from __future__ import annotations

import math

from diagap.fem.constants import EPSILON_0_F_PER_M

__all__ = [
    "parallel_plate_capacitance", "open_area_capacitance", "piston_pull_in_voltage",
    "membrane_pull_in_voltage", "plate_center_compliance", "membrane_center_compliance",
    "rc_highpass_corner_hz", "piston_sensitivity_v_per_pa", "griffin_damping",
    "piston_resonance_hz", "MEMBRANE_PULL_IN_PARAMETER",
]

#: λ* = ε0 V² a² / (2 T g³) at pull-in of a clamped circular membrane under a full electrode
#: (Pelesko & Bernstein, *Modeling MEMS and NEMS*, 2002, ch. 7; value 0.789 from memory).
MEMBRANE_PULL_IN_PARAMETER = 0.789


def parallel_plate_capacitance(area_m2: float, gap_m: float) -> float:
    """C = ε0 A / g (ideal parallel plates, no fringing)."""
    return EPSILON_0_F_PER_M * area_m2 / gap_m


def open_area_capacitance(area_m2: float, gap_m: float, open_fraction: float) -> float:
    """The open-area rule of thumb C = ε0 A (1 − open fraction) / g (common practice)."""
    return EPSILON_0_F_PER_M * area_m2 * (1.0 - open_fraction) / gap_m


def piston_pull_in_voltage(stiffness_n_per_m: float, gap_m: float, area_m2: float) -> float:
    """V_PI = √(8 k g³ / (27 ε0 A)); pull-in at x = g/3 (Nathanson et al., IEEE Trans. Electron
    Devices 14, 1967; Senturia, *Microsystem Design*, 2001, ch. 6)."""
    return math.sqrt(8.0 * stiffness_n_per_m * gap_m**3 / (27.0 * EPSILON_0_F_PER_M * area_m2))


def membrane_pull_in_voltage(radius_m: float, tension_n_per_m: float, gap_m: float) -> float:
    """V_PI of a clamped circular membrane with a full electrode: λ* = ε0V²a²/(2Tg³) = 0.789."""
    return math.sqrt(2.0 * MEMBRANE_PULL_IN_PARAMETER * tension_n_per_m * gap_m**3
                     / (EPSILON_0_F_PER_M * radius_m**2))


def plate_center_compliance(shape: str, edge: str, size_m: float, bending_stiffness: float,
                            poisson_ratio: float) -> float:
    """Centre deflection per pascal of a pure plate (no tension), m/Pa.

    Disk: a⁴/(64D) clamped, (5+ν)/(1+ν)·a⁴/(64D) simply supported; square of side a:
    0.00126 a⁴/D clamped, 0.00406 a⁴/D simply supported (Timoshenko & Woinowsky-Krieger, *Theory of
    Plates and Shells*, 1959, ch. 3 and tables for ν = 0.3; table values from memory).
    """
    a, d = size_m, bending_stiffness
    if shape == "circle":
        w = a**4 / (64.0 * d)
        return w if edge == "clamped" else w * (5.0 + poisson_ratio) / (1.0 + poisson_ratio)
    return (0.00126 if edge == "clamped" else 0.00406) * a**4 / d


def membrane_center_compliance(shape: str, size_m: float, tension_n_per_m: float) -> float:
    """Centre deflection per pascal of a pure membrane, m/Pa: a²/(4T) for a disk (Morse, *Vibration
    and Sound*, 1948); 0.0737 a²/T for a square of side a (Fourier series of the Poisson problem,
    ∑ 16/(π⁴ m n (m²+n²)) (−1)^((m+n)/2−1) a²/T over odd m, n)."""
    if shape == "circle":
        return size_m**2 / (4.0 * tension_n_per_m)
    total = 0.0
    for m in range(1, 200, 2):
        for n in range(1, 200, 2):
            sign = (-1) ** ((m + n) // 2 - 1)
            total += sign * 16.0 / (math.pi**4 * m * n * (m * m + n * n))
    return total * size_m**2 / tension_n_per_m


def rc_highpass_corner_hz(resistance_ohm: float, capacitance_f: float) -> float:
    """f_c = 1/(2π R C) (first-order high-pass, common practice)."""
    return 1.0 / (2.0 * math.pi * resistance_ohm * capacitance_f)


def piston_sensitivity_v_per_pa(bias_v: float, gap_m: float, compliance_m_per_pa: float,
                                c0_f: float, cp_f: float) -> float:
    """Open-circuit mid-band sensitivity of a rigid piston, (V/g)·(x/p)·C0/(C0 + Cp) (common
    practice)."""
    return bias_v / gap_m * compliance_m_per_pa * c0_f / (c0_f + cp_f)


def griffin_damping(viscosity_pa_s: float, radius_m: float, gap_m: float) -> float:
    """Rigid disk over a solid plate, vented rim, low squeeze number: b = 3πμa⁴/(2g³)
    (Griffin, Richardson & Yamanami, J. Basic Eng. 1966; from memory)."""
    return 3.0 * math.pi * viscosity_pa_s * radius_m**4 / (2.0 * gap_m**3)


def piston_resonance_hz(stiffness_n_per_m: float, mass_kg: float) -> float:
    """f = √(k/m)/(2π) of a single-degree-of-freedom piston."""
    return math.sqrt(stiffness_n_per_m / mass_kg) / (2.0 * math.pi)
