r"""The validated range of the scaled diaphragm tables (:mod:`diagap.fastpath.plate`).

In scaled form the diaphragm of :mod:`diagap.fem.plate.solver` (Kirchhoff plate with membrane
stress, D∇⁴w − T∇²w = p, disk of radius L or square of side 2L, clamped or simply supported)
depends on two numbers only: the tension ratio τ = T L²/D = σ h L²/D (L the solver's length
unit: the radius, or half the side of a square; negative in compression) and, through the
zero-moment edge condition, Poisson's ratio ν. Which of them the solver's answer depends on:

- clamped edges (disk and square): τ alone. The ν-term of the bending energy,
  ∫(w_xx w_yy − w_xy²) dA, is a null Lagrangian whose boundary integral vanishes with
  w = ∂w/∂n = 0 (measured with the solver: ν from −0.9 to 0.49 changes its outputs by < 2e-7 on
  the disk, whose polygonal edge is the only source, and by rounding on the square);
- simply supported square: τ alone. On a straight edge w = 0 gives w_tt = 0, so the zero-moment
  condition −D(w_nn + ν w_tt) = 0 does not involve ν, and the null-Lagrangian boundary integral
  vanishes as well (Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959,
  §30, Navier solution free of ν [from memory]); measured: rounding only;
- simply supported disk: τ and ν (the edge moment D(w_rr + ν w_r/r) involves ν). In the
  membrane model (τ above :data:`~diagap.fem.plate.solver.MEMBRANE_TAU`) ν enters only the
  model-error estimate, not the values, so there the disk depends on τ alone again.

The validated range, per shape and edge (:data:`VALIDATED_RANGE`):

- compression down to 0.9 of the buckling tension ratio τ_b(ν) (:func:`buckling_tau`):
  τ ≥ −0.9 τ_b, as for the clamped disk before; near buckling the outputs vary as 1/(τ + τ_b);
- tension up to τ = 1e10. Up to MEMBRANE_TAU = 1e4 the solver uses the plate model, whose
  finest edge mesh follows the bending layer of width L/√τ; above it the membrane model on a
  mesh that does not depend on τ, with a model error O(1/τ) that falls with τ (3/τ clamped,
  4(1+ν)/τ simply supported), so the answer stays smooth in τ to any tension and its error
  estimate does not grow with τ. The solver's own tests check the membrane model against
  closed forms up to τ ≈ 2.7e10 (the pure-membrane Bessel check); 1e10 stays inside. The
  solver's error estimate at "normal" accuracy (measured): 2e-5 … 1.5e-4 in the plate range
  near τ = 1e4; 3e-4 … 6e-4 just above the switch (the model error); 2e-5 (compliances) to
  7e-5 (sixth frequency) from τ = 1e6 to 1e10, so at the upper end the table's 1e-3 stays well
  above the FE's own error;
- ν: every value the solver accepts (−1 < ν < 0.5) where ν does not enter; for the simply
  supported disk −0.5 ≤ ν ≤ 0.499. Below −0.5 the disk nears the ν = −1 limit, where
  w = 1 − r² costs no bending energy (compliance ∝ 1/(1 + ν), τ_b → 0); −0.5 … 0.499 holds
  every isotropic diaphragm material in use (silicon, nitrides, metals, polymers up to nearly
  incompressible elastomers) and moderately auxetic films.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

__all__ = ["PlateRange", "VALIDATED_RANGE", "buckling_tau", "out_of_range", "length_scale_m",
           "NU_FREE", "COMPRESSION", "TAU_MAX"]

#: smallest tension ratio as a fraction of the buckling value: τ ≥ −COMPRESSION · τ_b(ν)
COMPRESSION = 0.9
#: largest tension ratio of the tables (membrane model; see the module docstring)
TAU_MAX = 1.0e10
#: Poisson's ratios the solver accepts (open interval); the range where ν does not enter
NU_FREE = (-1.0, 0.5)


@dataclass(frozen=True)
class PlateRange:
    """The validated range of one shape and edge condition.

    Attributes
    ----------
    shape, edge : str
        ``"circle"`` or ``"square"``; ``"clamped"`` or ``"simply-supported"``.
    compression : float
        τ ≥ −compression · τ_b(ν).
    tau_max : float
        τ ≤ tau_max.
    nu_min, nu_max : float
        Poisson's ratio range (closed where ``nu_enters``, else the solver's open interval).
    nu_enters : bool
        The plate-model outputs depend on ν (the table has a ν axis).
    """

    shape: str
    edge: str
    compression: float
    tau_max: float
    nu_min: float
    nu_max: float
    nu_enters: bool

    def describe(self) -> str:
        nu = (f"{self.nu_min:g} <= nu <= {self.nu_max:g}" if self.nu_enters
              else f"{self.nu_min:g} < nu < {self.nu_max:g}")
        return (f"{self.edge} {self.shape}: -{self.compression:g}*tau_b <= tau <= "
                f"{self.tau_max:g}, {nu}")


#: The validated range of the scaled diaphragm tables, by (shape, edge): every clamped or simply
#: supported disk or square with −0.9·τ_b(ν) ≤ τ = σhL²/D ≤ 1e10, and ν anywhere the solver
#: accepts except for the simply supported disk (−0.5 ≤ ν ≤ 0.499). Used by the fast path's
#: coverage test and for its error message; the tests draw their random designs from it.
VALIDATED_RANGE = {
    (shape, edge): PlateRange(shape, edge, COMPRESSION, TAU_MAX,
                              *((-0.5, 0.499, True) if (shape, edge) == ("circle",
                                                                         "simply-supported")
                                else (*NU_FREE, False)))
    for shape in ("circle", "square") for edge in ("clamped", "simply-supported")
}


def length_scale_m(shape: str, size_m: float) -> float:
    """L: the radius of a disk, half the side of a square (m), as in the solver."""
    return size_m if shape == "circle" else 0.5 * size_m


@lru_cache(maxsize=4096)
def buckling_tau(shape: str, edge: str, nu: float) -> float:
    """τ_b = N_cr L²/D, the tension ratio at which the flat diaphragm buckles under uniform
    compression (:func:`diagap.lumped.buckling.critical_tension_n_per_m`: j₁,₁² for the clamped
    disk, the root of λJ₀(λ) = (1 − ν)J₁(λ) for the simply supported disk, kπ²/4 for the
    square, k = 5.30 clamped and 2 simply supported)."""
    from diagap.lumped.buckling import critical_tension_n_per_m

    size = 1.0 if shape == "circle" else 2.0  # L = 1
    return float(critical_tension_n_per_m(shape, edge, size, 1.0, float(nu)))


def out_of_range(shape: str, edge: str, tau: float, nu: float,
                 stress_per_tau_pa: float | None = None) -> str | None:
    """None inside :data:`VALIDATED_RANGE`, else one line naming the field, value and range.

    ``stress_per_tau_pa`` = D/(h L²), the residual stress of τ = 1 for this diaphragm: with it
    the message also states the allowed residual stress.
    """
    rng = VALIDATED_RANGE.get((shape, edge))
    if rng is None:
        return f"diaphragm: shape {shape!r}, edge {edge!r} not tabulated"
    if rng.nu_enters:
        ok = rng.nu_min <= nu <= rng.nu_max
    else:
        ok = rng.nu_min < nu < rng.nu_max
    if not (ok and math.isfinite(nu)):
        return (f"diaphragm.poisson_ratio = {nu:g}: outside the fast path's validated range "
                f"({rng.describe()})")
    lo = -rng.compression * buckling_tau(shape, edge, nu)
    if math.isfinite(tau) and lo <= tau <= rng.tau_max:
        return None
    where = f"tension ratio sigma*h*L^2/D = {tau:.6g}, allowed {lo:.4g} ... {rng.tau_max:g}"
    if stress_per_tau_pa:
        return (f"diaphragm.residual_stress = {tau * stress_per_tau_pa:.6g} Pa: outside the fast "
                f"path's validated range {lo * stress_per_tau_pa:.4g} ... "
                f"{rng.tau_max * stress_per_tau_pa:.4g} Pa for this diaphragm ({where}; "
                f"{rng.describe()})")
    return f"diaphragm.residual_stress: {where} ({rng.describe()})"
