"""The air film of the gap as a distributed frequency-domain operator (for :mod:`fem.response`).

Physics
-------
Linearised compressible Reynolds equation of the film between the diaphragm and the backplate,
with the perforation as a distributed admittance into the back volume. Phasors e^{jωt}; Π is the
film pressure relative to the back-volume pressure p_b (Pa), w the diaphragm deflection (m,
positive towards the backplate). Mass balance per unit area (m/s):

    −∇·(Y(ω) ∇Π) + s(ω) Π + jω (g/p0) (Π + p_b) = jω w      on the electrode Ω_e,
    Π = 0                                                    on ∂Ω_e (rim vented to p_b),

* Y(ω) = (g³/12μ_eff)·F(ω): lateral film conductance (m³/(Pa·s)). μ_eff is the rarefied film
  viscosity (Veijola et al. 1995, :mod:`fem.film.perforation`). F carries the film's air mass:
  for oscillating plane Poiseuille flow between walls a distance g apart,
  F = (12/(κg)²)·[1 − tanh(κg/2)/(κg/2)], κ² = jωρ/μ (exact solution of the unsteady Stokes
  equation across the slot; F → 1 − jωρg²/(10μ) at low frequency, i.e. the film inertance
  (6/5)ρ/g per unit length and width). ``inertia=False`` sets F = 1.
* s(ω) = n_h/(Z + jωM_h): flow out through the holes per unit area and pascal (m/(Pa·s)); Z the
  per-hole resistance of :mod:`fem.film.perforation`, M_h the hole inertance
  ρ(4t/3 + 2·8r/(3π))/(πr²) (kg/m⁴): the fully developed Poiseuille profile carries 4/3 of the
  plug-flow kinetic energy (common practice), and each flanged end adds Rayleigh's end
  correction 8r/(3π) (Rayleigh, *Theory of Sound*, 1896, §307 [from memory]).
* jω(g/p0)(Π + p_b): isothermal compression of the film gas (the film is thin against the
  thermal penetration depth); p_b is the back-volume pressure, a global unknown.

Weak form: find Π ∈ H¹₀(Ω_e) with, for all ψ ∈ H¹₀(Ω_e),

    Y ∫ ∇Π·∇ψ dA + (s + jωg/p0) ∫ Π ψ dA + jω(g/p0) p_b ∫ ψ dA − jω ∫ w ψ dA = 0.

The film pushes back on the diaphragm with −Π (plus p_b everywhere). Units: SI at the interface;
the matrices are built on a mesh scaled by L (electrode radius or half-side): ∫∇·∇ dA is scale
free, ∫ψψ dA = L²∫ψψ dξ.

Discretisation: P2 Lagrange on the rim-graded electrode meshes of the squeeze-film solver
(isoparametric rim for a disk), quadrature order 6. :meth:`FilmOperator.interpolation` gives
the quadrature points and weights in SI so that the plate can be evaluated there.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import Basis, BilinearForm, ElementTriP2, LinearForm
from skfem.helpers import dot, grad

__all__ = ["FilmCoefficients", "FilmOperator", "film_meshes", "film_layer", "film_operator",
           "hole_inertance"]


#: largest film size solved through its dense eigenbasis (beyond: a sparse LU per frequency)
EIG_MAX_DOFS = 2500


def hole_inertance(air_density_kg_m3: float, hole_radius_m: float, length_m: float) -> float:
    """Acoustic mass of one hole, ρ(4t/3 + 16r/(3π))/(πr²) (kg/m⁴), see the module docstring."""
    r = float(hole_radius_m)
    return air_density_kg_m3 * (4.0 * length_m / 3.0 + 16.0 * r / (3.0 * math.pi)) / (math.pi * r * r)


@dataclass(frozen=True)
class FilmCoefficients:
    """Coefficients of the film equation (SI).

    gap_m : g;  film_viscosity_pa_s : μ_eff;  static_pressure_pa : p0
    air_density_kg_m3 : ρ (film and hole inertia);  viscosity_pa_s : μ (inertia factor κ)
    holes_per_m2 : n_h (0: no holes);  hole_resistance_pa_s_per_m3 : Z per hole
    hole_inertance_kg_per_m4 : M_h per hole;  inertia : include the film's air mass
    """

    gap_m: float
    film_viscosity_pa_s: float
    static_pressure_pa: float
    air_density_kg_m3: float = 1.204
    viscosity_pa_s: float = 1.81e-5
    holes_per_m2: float = 0.0
    hole_resistance_pa_s_per_m3: float = math.inf
    hole_inertance_kg_per_m4: float = 0.0
    inertia: bool = True

    def conductance(self, omega: float) -> complex:
        """Y(ω) = (g³/12μ_eff)·F(ω) (m³/(Pa·s))."""
        g = self.gap_m
        y0 = g**3 / (12.0 * self.film_viscosity_pa_s)
        if not self.inertia or omega == 0.0:
            return complex(y0)
        z2 = 1j * omega * self.air_density_kg_m3 * g * g / (4.0 * self.viscosity_pa_s)  # (κg/2)²
        if abs(z2) < 1e-4:
            return y0 * (1.0 - 0.4 * z2 + (17.0 / 105.0) * z2 * z2)
        z = np.sqrt(z2)
        return complex(y0 * 3.0 / z2 * (1.0 - np.tanh(z) / z))

    def sink(self, omega: float) -> complex:
        """s(ω) = n_h/(Z + jωM_h) (m/(Pa·s))."""
        if self.holes_per_m2 == 0.0 or not math.isfinite(self.hole_resistance_pa_s_per_m3):
            return 0j
        return self.holes_per_m2 / (self.hole_resistance_pa_s_per_m3
                                    + 1j * omega * self.hole_inertance_kg_per_m4)

    def compression(self, omega: float) -> complex:
        """jω g/p0 (m/(Pa·s))."""
        return 1j * omega * self.gap_m / self.static_pressure_pa


@BilinearForm
def _lap(u, v, w):
    return dot(grad(u), grad(v))


@BilinearForm
def _mass(u, v, w):
    return u * v


@LinearForm
def _one(v, w):
    return v


def film_layer(coef: FilmCoefficients, scale_m: float, f_max_hz: float) -> float:
    """Thinnest film boundary layer up to ``f_max_hz``, scaled by ``scale_m``: 1/(|k|·L) with
    k² = (s + jωg/p0)/Y (≤ 1)."""
    w = 2 * math.pi * f_max_hz
    k2 = abs(coef.sink(0.0) + coef.compression(w)) / abs(coef.conductance(0.0))
    return 1.0 / math.sqrt(max(k2 * scale_m**2, 1.0))


@functools.lru_cache(maxsize=2)
def film_operator(shape: str, family: str, layer: float, level: int,
                  length_m: float) -> "FilmOperator":
    """The :class:`FilmOperator` on level ``level`` of :func:`film_meshes` (cached: the lumped
    film table and the distributed solve share it and its eigendecomposition)."""
    return FilmOperator(film_meshes(shape, family, layer)[level], length_m)


def film_meshes(shape: str, accuracy: str, layer: float) -> list:
    """Nested P2 electrode meshes (scaled, coarse → fine) of the squeeze-film solver."""
    from diagap.fem.film.squeeze import _mesh_levels

    return _mesh_levels(shape, accuracy, layer)


class FilmOperator:
    """Assembled film matrices on one electrode mesh (SI, interior DOFs only).

    Attributes
    ----------
    lap : ∫∇ψ_i·∇ψ_j dA (1);  mass : ∫ψ_iψ_j dA (m²);  ones : ∫ψ_i dA (m²)
    area_m2 : electrode area;  xq_m, yq_m, wq_m2 : quadrature points and weights (flattened)
    interp : (n_q × n) sparse, film DOFs → values at the quadrature points
    """

    def __init__(self, mesh, length_m: float):
        L = float(length_m)
        self._eig = None
        basis = Basis(mesh, ElementTriP2(), intorder=6)
        free = basis.complement_dofs(basis.get_dofs())
        self.n = int(free.size)
        self.lap = _lap.assemble(basis)[free][:, free].tocsr()
        self.mass = (L * L * _mass.assemble(basis))[free][:, free].tocsr()
        self.ones = L * L * _one.assemble(basis)[free]
        x = basis.mapping.F(basis.X)
        self.xq_m, self.yq_m = (L * np.asarray(x[0])).ravel(), (L * np.asarray(x[1])).ravel()
        self.wq_m2 = (L * L * np.asarray(basis.dx)).ravel()
        self.area_m2 = float(self.wq_m2.sum())
        nel, nq = basis.dx.shape
        rows, cols, vals = [], [], []
        for i in range(basis.Nbfun):
            rows.append((np.arange(nel)[:, None] * nq + np.arange(nq)[None, :]).ravel())
            cols.append(np.repeat(basis.element_dofs[i], nq))
            vals.append(np.asarray(basis.basis[i][0]).ravel())
        full = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                             shape=(nel * nq, basis.N))
        self.interp = full[:, free].tocsr()

    def operator(self, coef: FilmCoefficients, omega: float) -> sp.csr_matrix:
        """Y ∫∇·∇ + (s + jωg/p0) ∫·· (m/(Pa·s)·m² per Pa)."""
        a = coef.sink(omega) + coef.compression(omega)
        return (coef.conductance(omega) * self.lap + a * self.mass).tocsr()

    def load(self, values_q: np.ndarray) -> np.ndarray:
        """∫ f ψ_i dA for f given at the quadrature points."""
        return self.interp.T @ (self.wq_m2 * np.asarray(values_q).ravel())

    def eig(self):
        """(Λ, V) of Lap V = Mass V Λ with VᵀMass V = I (dense, cached)."""
        if self._eig is None:
            from scipy.linalg import eigh

            self._eig = eigh(self.lap.toarray(), self.mass.toarray())
        return self._eig

    def impedance_spectrum(self, coef: FilmCoefficients, omegas, shape_q: np.ndarray) -> np.ndarray:
        """Z_m(ω) of :meth:`impedance` at many frequencies, from the film's eigenbasis
        (Lap V = Mass V Λ: (Y Lap + a Mass)⁻¹ = V (YΛ + a)⁻¹ Vᵀ, exact)."""
        omegas = np.atleast_1d(np.asarray(omegas, float))
        if not self.use_eig:
            return np.array([self.impedance(coef, w, shape_q) for w in omegas])
        lam, vec = self.eig()
        vf = vec.T @ self.load(shape_q)
        out = []
        for w in omegas:
            d = coef.conductance(w) * lam + coef.sink(w) + coef.compression(w)
            out.append(np.sum(vf * vf / d))
        return np.array(out)

    @property
    def use_eig(self) -> bool:
        """Whether the dense eigenbasis is used (up to ``EIG_MAX_DOFS`` DOFs; sparse LU per
        frequency beyond)."""
        return self.n <= EIG_MAX_DOFS

    def solve(self, coef: FilmCoefficients, omega: float, rhs: np.ndarray) -> np.ndarray:
        """(Y Lap + a Mass)⁻¹ rhs (columns), by the eigenbasis or a sparse LU."""
        if self.use_eig:
            lam, vec = self.eig()
            d = 1.0 / (coef.conductance(omega) * lam + coef.sink(omega) + coef.compression(omega))
            return vec @ (d[:, None] * (vec.T @ rhs)) if rhs.ndim == 2 else vec @ (d * (vec.T @ rhs))
        import scipy.sparse.linalg as spla

        lu = spla.splu(self.operator(coef, omega).tocsc(), permc_spec="MMD_AT_PLUS_A",
                       diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        return lu.solve(np.asarray(rhs, complex))

    def impedance(self, coef: FilmCoefficients, omega: float, shape_q: np.ndarray) -> complex:
        """Z_m = ∫Πφ dA / v0 (N·s/m) for the velocity v0·φ with p_b = 0 (φ at the quadrature
        points): the film's mechanical impedance referred to the shape's reference point."""
        import scipy.sparse.linalg as spla

        f = self.load(shape_q)
        pi = spla.spsolve(self.operator(coef, omega).tocsc(), f.astype(complex))
        return complex(f @ pi)
