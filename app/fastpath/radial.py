r"""The squeeze film of a clamped circular diaphragm as a radial problem: milliseconds per design.

The static shape
----------------
Kirchhoff plate with tension on the disk of radius a, clamped: with u = r/a and
ŵ = wD/(pa⁴), ∇⁴ŵ − τ∇²ŵ = 1, ŵ(1) = ŵ'(1) = 0, τ = T a²/D (:mod:`diagap.fastpath.plate`).
Its solution (Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959,
§62 for τ = 0; the Bessel form with tension is the classical one for the tensioned plate):

    ŵ(u) = (1 − u²)/(4τ) − (I₀(k) − I₀(ku)) / (2τ k I₁(k)),    k = √τ,

(J₀, J₁ with k = √−τ under compression), → (1 − u²)²/64 as τ → 0. For |τ| ≤ 30 it is
evaluated from the power series of I₀ in τ with the 1/τ terms cancelled analytically,

    ŵ(u) = (1 − u²) R/(4τ(1 + R)) + S(u)/(τ²(1 + R)),
    R = Σ_{m≥1} (τ/4)^m/(m!(m+1)!),   S(u) = Σ_{m≥2} (τ/4)^m (u^{2m} − 1)/(m!)²,

and with exponentially scaled Bessel functions above (Cephes' i0e, i1e; j0, j1 under
compression). The film sees φ(u) = ŵ(u)/ŵ(0).

The film
--------
The damping stage solves the linearised Reynolds equation with the perforation as a sink on
the electrode (:mod:`diagap.fem.film.squeeze`), scaled on the electrode radius L = ε a:

    −∇²Π + (α + s) Π = φ(ερ)   on the unit disk,   Π = 0 at ρ = 1,
    J(s) = ∫ Π φ dA = 2π ∫₀¹ Π φ(ερ) ρ dρ,   Z_m = (12 μ_eff L⁴/g³) J(jσ̂),

α = 12 μ_eff L² n_h/(g³ Z) and σ̂ = 12 μ_eff ω L²/(p₀ g²). With an axisymmetric shape the
problem is one-dimensional: weak form ∫(Π'w' + (α + s) Π w) ρ dρ = ∫ φ w ρ dρ for all w with
w(1) = 0 (the symmetry condition Π'(0) = 0 is natural). Linear elements on a mesh of two
uniform zones, the outer one of width min(1/2, 20δ) with δ = 1/√max(|α + s|, ε²τ, 1) the
thinnest boundary layer (of Π at the vented rim, or of φ near a clamped edge), 400 elements
each; the ρ-weighted stiffness and mass are integrated exactly, the load by 3-point Gauss. The
functional J_h = Fᵀ Π_h converges as h²; Richardson's extrapolation of the mesh and its
halving, J = (4 J_{h/2} − J_h)/3, leaves an error far below 1e-6 (checked in the tests against
the Bessel closed form of the uniformly moving perforated disk).

Solving: the system (K + cM) Π = F of a mesh is tridiagonal and symmetric; K, M and F are
assembled once per mesh, and each c then costs one LAPACK tridiagonal solve (``zgtsv``, LU with
partial pivoting: O(n)). A design's meshes depend on c only through the rounded layer width (a
factor 1.13 in δ), so the frequencies of a spectrum and the steps of the cut-off search share a
few mesh pairs. The spectrum below |σ̂| = 10⁻⁴ λ₁ (λ₁ = α + j₀₁²) is the static value, one
solve.

This is the same continuous problem the damping stage solves in two dimensions (quadratic
triangles, three nested levels, its own error 1e-5 … 1e-4 relative), so the two agree to the
stage's discretisation error, once the shape carries the plate FE's own departure from the
closed form (:mod:`diagap.fastpath.shape`).
"""
from __future__ import annotations

import math

import numpy as np
from scipy.linalg.lapack import zgtsv
from scipy.optimize import brentq
from scipy.special import i0e, i1e, j0, j1

