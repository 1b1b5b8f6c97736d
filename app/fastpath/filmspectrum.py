r"""The lumped model's film table b(f), k(f) of a clamped disk from a radial P2 finite element.

The response stage gives the lumped model the film impedance on the static shape φ from the
two-dimensional film operator of the distributed solve (:mod:`diagap.fem.response.film`,
:func:`diagap.stages._film_table`). For a circular electrode and an axisymmetric shape that
problem is one-dimensional; this module solves the SAME continuous problem in the radius.

Physics (:mod:`diagap.fem.response.film`): linearised compressible Reynolds equation with the
perforation as a distributed sink, phasors e^{jωt}, film pressure Π (Pa), back-volume pressure
p_b = 0, diaphragm velocity v0·φ (m/s, φ = 1 at the centre):

    −∇·(Y(ω) ∇Π) + a(ω) Π = v0 φ   on the electrode r < L,    Π = 0 at r = L,
    Z(ω) = ∫ Π φ dA / v0  (N·s/m),    b(f) = Re Z,   k(f) = −ω Im Z,

Y(ω) = (g³/12μ_eff)·F(ω) (film conductance with the film's air mass, m³/(Pa·s)),
a(ω) = n_h/(Z_h + jωM_h) + jωg/p0 (hole sink and isothermal compression, m/(Pa·s)); the
coefficients are those of :class:`~diagap.fem.response.film.FilmCoefficients`.

Scaled radius ρ = r/L, u = r/a = ερ (ε = L/a), c(ω) = a(ω) L²/Y(ω) (complex, dimensionless).
Weak form: find Π̂ with Π̂(1) = 0 such that for every ψ with ψ(1) = 0

    ∫₀¹ (Π̂' ψ' + c Π̂ ψ) ρ dρ = ∫₀¹ φ(ερ) ψ ρ dρ,

(the symmetry condition Π̂'(0) = 0 is natural: the weight ρ vanishes on the axis), and

    Z(ω) = (2π L⁴ / Y(ω)) · ∫₀¹ Π̂ φ ρ dρ.

Check: φ = 1, c = 0 (rigid, unperforated, incompressible disk) gives Π̂ = (1 − ρ²)/4 and
Z = 3πμL⁴/(2g³), the squeeze film of a rigid disk (Griffin, Richardson & Yamanami 1966;
Blech 1983).

Discretisation: quadratic (P2) Lagrange elements on [0, 1], one uniform zone [0, 1 − W] and a
zone [1 − W, 1] of ``N_LAYER`` elements toward the vented rim, W = min(1/2, 12 δ), δ the
thinnest boundary layer up to the highest frequency (of Π̂: 1/√|c|, or of φ at the clamped
edge of a tensioned disk: 1/(ε√τ)). The stiffness and mass integrands are polynomials
integrated exactly (Gauss–Legendre, 5 points), the load (φ is not a polynomial) with the same
rule. Z_h is an energy functional: it converges as h⁴; the estimate is |Z_h − Z_{h/2}| of the
mesh and its halving (the reported value is the halved mesh's). All frequencies are solved in
one banded (pentadiagonal) solve of the block-diagonal system.
"""
from __future__ import annotations

import math

import numpy as np
from scipy.linalg import solve_banded

__all__ = ["FilmSpectrum", "film_spectrum", "radial_mesh", "N_UNIFORM", "N_LAYER"]

#: P2 elements of the uniform zone and of the rim zone (the halved mesh has twice as many)
N_UNIFORM, N_LAYER = 24, 24
_GX, _GW = np.polynomial.legendre.leggauss(5)
_XI = 0.5 * (_GX + 1.0)  # Gauss points on [0, 1]
_WXI = 0.5 * _GW
#: P2 shape functions and derivatives (d/dξ) on [0, 1] at the Gauss points: (3, n_q)
_N = np.array([(1 - _XI) * (1 - 2 * _XI), 4 * _XI * (1 - _XI), _XI * (2 * _XI - 1)])
_DN = np.array([4 * _XI - 3, 4 - 8 * _XI, 4 * _XI - 1])


def radial_mesh(layer: float, refine: int = 1) -> np.ndarray:
    """Element ends on [0, 1]: a uniform zone and a zone of width min(1/2, 12·``layer``) at the
    rim (``refine`` times as many elements in each)."""
    width = min(0.5, 12.0 * layer)
    return np.concatenate([np.linspace(0.0, 1.0 - width, N_UNIFORM * refine + 1)[:-1],
                           np.linspace(1.0 - width, 1.0, N_LAYER * refine + 1)])


