"""Newton corrector of the electromechanical equilibrium, with a reused tangent factorisation.

Equations (see :mod:`diagap.fem.coupling.branch`): K u = λ f(u), λ = V², with the tangent
J(u) = K − λ G(u). Two controls:

- displacement control: cᵀu = w0 prescribed, λ unknown; the bordered Newton step
  [J −f; cᵀ 0][δu; δλ] = [λf − Ku; w0 − cᵀu] by block elimination, a = J⁻¹f, b = J⁻¹(λf − Ku),
  δλ = (w0 − cᵀu − cᵀb)/(cᵀa), δu = b + δλ a (regular through the fold of λ(w0));
- voltage control: λ prescribed, δu = J⁻¹(λf − Ku).

Iteration (chord, or modified Newton). The factorised tangent is reused while successive
increments contract by at least ``CONTRACTION``; a slower step is recomputed with the tangent
factorised at the current iterate (a full Newton step). A solve starts from the most recent
factorisation (that of the last converged point of a continuation, or of the point just before
it), so a well-predicted step needs no new factorisation. Stopping test as for full Newton: the
last increment below ``tol`` times the prescribed deflection (floor 1e-6·g) and, displacement
control, the λ increment below ``tol``·λ; since the refactorisation rule keeps the contraction
c ≤ ``CONTRACTION``, the error left after that increment is at most c/(1 − c) ≤ 1/3 of it. A
chord solve that fails (no convergence, or an iterate touching the backplate) is repeated
with a fresh tangent at every iterate (Newton–Raphson, the reference method, also chosen for
every solve by ``full_newton=True``). C. T. Kelley, Iterative Methods for Linear and Nonlinear
Equations, SIAM (1995), ch. 5: the chord method converges q-linearly to the same root as Newton's
method [from memory].

Slopes. Along the branch dλ/dw0 = 1/(cᵀJ⁻¹f); the exact slope at a converged point uses the
tangent factorised there (which the next solve then reuses); the chord value 1/(cᵀa) is the slope
of the chord's linearisation and serves only far from the fold.

Factorisations (SuperLU, minimum-degree ordering of J + Jᵀ in symmetric mode, partial pivoting
as fallback at an exactly singular pivot) are counted in ``factorisations``; the last one made or
used is the ``chord`` of the next displacement-controlled solve; the most recent few are kept, keyed by the exact (λ, u) they were made at, and returned again for the same point
(e.g. the bias point's tangent serves its compliance and its softened modes). The stiffness K
itself is factorised once per system (given by the assembled plate when it has one).
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["CoupledError", "SingularTangent", "EquilibriumSolver", "solver_for", "start_vector"]

#: factorised tangents kept per solver (the last converged points of a continuation)
KEPT_TANGENTS = 3


class CoupledError(RuntimeError):
    """The nonlinear solver did not converge."""


def start_vector(n: int) -> np.ndarray:
    """A fixed generic start vector for ARPACK (reproducible results, no symmetry imposed)."""
    return np.random.default_rng(0).standard_normal(n)


class SingularTangent(CoupledError):
    """The tangent J is exactly singular at the point (a fold of the branch)."""


def _factor(A):
    try:
        return spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                         options={"SymmetricMode": True})
    except RuntimeError:  # exactly singular pivot (at the fold): pivot
        try:
            return spla.splu(A)
        except RuntimeError as exc:
            raise SingularTangent("the tangent stiffness is exactly singular") from exc


class EquilibriumSolver:
    """Newton for K u = λ f(u) with either w0 (displacement control) or λ prescribed."""

    CONTRACTION = 0.25

    def __init__(self, system, load, gap_m: float, full_newton: bool = False):
        self.s, self.load, self.g = system, load, gap_m
        self.full_newton = full_newton
        self.K = sp.csc_matrix(system.K)
        self.B = sp.csr_matrix(system.B)
        self.BT = sp.csr_matrix(self.B.T)
        self.W = np.asarray(system.weights, float)
        self.c = np.asarray(system.center, float)
        given = getattr(system, "stiffness_factor", None)
        self.lu = given if given is not None else spla.splu(self.K)
        self.n = self.K.shape[0]
        self.factorisations = 0
        self._tangents: list = []  # (λ, u, lu), most recent last
        self.chord = self.lu  # the factorisation the next chord solve starts with
        self.equilibria: dict = {}  # λ -> u of the stable equilibria found at prescribed λ
        self.last_slope = float("nan")
        self.last_direction = None

    # ------------------------------------------------------------------ load and tangent
    def local_gap(self, u):
        return self.g - self.B @ u

    def force(self, u):  # f(u) per V²
        gl = self.local_gap(u)
        if np.any(gl <= self.load.min_gap_m) or np.any(gl <= 0):
            raise CoupledError("the diaphragm touches the backplate (local gap <= 0)")
        return self.BT @ (self.W * 0.5 * self.load.pressure_per_v2(gl))

    def g_diag(self, u):  # ½|π'| at the points
        return 0.5 * np.abs(self.load.pressure_slope_per_v2(self.local_gap(u))) * self.W

    def tangent(self, lam, u) -> sp.csc_matrix:
        """J = K − λG(u) (sparse)."""
        return (self.K - self.BT @ sp.diags(lam * self.g_diag(u)) @ self.B).tocsc()

    def factor_t(self, lam, u):
        """Sparse LU of J(λ, u); the kept one if it was made at exactly this point."""
        self.chord = self._factor_t(lam, u)
        return self.chord

    def _factor_t(self, lam, u):
        if lam == 0.0:
            return self.lu
        for lam_k, u_k, lu in reversed(self._tangents):
            if lam_k == lam and np.array_equal(u_k, u):
                return lu
        lu = _factor(self.tangent(lam, u))
        self.factorisations += 1
        self._tangents.append((float(lam), np.array(u, copy=True), lu))
        del self._tangents[:-KEPT_TANGENTS]
        return lu

    def solve_t(self, lam, u, rhs):
        """Solve J x = rhs (direct)."""
        return self.factor_t(lam, u).solve(np.asarray(rhs, float))

    def slope(self, lam, u) -> float:
        """dλ/dw0 = 1/(cᵀJ⁻¹f) at a converged point, with the tangent factorised there; keeps
        ``last_direction`` = du/dw0 = J⁻¹f/(cᵀJ⁻¹f) of that point."""
        a = self.factor_t(lam, u).solve(self.force(u))
        self.last_direction = a / (self.c @ a)
        return 1.0 / (self.c @ a)

    def min_stiffness_ratio(self, lam, u) -> float:
        """μ = 1 − λ·max eig(K⁻¹ G): J is positive definite while μ > 0."""
        d = self.g_diag(u)
        if lam <= 0 or not np.any(d):
            return 1.0
        B, BT = self.B, self.BT
        op = spla.LinearOperator((self.n, self.n), matvec=lambda x: self.lu.solve(BT @ (d * (B @ x))),
                                 dtype=float)
        if self.n <= 8:
            dense = np.column_stack([op.matvec(e) for e in np.eye(self.n)])
            return float(1.0 - lam * np.max(np.linalg.eigvals(dense).real))
        vals = spla.eigs(op, k=1, which="LM", return_eigenvectors=False, tol=1e-8, maxiter=2000,
                         v0=start_vector(self.n))
        return float(1.0 - lam * np.max(vals.real))

    # ------------------------------------------------------------------ Newton
    def displacement_control(self, w0, u, lam, tol=1e-10, maxit=40, exact_slope=False):
        """(u, λ) with K u = λ f(u) and cᵀu = w0, from the start (u, λ); sets ``last_slope``
        (dλ/dw0: exact with ``exact_slope`` or ``full_newton``, else the chord's)."""
        if w0 == 0.0:
            self.last_slope = float("nan")
            return np.zeros(self.n), 0.0
        if not self.full_newton:
            try:
                return self._displacement(w0, u, lam, tol, maxit, exact_slope, chord=True)
            except CoupledError:
                pass
        return self._displacement(w0, u, lam, tol, maxit, exact_slope, chord=False)

    def _displacement(self, w0, u, lam, tol, maxit, exact_slope, chord):
        scale = max(abs(w0), 1e-6 * self.g)
        lu, fresh, prev = (self.chord, False, None) if chord else (None, False, None)
        for _ in range(maxit):
            f = self.force(u)
            r = lam * f - self.K @ u

            def step(lu):
                ab = lu.solve(np.column_stack([f, r]))
                a, b = ab[:, 0], ab[:, 1]
                dlam = (w0 - self.c @ u - self.c @ b) / (self.c @ a)
                return a, b + dlam * a, dlam

            if lu is None:
                lu, fresh = self.factor_t(lam, u), True
            a, du, dlam = step(lu)
            size = np.max(np.abs(du))
            if not fresh and prev is not None and not size <= self.CONTRACTION * prev:
                lu, fresh = self.factor_t(lam, u), True  # slow contraction: Newton step
                a, du, dlam = step(lu)
                size = np.max(np.abs(du))
            u, lam = u + du, lam + dlam
            self.last_slope = 1.0 / (self.c @ a)  # of the linearisation used
            if size <= tol * scale and abs(dlam) <= tol * max(abs(lam), 1e-300):
                if exact_slope or not chord:
                    self.last_slope = self.slope(lam, u)
                return u, lam
            prev = size
            if not chord:
                lu = None  # Newton–Raphson: a fresh tangent at every iterate
            fresh = False
            if not np.isfinite(size):
                break
        raise CoupledError(f"Newton (displacement control) did not converge at w0 = {w0:.4g} m")

    def voltage_control(self, lam, u, tol=1e-10, maxit=40, start_lu=None):
        """u with K u = λ f(u) from the start u: chord from ``start_lu`` (default: the stiffness
        K, the tangent at rest, stiffer than J on the stable branch, so the iteration approaches
        the stable equilibrium from the side of the start); Newton–Raphson with
        ``full_newton`` or when the chord fails."""
        if not self.full_newton:
            try:
                return self._voltage(lam, u, tol, maxit, start_lu or self.lu, True)
            except CoupledError:
                pass
        return self._voltage(lam, u, tol, maxit, None, False)

    def _voltage(self, lam, u, tol, maxit, lu, chord):
        fresh, prev = False, None
        for _ in range(maxit):
            r = lam * self.force(u) - self.K @ u
            if lu is None:
                lu, fresh = self.factor_t(lam, u), True
            du = lu.solve(r)
            size = np.max(np.abs(du))
            if not fresh and prev is not None and not size <= self.CONTRACTION * prev:
                lu, fresh = self.factor_t(lam, u), True
                du = lu.solve(r)
                size = np.max(np.abs(du))
            u = u + du
            if size <= tol * max(np.max(np.abs(u)), 1e-6 * self.g):
                return u
            prev = size
            if not chord:
                lu = None
            fresh = False
            if not np.isfinite(size):
                break
        raise CoupledError(f"Newton (voltage control) did not converge at V² = {lam:.4g} V²")


def solver_for(system, load, gap_m: float, full_newton: bool = False) -> EquilibriumSolver:
    """The solver of ``system`` for this load and gap, shared by every call with the same
    arguments (its stiffness factorisation, kept tangents and equilibria are reused). A system
    with a ``_solvers`` dict keeps it there; otherwise a new solver is made."""
    memo = getattr(system, "_solvers", None)
    if memo is None:
        return EquilibriumSolver(system, load, gap_m, full_newton)
    key = (id(load), float(gap_m), bool(full_newton))
    hit = memo.get(key)
    if hit is None or hit[0] is not load:
        hit = memo[key] = (load, EquilibriumSolver(system, load, gap_m, full_newton))
    return hit[1]
