"""Critical in-plane compression (buckling load) of thin plates under uniform biaxial compression.

N_cr = λ² D / a² (N/m, a = radius for disks) or k π² D / a² (a = side for squares):
- clamped disk: λ = j_{1,1} = 3.8317, λ² = 14.68 (Timoshenko & Gere, *Theory of Elastic
  Stability*, 2nd ed. 1961, §9.2 — value from memory; j_{1,1} from scipy.special).
- simply supported disk: λ is the first root of λ J0(λ) − (1 − ν) J1(λ) = 0 (same source, §9.2;
  λ² = 4.20 at ν = 0.3, from memory).
- simply supported square, biaxial: N_cr = 2 π² D / a² (m = n = 1 in (m² + n²)π²D/a²; same source, §9.4).
- clamped square, biaxial: N_cr ≈ 5.30 π² D / a² (same source, value from memory).
"""
from __future__ import annotations

import math

__all__ = ["critical_tension_n_per_m"]


def _ss_disk_lambda(nu: float) -> float:
    from scipy.optimize import brentq
    from scipy.special import j0, j1

    return brentq(lambda x: x * j0(x) - (1.0 - nu) * j1(x), 1.0, 3.8)


def critical_tension_n_per_m(shape: str, edge: str, size_m: float, bending_stiffness: float,
                             poisson_ratio: float) -> float:
    """Magnitude of the compressive tension N (N/m) at which the flat plate buckles."""
    d, a = bending_stiffness, size_m
    if shape == "circle":
        from scipy.special import jn_zeros

        lam = jn_zeros(1, 1)[0] if edge == "clamped" else _ss_disk_lambda(poisson_ratio)
        return lam**2 * d / a**2
    k = 5.30 if edge == "clamped" else 2.0
    return k * math.pi**2 * d / a**2