class _System:
    """Banded P2 stiffness, mass (ρ-weighted) and load of φ on one mesh, rim DOF removed."""

    def __init__(self, x: np.ndarray, shape):
        a, h = x[:-1], np.diff(x)
        rho = a[:, None] + h[:, None] * _XI[None, :]  # (n_el, n_q)
        w = h[:, None] * _WXI[None, :] * rho
        ke = np.einsum("iq,jq,eq->eij", _DN, _DN, w / (h * h)[:, None])
        me = np.einsum("iq,jq,eq->eij", _N, _N, w)
        phi = np.asarray(shape(rho), float)
        fe = np.einsum("iq,eq->ei", _N, w * phi)
        n_el = a.size
        n = 2 * n_el  # DOFs 0 … 2n_el, the last (ρ = 1) removed
        self.n = n
        self.k_ab = self._banded(ke, n_el, n)
        self.m_ab = self._banded(me, n_el, n)
        f = np.zeros(n + 1)
        for i in range(3):
            np.add.at(f, 2 * np.arange(n_el) + i, fe[:, i])
        self.load = f[:n]

    @staticmethod
    def _banded(el, n_el, n):
        """LAPACK band storage ab[2 + i − j, j] (two bands each side) of the assembled matrix."""
        ab = np.zeros((5, n + 1))
        dofs = 2 * np.arange(n_el)
        for i in range(3):
            for j in range(3):
                np.add.at(ab[2 + i - j], dofs + j, el[:, i, j])
        ab = ab[:, :n].copy()
        for r in (3, 4):  # entries in the removed rim row (and beyond the matrix) dropped
            ab[r, n - (r - 2):] = 0.0
        return ab

    def functional(self, c: np.ndarray) -> np.ndarray:
        """∫Π̂φρ dρ for every coefficient c (one block-diagonal banded solve)."""
        c = np.asarray(c, complex)
        nf, n = c.size, self.n
        blocks = self.k_ab[None, :, :] + c[:, None, None] * self.m_ab[None, :, :]
        ab = blocks.transpose(1, 0, 2).reshape(5, nf * n)  # corners of each block are zero
        rhs = np.tile(self.load, nf).astype(complex)
        sol = solve_banded((2, 2), ab, rhs, check_finite=False).reshape(nf, n)
        return (sol * self.load).sum(axis=1)  # not BLAS gemv: slow for this size


class FilmSpectrum:
    """Z(ω) of the film on a radial shape (module docstring).

    Parameters
    ----------
    coef : FilmCoefficients
        The film (:func:`diagap.extract.film_coefficients`).
    electrode_radius_m : float
        L (m).
    shape : callable
        φ(u) on u = r/a (1 at the centre), vectorised.
    eps : float
        ε = L/a.
    tension_ratio : float
        τ = σha²/D (only for the mesh grading at the clamped edge).
    f_max_hz : float
        Highest frequency the rim zone of the mesh resolves (the largest |c| over
        [1 Hz, f_max] and at 0 sets δ).
    """

    def __init__(self, coef, electrode_radius_m: float, shape, eps: float,
                 tension_ratio: float = 0.0, f_max_hz: float = 1.0e5):
        self.coef, self.L, self.eps = coef, float(electrode_radius_m), float(eps)
        c_max = max(abs(self._c(2.0 * math.pi * f))
                    for f in np.append(np.geomspace(1.0, f_max_hz, 11), 0.0))
        layer = 1.0 / math.sqrt(max(c_max, self.eps**2 * max(tension_ratio, 0.0), 1.0))
        self.layer = layer

        def phi(rho):
            return shape(self.eps * rho)

        self._coarse = _System(radial_mesh(layer, 1), phi)
        self._fine = _System(radial_mesh(layer, 2), phi)

    def _c(self, omega: float) -> complex:
        co = self.coef
        return (co.sink(omega) + co.compression(omega)) * self.L**2 / co.conductance(omega)

    def impedance(self, omegas) -> tuple[np.ndarray, np.ndarray]:
        """(Z(ω) in N·s/m, its estimated relative error) at the angular frequencies ``omegas``."""
        om = np.atleast_1d(np.asarray(omegas, float))
        y = np.array([self.coef.conductance(w) for w in om])
        c = np.array([self._c(w) for w in om])
        scale = 2.0 * math.pi * self.L**4 / y
        coarse, fine = scale * self._coarse.functional(c), scale * self._fine.functional(c)
        return fine, np.abs(fine - coarse) / np.abs(fine)


def film_spectrum(coef, electrode_radius_m: float, shape, eps: float, freqs_hz,
                  tension_ratio: float = 0.0):
    """(b(f) N·s/m, k(f) N/m, estimated relative error of Z) of the film on ``shape``."""
    f = np.asarray(freqs_hz, float)
    fs = FilmSpectrum(coef, electrode_radius_m, shape, eps, tension_ratio, float(np.max(f)))
    z, err = fs.impedance(2.0 * np.pi * f)
    return z.real, -2.0 * np.pi * f * z.imag, err
