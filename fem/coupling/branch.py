"""Electromechanical equilibrium of the diaphragm under bias, electrostatic softening and pull-in.

Physics
-------
With the diaphragm deflection w(x, y) (positive towards the backplate, m), the rest gap g and the
air-gap capacitance per unit area c(ĝ) (F/m², from the unit-cell electrostatics, so the
perforation's effect is included), the electrostatic pressure on the electrode area Ω_e at bias V is

    p_e(w) = ½ V² π(g − w),     π(ĝ) = −dc/dĝ   (Pa/V²; π = ε0/ĝ² for solid parallel plates),

and the static equilibrium of the linear plate (stiffness operator K of D∇⁴w − T∇²w) reads

    K u = V² f(u),   f_i(u) = ∫_Ωe ½ π(g − w) N_i dA,   w = Σ u_i N_i          (N, per V²)

Its tangent (the stiffness seen by small motions at constant voltage) is

    J(u) = K − V² G(u),   G_ij = ∫_Ωe ½ |π'(g − w)| N_i N_j dA     (π' < 0: softening).

Method
------
Displacement control: the centre deflection w0 = cᵀu is prescribed and λ = V² is an unknown, so
the branch is followed through the fold. Newton's method on the bordered system

    [J  −f] [δu]   [λ f − K u]
    [cᵀ  0] [δλ] = [w0 − cᵀu ]

is solved by block elimination with two solves with J (a sparse LU in symmetric mode, reused as
a chord while the iteration contracts fast, refactored otherwise). Pull-in is the fold of λ(w0):
the maximum of λ, where J stops being positive definite (its smallest eigenvalue relative to K,
μ = 1 − λ·max eig(K⁻¹G), reaches 0). Along the branch dλ/dw0 = 1/(cᵀJ⁻¹f); the fold is the zero
of this slope, bracketed by the uniform steps in w0 and found by Brent's method.

Quadrature: the electrode integrals are sums over quadrature points q with weights W_q (m²):
w_q = (B u)_q with B the (sparse) interpolation matrix of the FE basis at those points.
All inputs are SI. The plate matrices act on DOFs in scaled coordinates (deflection in m, its
derivatives per unit scaled length), which keeps them well conditioned; Newton tolerances are
relative to the prescribed deflection (floor 1e-6·g) and to λ.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["CouplingSystem", "ElectrostaticLoad", "EquilibriumPoint", "Branch", "trace_branch",
           "equilibrium_at_voltage", "softened_modes", "center_compliance", "CoupledError"]


class CoupledError(RuntimeError):
    """The nonlinear solver did not converge."""


@dataclass(frozen=True)
class CouplingSystem:
    """A linear diaphragm model reduced to what the coupling needs (SI, consistent units).

    K: (n, n) sparse stiffness (N/m in the generalised coordinates u, metres), constrained DOFs
    removed; M: (n, n) mass matrix (kg) or None; B: (nq, n) sparse interpolation w_q = (B u)_q (m)
    at the electrode quadrature points; weights: (nq,) quadrature weights (m²);
    center: (n,) row giving the centre deflection cᵀu (m); mass-normalised modes are not needed.
    """

    K: sp.spmatrix
    B: sp.spmatrix
    weights: np.ndarray
    center: np.ndarray
    M: sp.spmatrix | None = None


@dataclass(frozen=True)
class ElectrostaticLoad:
    """π(ĝ) = −dc/dĝ and its derivative, from the capacitance density c(ĝ) (F/m², ĝ in m)."""

    pressure_per_v2: Callable[[np.ndarray], np.ndarray]  # π(ĝ)/2 · 2 = −dc/dĝ  (F/m³)
    pressure_slope_per_v2: Callable[[np.ndarray], np.ndarray]  # dπ/dĝ (F/m⁴)
    min_gap_m: float = 0.0  # below this the local gap is outside the model's validity

    @staticmethod
    def parallel_plate() -> "ElectrostaticLoad":
        from diagap.fem.constants import EPSILON_0_F_PER_M as eps0

        return ElectrostaticLoad(lambda g: eps0 / g**2, lambda g: -2.0 * eps0 / g**3)


@dataclass(frozen=True)
class EquilibriumPoint:
    center_deflection_m: float
    voltage_v: float
    u: np.ndarray = field(repr=False)
    min_stiffness_ratio: float  # μ: smallest eigenvalue of J relative to K (1 at V = 0, 0 at pull-in)


@dataclass(frozen=True)
class Branch:
    points: tuple[EquilibriumPoint, ...]
    pull_in_voltage_v: float
    pull_in_center_deflection_m: float

    def voltages(self) -> np.ndarray:
        return np.array([p.voltage_v for p in self.points])

    def deflections(self) -> np.ndarray:
        return np.array([p.center_deflection_m for p in self.points])


def _start_vector(n: int) -> np.ndarray:
    """A fixed generic start vector for ARPACK (reproducible results, no symmetry imposed)."""
    return np.random.default_rng(0).standard_normal(n)


class _Solver:
    """Newton for K u = λ f(u) with either w0 (displacement control) or λ prescribed."""

    def __init__(self, system: CouplingSystem, load: ElectrostaticLoad, gap_m: float):
        self.s, self.load, self.g = system, load, gap_m
        self.K = sp.csc_matrix(system.K)
        self.B = sp.csr_matrix(system.B)
        self.BT = sp.csr_matrix(self.B.T)
        self.W = np.asarray(system.weights, float)
        self.c = np.asarray(system.center, float)
        self.lu = spla.splu(self.K)
        self.n = self.K.shape[0]

    def local_gap(self, u):
        return self.g - self.B @ u

    def force(self, u):  # f(u) per V²
        gl = self.local_gap(u)
        if np.any(gl <= self.load.min_gap_m) or np.any(gl <= 0):
            raise CoupledError("the diaphragm touches the backplate (local gap <= 0)")
        return self.BT @ (self.W * 0.5 * self.load.pressure_per_v2(gl))

    def g_diag(self, u):  # ½|π'| at the points
        return 0.5 * np.abs(self.load.pressure_slope_per_v2(self.local_gap(u))) * self.W

    def factor_t(self, lam, u):
        """Sparse LU of J = K − λG (symmetric mode, no pivoting; partial pivoting as fallback)."""
        d = lam * self.g_diag(u)
        J = (self.K - self.BT @ sp.diags(d) @ self.B).tocsc()
        try:
            return spla.splu(J, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                             options={"SymmetricMode": True})
        except RuntimeError:  # exactly singular pivot (at the fold): pivot
            return spla.splu(J)

    def solve_t(self, lam, u, rhs):
        """Solve J x = rhs (direct)."""
        return self.factor_t(lam, u).solve(np.asarray(rhs, float))

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
                        v0=_start_vector(self.n))
        return float(1.0 - lam * np.max(vals.real))

    def displacement_control(self, w0, u, lam, tol=1e-10, maxit=40, exact_slope=False):
        """Newton (chord steps with the last factorisation while they contract fast) for
        K u = λ f(u) with cᵀu = w0; returns (u, λ) and sets ``last_slope`` = dλ/dw0."""
        if w0 == 0.0:
            return np.zeros(self.n), 0.0
        lu, prev = None, None
        for _ in range(maxit):
            f = self.force(u)
            r = lam * f - self.K @ u
            if lu is None:
                lu = self.factor_t(lam, u)
            a, b = lu.solve(f), lu.solve(r)
            dlam = (w0 - self.c @ u - self.c @ b) / (self.c @ a)
            du = b + dlam * a
            u, lam = u + du, lam + dlam
            self.last_slope = 1.0 / (self.c @ a)  # dλ/dw0 along the branch (0 at the fold)
            step = np.max(np.abs(du))
            if step <= tol * max(abs(w0), 1e-6 * self.g) and abs(dlam) <= tol * max(abs(lam), 1e-300):
                if exact_slope:  # from the tangent at the solution, not the chord
                    self.last_slope = 1.0 / (self.c @ self.factor_t(lam, u).solve(self.force(u)))
                return u, lam
            if prev is not None and step > 0.1 * prev:
                lu = None  # slow contraction: refactor the tangent
            prev = step
        raise CoupledError(f"Newton (displacement control) did not converge at w0 = {w0:.4g} m")

    def voltage_control(self, lam, u, tol=1e-10, maxit=30):
        for _ in range(maxit):
            r = lam * self.force(u) - self.K @ u
            du = self.solve_t(lam, u, r)
            u = u + du
            if np.max(np.abs(du)) <= tol * max(np.max(np.abs(u)), 1e-6 * self.g):
                return u
        raise CoupledError(f"Newton (voltage control) did not converge at V² = {lam:.4g} V²")


def _point(solver: _Solver, u, lam, stability: bool = True) -> EquilibriumPoint:
    mu = solver.min_stiffness_ratio(lam, u) if stability else float("nan")
    return EquilibriumPoint(float(solver.c @ u), float(np.sqrt(max(lam, 0.0))), u, mu)


def lam_k_prev_slope_small(pts) -> bool:
    """Use the exact tangent slope once the branch flattens (λ' below a quarter of its start)."""
    return len(pts) >= 2 and pts[-1][3] < 0.25 * pts[0][3]


def trace_branch(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float, *,
                 steps: int = 12, max_fraction: float = 0.72) -> Branch:
    """Follow the equilibrium branch from rest to beyond the fold; return it with the pull-in point.

    The centre deflection w0 is stepped uniformly (secant predictor, Newton corrector) up to
    ``max_fraction``·g, stopping one step after the fold. Along the branch dλ/dw0 = 1/(cᵀJ⁻¹f)
    comes free with each Newton step; the fold is its zero, found by Brent's method inside the
    bracketing step, so V_PI is accurate to the Newton tolerance, not to the step size.
    """
    from scipy.optimize import brentq

    solver = _Solver(system, load, gap_m)
    u = np.zeros(solver.n)
    f0 = solver.force(u)
    s0 = solver.c @ solver.lu.solve(f0)
    if s0 <= 0:
        raise CoupledError("the electrostatic load does not pull the centre towards the backplate")
    dw = max_fraction * gap_m / steps
    pts: list[tuple[float, float, np.ndarray, float]] = [(0.0, 0.0, u, 1.0 / s0)]
    for k in range(1, steps + 1):
        w0 = k * dw
        if len(pts) >= 2:  # secant predictor along the branch
            (w_a, l_a, u_a, _), (w_b, l_b, u_b, _) = pts[-2], pts[-1]
            t = (w0 - w_b) / (w_b - w_a)
            u_pred, lam_pred = u_b + t * (u_b - u_a), l_b + t * (l_b - l_a)
        else:
            u_pred, lam_pred = (w0 / s0) * solver.lu.solve(f0), w0 / s0
        try:
            u_k, lam_k = solver.displacement_control(w0, u_pred, lam_pred,
                                                     exact_slope=lam_k_prev_slope_small(pts))
        except CoupledError:
            break
        pts.append((w0, lam_k, u_k, solver.last_slope))
        if solver.last_slope < 0:
            break
    if pts[-1][3] >= 0:
        raise CoupledError(f"no pull-in found up to a centre deflection of "
                           f"{pts[-1][0] / gap_m:.2f} gap")
    lo, hi = pts[-2], pts[-1]
    state = {"u": lo[2], "lam": lo[1]}

    def slope(w0):
        u_k, lam_k = solver.displacement_control(w0, state["u"], state["lam"], exact_slope=True)
        state.update(u=u_k, lam=lam_k)
        return solver.last_slope

    w_pi = brentq(slope, lo[0], hi[0], xtol=1e-10 * gap_m, rtol=1e-12)
    u_pi, lam_pi = solver.displacement_control(w_pi, state["u"], state["lam"])
    pts.insert(-1, (w_pi, lam_pi, u_pi, 0.0))
    points = tuple(_point(solver, p[2], p[1], stability=False) for p in pts)
    return Branch(points, float(np.sqrt(lam_pi)), float(w_pi))


def equilibrium_at_voltage(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                           voltage_v: float, branch: Branch) -> EquilibriumPoint:
    """The stable equilibrium at ``voltage_v`` (< pull-in) on the traced ``branch``.

    Found by Brent's method on λ(w0) − V² over the stable part of the branch, each evaluation a
    displacement-controlled Newton solve, so it stays robust close to the fold.
    """
    from scipy.optimize import brentq

    if voltage_v >= branch.pull_in_voltage_v:
        raise CoupledError(f"bias {voltage_v:g} V is at or above pull-in "
                           f"({branch.pull_in_voltage_v:.4g} V)")
    solver = _Solver(system, load, gap_m)
    lam_t = voltage_v**2
    if lam_t == 0.0:
        return _point(solver, np.zeros(solver.n), 0.0)
    stable = [p for p in branch.points if p.center_deflection_m <= branch.pull_in_center_deflection_m]
    lo = max((p for p in stable if p.voltage_v**2 <= lam_t), key=lambda p: p.center_deflection_m)
    hi = [p for p in stable if p.voltage_v**2 > lam_t and p.center_deflection_m > lo.center_deflection_m]
    w_hi = hi[0].center_deflection_m if hi else branch.pull_in_center_deflection_m
    cache = {"u": lo.u, "lam": lo.voltage_v**2 or lam_t}

    def residual(w0):
        u, lam = solver.displacement_control(w0, cache["u"], cache["lam"])
        cache.update(u=u, lam=lam)
        return lam - lam_t

    if voltage_v < 0.9 * branch.pull_in_voltage_v and hi:  # well below the fold: Newton in V
        l_lo, l_hi = lo.voltage_v**2, hi[0].voltage_v**2
        t = (lam_t - l_lo) / (l_hi - l_lo)
        try:
            u = solver.voltage_control(lam_t, lo.u + t * (hi[0].u - lo.u))
            return _point(solver, u, lam_t)
        except CoupledError:
            pass
    w = brentq(residual, lo.center_deflection_m, w_hi, xtol=1e-12 * gap_m, rtol=1e-12)
    u, lam = solver.displacement_control(w, cache["u"], cache["lam"])
    return _point(solver, u, lam)


def softened_modes(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                   point: EquilibriumPoint, n_modes: int = 1) -> np.ndarray:
    """Natural frequencies (Hz) of small motions about ``point`` at constant voltage:
    (K − V²G) φ = ω² M φ. Needs ``system.M``."""
    if system.M is None:
        raise ValueError("system.M is required for the softened modes")
    solver = _Solver(system, load, gap_m)
    lam = point.voltage_v**2
    J = (solver.K - solver.BT @ sp.diags(lam * solver.g_diag(point.u)) @ solver.B).tocsc()
    if J.shape[0] <= max(8, n_modes + 1):
        from scipy.linalg import eigh

        vals = eigh(J.toarray(), system.M.toarray(), eigvals_only=True)[:n_modes]
    else:
        vals = spla.eigsh(J, k=n_modes, M=sp.csc_matrix(system.M), sigma=0.0, which="LM",
                          return_eigenvectors=False, v0=_start_vector(J.shape[0]))
    vals = np.sort(vals.real)
    return np.sqrt(np.maximum(vals, 0.0)) / (2 * np.pi)


def center_compliance(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                      point: EquilibriumPoint, unit_pressure_load: np.ndarray) -> float:
    """Centre deflection per pascal (m/Pa) of small static pressures about ``point`` at constant
    voltage: cᵀ J⁻¹ f_p, with ``unit_pressure_load`` the load vector f_p of 1 Pa on the diaphragm."""
    solver = _Solver(system, load, gap_m)
    x = solver.solve_t(point.voltage_v**2, point.u, np.asarray(unit_pressure_load, float))
    return float(solver.c @ x)
