"""Closed-form (textbook) estimates that the audit compares with the finite-element results.

All in SI. Each formula names its source; these are the "simple model" of a condenser capsule:
a rigid parallel-plate piston on a spring, an ideal capacitor, small deflections, an
incompressible continuum film. The closed forms of plate buckling live in
:mod:`diagap.lumped.buckling`; Veijola's rarefaction factor is the one of the film solver
(:func:`diagap.fem.film.perforation.rarefaction_factor`), re-exported here.
"""
from __future__ import annotations

import math

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.film.perforation import rarefaction_factor

__all__ = [
    "parallel_plate_capacitance", "open_area_perforation_factor", "piston_pull_in_voltage",
    "plate_center_compliance", "membrane_center_compliance", "griffin_damping",
    "clamped_plate_stretching_ratio", "rarefaction_factor",
]


def parallel_plate_capacitance(area_m2: float, gap_m: float) -> float:
    """C = ε0 A / g (ideal parallel plates, no fringing)."""
    return EPSILON_0_F_PER_M * area_m2 / gap_m


def open_area_perforation_factor(open_fraction: float) -> float:
    """The open-area rule of thumb for the perforation factor C/(ε0 A/g) = 1 − open fraction
    (the holes simply remove electrode area; common practice)."""
    return 1.0 - open_fraction


def piston_pull_in_voltage(stiffness_n_per_m: float, gap_m: float, area_m2: float) -> float:
    """V_PI = √(8 k g³ / (27 ε0 A)); pull-in at x = g/3 (Nathanson et al., IEEE Trans. Electron
    Devices 14, 1967; Senturia, *Microsystem Design*, 2001, ch. 6)."""
    return math.sqrt(8.0 * stiffness_n_per_m * gap_m**3 / (27.0 * EPSILON_0_F_PER_M * area_m2))


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


def griffin_damping(viscosity_pa_s: float, radius_m: float, gap_m: float) -> float:
    """Rigid disk over a solid plate, vented rim, low squeeze number: b = 3πμa⁴/(2g³)
    (Griffin, Richardson & Yamanami, J. Basic Eng. 1966; from memory)."""
    return 3.0 * math.pi * viscosity_pa_s * radius_m**4 / (2.0 * gap_m**3)


def clamped_plate_stretching_ratio(youngs_modulus_pa: float, thickness_m: float,
                                   poisson_ratio: float, radius_m: float,
                                   tension_n_per_m: float, center_deflection_m: float) -> float:
    """Ratio of the cubic (membrane stretching) to the linear restoring pressure of a clamped
    circular plate at centre deflection w0.

    Energy estimate of Timoshenko & Woinowsky-Krieger, *Theory of Plates and Shells*, 1959, §97
    (from memory): p a⁴/(E h⁴) = (16/3)/(1−ν²)·(w0/h) + (7−ν)/(3(1−ν))·(w0/h)³, with the linear
    pressure of a pre-tension T (tensile part only) added as 4 T w0 / a² (membrane a²/(4T)
    compliance), so the ratio is cubic / (plate + tension) linear. Dimensionless.
    """
    e, h, nu, a, w0 = (youngs_modulus_pa, thickness_m, poisson_ratio, radius_m,
                       center_deflection_m)
    cubic = (7.0 - nu) / (3.0 * (1.0 - nu)) * e * h * w0**3 / a**4
    plate = 16.0 / 3.0 / (1.0 - nu**2) * e * h**3 * w0 / a**4
    tension = 4.0 * max(tension_n_per_m, 0.0) * w0 / a**2
    return cubic / (plate + tension)