__all__ = ["static_shape", "film_response", "film_cutoff", "shape_square_integral",
           "DISK_EIGENVALUE", "RadialFilm"]

DISK_EIGENVALUE = 5.783185962946784  # j₀₁²
_SERIES_TAU = 30.0
_N_ZONE = 400
_GAUSS_X, _GAUSS_W = np.polynomial.legendre.leggauss(3)


def _series_shape(u: np.ndarray, tau: float) -> np.ndarray:
    q = tau / 4.0
    r_over_tau, s_over_tau2 = 0.0, np.zeros_like(u)
    term_r = 1.0 / 8.0  # (τ/4)^m/(m!(m+1)!)/τ at m = 1: 1/(4·2)
    term_s = 1.0 / 64.0  # (τ/4)^m/(m!)²/τ² at m = 2: 1/(16·4)
    u2 = u * u
    for m in range(1, 60):
        r_over_tau += term_r
        if m >= 2:
            s_over_tau2 = s_over_tau2 + term_s * (u2**m - 1.0)
            term_s *= q / (m + 1) ** 2
        term_r *= q / ((m + 1) * (m + 2))
        if m > 4 and abs(term_r) < 1e-18 and abs(term_s) < 1e-18:
            break
    one_plus_r = 1.0 + tau * r_over_tau
    return ((1.0 - u2) * r_over_tau / 4.0 + s_over_tau2) / one_plus_r


def _bessel_shape(u: np.ndarray, tau: float) -> np.ndarray:
    if tau > 0:
        k = math.sqrt(tau)
        i1 = i1e(k)
        return (1.0 - u * u) / (4.0 * tau) - (i0e(k) - i0e(k * u) * np.exp(k * (u - 1.0))) \
            / (2.0 * tau * k * i1)
    k = math.sqrt(-tau)
    return (1.0 - u * u) / (4.0 * tau) + (j0(k) - j0(k * u)) / (2.0 * tau * k * j1(k))


def static_shape(u, tau: float) -> np.ndarray:
    """φ(u) = ŵ(u)/ŵ(0) of the clamped disk with tension ratio τ (u = r/a in [0, 1])."""
    u = np.asarray(u, dtype=float)
    f = _series_shape if abs(tau) <= _SERIES_TAU else _bessel_shape
    return f(u, tau) / f(np.zeros(1), tau)[0]


class _Mesh:
    """Two-zone radial mesh, its halving, Gauss points, the load of the shape, and the
    tridiagonal ρ-weighted stiffness and mass of the free nodes (all but the rim node)."""

    def __init__(self, layer: float, eps: float, tau: float, refine: int, correction=None):
        width = min(0.5, 20.0 * layer)
        n = _N_ZONE * refine
        self.x = np.concatenate([np.linspace(0.0, 1.0 - width, n + 1)[:-1],
                                 np.linspace(1.0 - width, 1.0, n + 1)])
        a, b = self.x[:-1], self.x[1:]
        h = b - a
        xq = 0.5 * (a + b)[:, None] + 0.5 * h[:, None] * _GAUSS_X[None, :]
        wq = 0.5 * h[:, None] * _GAUSS_W[None, :] * xq
        phi = static_shape(eps * xq, tau)
        if correction is not None:
            phi = phi * (1.0 + correction(eps * xq))
        n1 = (b[:, None] - xq) / h[:, None]
        load = np.zeros(self.x.size)
        load[:-1] += np.sum(phi * n1 * wq, axis=1)
        load[1:] += np.sum(phi * (1 - n1) * wq, axis=1)
        self.load = load[:-1]  # Π = 0 at the rim node
        self.phi_sq = 2.0 * math.pi * float(np.sum(phi * phi * wq))
        # element matrices of ∫ρ w'v' dρ and ∫ρ w v dρ, exact for linear elements
        ks = 0.5 * (a + b) / h
        md0, md1, mo = h / 12.0 * (3 * a + b), h / 12.0 * (a + 3 * b), h / 12.0 * (a + b)
        kd, md = np.zeros(self.x.size), np.zeros(self.x.size)
        kd[:-1] += ks
        kd[1:] += ks
        md[:-1] += md0
        md[1:] += md1
        self.k_diag, self.m_diag = kd[:-1], md[:-1]
        self.k_off, self.m_off = -ks[:-1], mo[:-1]
        self._rhs = self.load.astype(complex)

    def solve(self, c: complex) -> complex:
        """J_h = Fᵀ Π_h for the coefficient c = α + s (one tridiagonal LAPACK solve)."""
        off = self.k_off + c * self.m_off
        *_, sol, info = zgtsv(off, self.k_diag + c * self.m_diag, off.copy(), self._rhs)
        if info != 0:
            raise ArithmeticError(f"radial film: singular system at c = {c!r}")
        return complex(2.0 * math.pi * (self.load @ sol))


