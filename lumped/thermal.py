"""Residual stress of an anchored thin film at another temperature: thermal-expansion mismatch.

A film bonded to (or clamped at its edge by) a substrate is held to the substrate's in-plane
strain. Heating both by ΔT = T − T0 expands the free film by α_f ΔT and the substrate by
α_s ΔT in every in-plane direction; the film is thus strained by (α_s − α_f) ΔT relative to its
free state, equally in both directions. Hooke's law of a thin isotropic film in equi-biaxial
plane stress (σ_xx = σ_yy = σ, σ_zz = 0) gives ε = σ(1 − ν)/E, so the stress changes by the
biaxial modulus E/(1 − ν) times that strain:

    σ(T) = σ0 − E/(1 − ν) · (α_f − α_s) · (T − T0)          (Pa, tensile positive)

with σ0 the residual stress at the reference temperature T0 (K), α in 1/K (Freund & Suresh,
*Thin Film Materials*, 2003, §1.3 and §2.1 [from memory]; Senturia, *Microsystem Design*, 2001,
§8.5 [from memory]). α is taken constant over the range (linear expansion); a film that expands
more than its substrate (α_f > α_s) loses tension as it warms.

The film buckles when its compressive stress reaches the critical stress of the plate,
σ_cr = N_cr / h (:mod:`diagap.lumped.buckling`, Timoshenko & Gere, *Theory of Elastic
Stability*); ``buckles`` tells whether σ(T) is at or beyond it.
"""
from __future__ import annotations

from diagap.lumped.buckling import critical_tension_n_per_m

__all__ = ["thermal_stress_pa", "critical_stress_pa", "buckles"]


def thermal_stress_pa(reference_stress_pa: float, youngs_modulus_pa: float, poisson_ratio: float,
                      film_expansion_per_k: float, substrate_expansion_per_k: float,
                      temperature_k: float, reference_temperature_k: float) -> float:
    """σ(T) = σ0 − E/(1 − ν)·(α_f − α_s)·(T − T0) in Pa (tensile positive).

    Parameters
    ----------
    reference_stress_pa : σ0, the residual stress at ``reference_temperature_k``, Pa
    youngs_modulus_pa, poisson_ratio : E (Pa) and ν of the film
    film_expansion_per_k, substrate_expansion_per_k : α_f and α_s, 1/K
    temperature_k, reference_temperature_k : T and T0, K
    """
    biaxial_modulus_pa = youngs_modulus_pa / (1.0 - poisson_ratio)
    mismatch = film_expansion_per_k - substrate_expansion_per_k
    return reference_stress_pa - biaxial_modulus_pa * mismatch * (temperature_k
                                                                  - reference_temperature_k)


def critical_stress_pa(shape: str, edge: str, size_m: float, thickness_m: float,
                       youngs_modulus_pa: float, poisson_ratio: float) -> float:
    """Magnitude of the uniform biaxial compressive stress at which the flat plate buckles
    (Pa): N_cr/h with D = E h³/(12(1 − ν²)) (:func:`critical_tension_n_per_m`)."""
    d = youngs_modulus_pa * thickness_m**3 / (12.0 * (1.0 - poisson_ratio**2))
    return critical_tension_n_per_m(shape, edge, size_m, d, poisson_ratio) / thickness_m


def buckles(stress_pa: float, critical_pa: float) -> bool:
    """True when the compressive stress is at or beyond the critical stress (σ ≤ −σ_cr)."""
    return -stress_pa >= critical_pa