class RadialFilm:
    """The scaled film of one design: sink α, electrode/diaphragm radius ε, tension ratio τ;
    ``correction`` r(u) makes the shape φ(u)(1 + r(u)) (:mod:`diagap.fastpath.shape`)."""

    def __init__(self, alpha: float, eps: float, tau: float, correction=None):
        self.alpha, self.eps, self.tau = float(alpha), float(eps), float(tau)
        self.correction = correction
        self._meshes: dict = {}

    def _pair(self, c: complex):
        layer = 1.0 / math.sqrt(max(abs(c), self.eps**2 * max(self.tau, 0.0), 1.0))
        key = round(math.log(layer) * 8.0)  # meshes shared within a factor ~1.13 of layers
        if key not in self._meshes:
            lay = math.exp(key / 8.0)
            self._meshes[key] = (_Mesh(lay, self.eps, self.tau, 1, self.correction),
                                 _Mesh(lay, self.eps, self.tau, 2, self.correction))
        return self._meshes[key]

    def response(self, s: complex) -> complex:
        """J(s) extrapolated (Richardson, h²) from the mesh and its halving."""
        c = self.alpha + s
        coarse, fine = self._pair(c)
        return (4.0 * fine.solve(c) - coarse.solve(c)) / 3.0

    def responses(self, s) -> np.ndarray:
        """J(s) at an array of s (each as :meth:`response`; meshes built once per design and
        layer, shared by the frequencies whose layers round alike)."""
        return np.array([self.response(complex(v)) for v in np.atleast_1d(s)])

    def shape_square_integral(self) -> float:
        """∫ φ² dA over the unit electrode disk (Richardson-extrapolated quadrature)."""
        coarse, fine = self._pair(complex(self.alpha))
        return (4.0 * fine.phi_sq - coarse.phi_sq) / 3.0

    def cutoff(self) -> float:
        """Scaled squeeze number σ̂ where Re J(jσ̂) = −Im J(jσ̂) (spring force = damping)."""
        def h(log_sig):
            j = self.response(1j * math.exp(log_sig))
            return j.real + j.imag

        lam = self.alpha + DISK_EIGENVALUE
        lo, hi = math.log(1e-3 * lam), math.log(lam)
        while h(hi) > 0:
            lo, hi = hi, hi + math.log(4.0)
        while h(lo) < 0:
            lo -= math.log(4.0)
        return math.exp(brentq(h, lo, hi, xtol=1e-12, rtol=1e-12))


def film_response(alpha: float, eps: float, tau: float, s) -> np.ndarray:
    """J(s) of :class:`RadialFilm` at an array of scaled Laplace variables s."""
    return RadialFilm(alpha, eps, tau).responses(s)


def film_cutoff(alpha: float, eps: float, tau: float) -> float:
    return RadialFilm(alpha, eps, tau).cutoff()


def shape_square_integral(eps: float, tau: float) -> float:
    return RadialFilm(0.0, eps, tau).shape_square_integral()
