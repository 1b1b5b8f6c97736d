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

is solved by block elimination with two solves with J (:mod:`diagap.fem.coupling.corrector`: a
sparse LU in symmetric mode, reused as a chord from one solve to the next while the iteration
contracts fast, refactored otherwise). Pull-in is the fold of λ(w0): the maximum of λ, where J
stops being positive definite (its smallest eigenvalue relative to K, μ = 1 − λ·max eig(K⁻¹G),
reaches 0). Along the branch dλ/dw0 = 1/(cᵀJ⁻¹f); the fold is the zero of this slope,
bracketed by the uniform steps in w0 and found by a safeguarded secant iteration on the exact
slope (Brent's method in the full-Newton reference).

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

from diagap.fem.coupling.corrector import (CoupledError, EquilibriumSolver, SingularTangent,
                                           solver_for, start_vector)

_Solver = EquilibriumSolver  # the corrector under its former name
_start_vector = start_vector

__all__ = ["CouplingSystem", "ElectrostaticLoad", "EquilibriumPoint", "Branch", "trace_branch",
           "equilibrium_at_voltage", "softened_modes", "center_compliance", "CoupledError"]


@dataclass(frozen=True)
class CouplingSystem:
    """A linear diaphragm model reduced to what the coupling needs (SI, consistent units).

    K: (n, n) sparse stiffness (N/m in the generalised coordinates u, metres), constrained DOFs
    removed; M: (n, n) mass matrix (kg) or None; B: (nq, n) sparse interpolation w_q = (B u)_q (m)
    at the electrode quadrature points; weights: (nq,) quadrature weights (m²);
    center: (n,) row giving the centre deflection cᵀu (m); mass-normalised modes are not needed.
    stiffness_factor: a factorisation of K with ``.solve`` (e.g. the assembled plate's), or None
    (then K is factorised once by the solver). The solvers of the system (one per load and gap,
    :func:`diagap.fem.coupling.corrector.solver_for`) are kept with it, so the functions below
    share their factorisations and equilibria when called with the same system, load and gap.
    """

    K: sp.spmatrix
    B: sp.spmatrix
    weights: np.ndarray
    center: np.ndarray
    M: sp.spmatrix | None = None
    stiffness_factor: object = field(default=None, repr=False, compare=False)
    _solvers: dict = field(default_factory=dict, repr=False, compare=False)


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
    """Equilibria along the branch (rest, uniform steps in w0, the fold inserted) and the fold:
    V_PI, w0 at pull-in and d²λ/dw0² there (V²/m², λ = V²; negative)."""

    points: tuple[EquilibriumPoint, ...]
    pull_in_voltage_v: float
    pull_in_center_deflection_m: float
    fold_curvature_v2_per_m2: float = float("nan")

    def voltages(self) -> np.ndarray:
        return np.array([p.voltage_v for p in self.points])

    def deflections(self) -> np.ndarray:
        return np.array([p.center_deflection_m for p in self.points])


def _point(solver: EquilibriumSolver, u, lam, stability: bool = True) -> EquilibriumPoint:
    mu = solver.min_stiffness_ratio(lam, u) if stability else float("nan")
    return EquilibriumPoint(float(solver.c @ u), float(np.sqrt(max(lam, 0.0))), u, mu)


def _lagrange(x: np.ndarray, w0: float) -> np.ndarray:
    """Weights of the values at the nodes x giving the interpolating polynomial at w0."""
    return np.array([np.prod([(w0 - x[j]) / (x[i] - x[j]) for j in range(len(x)) if j != i])
                     for i in range(len(x))])


def _extrapolate(pts, w0):
    """(u, λ) at w0 by polynomial extrapolation through the last (up to four) branch points."""
    last = pts[-PREDICTOR_POINTS:]
    weights = _lagrange(np.array([p[0] for p in last]), w0)
    u = sum(wt * p[2] for wt, p in zip(weights, last))
    return u, float(sum(wt * p[1] for wt, p in zip(weights, last)))


def _slope_estimate(pts, w, lam) -> float:
    """dλ/dw0 at the new point (w, λ) from the branch values: the derivative of the polynomial
    through it and the last (up to three) points; from rest, of the quadratic with the exact
    slope s0 there."""
    if len(pts) == 1:
        return 2.0 * lam / w - pts[0][3]
    last = pts[-(PREDICTOR_POINTS - 1):]
    x = np.array([p[0] for p in last] + [w])
    y = np.array([p[1] for p in last] + [lam])
    t = (x - w) / (x[-1] - x[0])  # centred and scaled nodes
    coef = np.polynomial.polynomial.polyfit(t, y, len(x) - 1)
    return float(coef[1] / (x[-1] - x[0]))


#: branch points through which the next one is extrapolated (a cubic)
PREDICTOR_POINTS = 4
#: below this fraction of its value at rest the branch slope is taken from the tangent
EXACT_SLOPE_BELOW = 0.25


def trace_branch(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float, *,
                 steps: int = 12, max_fraction: float = 0.72, full_newton: bool = False,
                 fold_hint: tuple | None = None) -> Branch:
    """Follow the equilibrium branch from rest to beyond the fold; return it with the pull-in point.

    The centre deflection w0 is stepped uniformly (cubic extrapolation of the last points as the
    predictor, Newton corrector reusing the last factorised tangent) up to ``max_fraction``·g,
    stopping one step after the fold. Along the branch dλ/dw0 = 1/(cᵀJ⁻¹f), computed with the
    tangent factorised at the point once the slope estimated from the branch values (derivative
    of the cubic through the last points) falls below ``EXACT_SLOPE_BELOW`` of its value at rest
    or λ stops rising, so the fold is never stepped over unseen; the fold is its zero,
    found inside the bracketing step by a safeguarded secant iteration (or Brent's method with
    ``full_newton``) to 1e-10·g, so V_PI is accurate to the Newton tolerance, not to the step
    size. ``fold_hint`` = (w0, λ'') at the fold of a coarser mesh helps that search.
    ``full_newton``: Newton–Raphson with a fresh tangent at every iterate (the reference).
    """
    solver = solver_for(system, load, gap_m, full_newton)
    u = np.zeros(solver.n)
    f0 = solver.force(u)
    a0 = solver.lu.solve(f0)
    s0 = solver.c @ a0
    if s0 <= 0:
        raise CoupledError("the electrostatic load does not pull the centre towards the backplate")
    dw = max_fraction * gap_m / steps
    # (w0, λ, u, dλ/dw0, du/dw0 where the slope is exact else None)
    pts: list[tuple] = [(0.0, 0.0, u, 1.0 / s0, a0 / s0)]
    solver.chord = solver.lu  # the tangent at rest
    for k in range(1, steps + 1):
        w0 = k * dw
        if len(pts) >= 2:
            u_pred, lam_pred = _extrapolate(pts, w0)
        else:
            u_pred, lam_pred = (w0 / s0) * a0, w0 / s0
        try:
            u_k, lam_k = solver.displacement_control(w0, u_pred, lam_pred)
            slope, direction = _slope_estimate(pts, w0, lam_k), None
            if full_newton or slope < EXACT_SLOPE_BELOW * pts[0][3] or lam_k <= pts[-1][1]:
                slope, direction = solver.slope(lam_k, u_k), solver.last_direction
        except CoupledError:
            break
        pts.append((w0, lam_k, u_k, slope, direction))
        if slope < 0:
            break
    if pts[-1][3] >= 0:
        raise CoupledError(f"no pull-in found up to a centre deflection of "
                           f"{pts[-1][0] / gap_m:.2f} gap")
    find = _fold_brent if full_newton else _fold_secant
    w_pi, u_pi, lam_pi, curvature = find(solver, pts[-2], pts[-1], gap_m, fold_hint)
    pts.insert(-1, (w_pi, lam_pi, u_pi, 0.0, None))
    points = tuple(_point(solver, p[2], p[1], stability=False) for p in pts)
    return Branch(points, float(np.sqrt(lam_pi)), float(w_pi), curvature)


#: tolerance of the fold's centre deflection, relative to the gap
FOLD_XTOL = 1e-10


def _fold_brent(solver, lo, hi, gap_m, hint=None):
    """The fold by Brent's method on the exact slope (each evaluation a Newton solve)."""
    from scipy.optimize import brentq

    state = {"u": lo[2], "lam": lo[1]}

    def slope(w0):
        u_k, lam_k = solver.displacement_control(w0, state["u"], state["lam"], exact_slope=True)
        state.update(u=u_k, lam=lam_k)
        return solver.last_slope

    w_pi = brentq(slope, lo[0], hi[0], xtol=FOLD_XTOL * gap_m, rtol=1e-12)
    u_pi, lam_pi = solver.displacement_control(w_pi, state["u"], state["lam"])
    return w_pi, u_pi, lam_pi, (hi[3] - lo[3]) / (hi[0] - lo[0])


def _hermite_fold(lo, hi):
    """Zero of λ' of the cubic Hermite interpolant of λ(w0) on [lo, hi] (values and slopes), and
    the interpolant's λ'' there."""
    h = hi[0] - lo[0]
    d = (hi[1] - lo[1]) / h
    # λ'(w) on t ∈ [0, 1] is quadratic: s_lo + (6d − 4s_lo − 2s_hi) t + (3s_lo + 3s_hi − 6d) t²
    c0, c1, c2 = lo[3], 6 * d - 4 * lo[3] - 2 * hi[3], 3 * (lo[3] + hi[3]) - 6 * d
    roots = np.roots([c2, c1, c0]) if abs(c2) > 1e-14 * abs(c1) else np.array([-c0 / c1])
    roots = [t.real for t in np.atleast_1d(roots) if abs(t.imag) < 1e-12 and 0 < t.real < 1]
    t = roots[0] if roots else lo[3] / (lo[3] - hi[3])
    return lo[0] + t * h, (c1 + 2 * c2 * t) / h


def _fold_secant(solver, lo, hi, gap_m, hint=None):
    """The fold (zero of the exact slope) by a safeguarded secant iteration inside [lo, hi].

    Start: the fold of the cubic Hermite interpolant of the bracketing points, with a first
    Newton step using λ'' from ``hint`` (w0, λ'') of a coarser mesh if given, else that of the
    interpolant. Each evaluation is a Newton solve started on the tangent of the nearest evaluated
    point, with the exact slope; a secant step leaving the current bracket is replaced by regula
    falsi on it. Stops when the step is below ``FOLD_XTOL``·g; the last point is then solved
    (its equilibrium is the pull-in point). Returns (w0, u, λ, λ'') of the fold.
    """
    xtol = FOLD_XTOL * gap_m
    a, b = lo, hi  # (w, λ, u, slope, du/dw0 or None), slope(a) > 0 > slope(b)
    known = [lo, hi]
    x, deriv = _hermite_fold(lo, hi)
    if hint is not None and np.isfinite(hint[1]) and hint[1] < 0:
        deriv = float(hint[1])
    prev = None
    for _ in range(60):
        near = min(known, key=lambda p: abs(p[0] - x))
        direction = near[4]
        u0 = near[2] + (x - near[0]) * direction if direction is not None else near[2]
        u_x, lam_x = solver.displacement_control(x, u0, near[1] + (x - near[0]) * near[3])
        try:
            p = (x, lam_x, u_x, solver.slope(lam_x, u_x), solver.last_direction)
        except SingularTangent:  # J exactly singular at this equilibrium: the fold itself
            return x, u_x, lam_x, deriv
        known.append(p)
        if p[3] == 0.0:
            return x, u_x, lam_x, deriv
        if p[3] > 0:
            a = p
        else:
            b = p
        if prev is not None and prev[3] != p[3]:
            deriv = (p[3] - prev[3]) / (p[0] - prev[0])
        x_new = p[0] - p[3] / deriv if deriv < 0 else 0.5 * (a[0] + b[0])
        if not a[0] < x_new < b[0]:  # regula falsi on the bracket
            x_new = a[0] - a[3] * (b[0] - a[0]) / (b[3] - a[3])
        prev = p
        if abs(x_new - x) <= xtol or b[0] - a[0] <= xtol:
            u_pi, lam_pi = solver.displacement_control(x_new, u_x + (x_new - x) * p[4],
                                                       lam_x + (x_new - x) * p[3])
            return x_new, u_pi, lam_pi, deriv
        x = x_new
    raise CoupledError("the pull-in fold search did not converge")


def equilibrium_at_voltage(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                           voltage_v: float, branch: Branch, *,
                           full_newton: bool = False) -> EquilibriumPoint:
    """The stable equilibrium at ``voltage_v`` (< pull-in) on the traced ``branch``.

    Well below the fold (V < 0.9 V_PI) Newton's method in V from the branch interpolated at V
    (chord on the stiffness K, refactorised where it contracts slowly), checked to lie between
    the bracketing branch points; otherwise, or if that fails, Brent's method on λ(w0) − V² over
    the stable part of the branch, each evaluation a displacement-controlled Newton solve, so it
    stays robust close to the fold. An equilibrium found once for a system, load and gap is kept
    and returned again.
    """
    from scipy.optimize import brentq

    if voltage_v >= branch.pull_in_voltage_v:
        raise CoupledError(f"bias {voltage_v:g} V is at or above pull-in "
                           f"({branch.pull_in_voltage_v:.4g} V)")
    solver = solver_for(system, load, gap_m, full_newton)
    lam_t = voltage_v**2
    if lam_t == 0.0:
        return _point(solver, np.zeros(solver.n), 0.0)
    if lam_t in solver.equilibria:
        return _point(solver, solver.equilibria[lam_t], lam_t)
    stable = [p for p in branch.points if p.center_deflection_m <= branch.pull_in_center_deflection_m]
    lo = max((p for p in stable if p.voltage_v**2 <= lam_t), key=lambda p: p.center_deflection_m)
    hi = [p for p in stable if p.voltage_v**2 > lam_t and p.center_deflection_m > lo.center_deflection_m]
    w_hi = hi[0].center_deflection_m if hi else branch.pull_in_center_deflection_m
    cache = {"u": lo.u, "lam": lo.voltage_v**2 or lam_t}

    def residual(w0):
        u, lam = solver.displacement_control(w0, cache["u"], cache["lam"])
        cache.update(u=u, lam=lam)
        return lam - lam_t

    def found(u, lam):
        if lam == lam_t:
            solver.equilibria[lam_t] = u
        return _point(solver, u, lam)

    if voltage_v < 0.9 * branch.pull_in_voltage_v and hi:  # well below the fold: Newton in V
        l_lo, l_hi = lo.voltage_v**2, hi[0].voltage_v**2
        t = (lam_t - l_lo) / (l_hi - l_lo)
        try:
            u = solver.voltage_control(lam_t, lo.u + t * (hi[0].u - lo.u))
            if lo.center_deflection_m <= solver.c @ u <= w_hi:  # on the stable piece
                return found(u, lam_t)
        except CoupledError:
            pass
    w = brentq(residual, lo.center_deflection_m, w_hi, xtol=1e-12 * gap_m, rtol=1e-12)
    u, lam = solver.displacement_control(w, cache["u"], cache["lam"])
    return found(u, lam)


def softened_modes(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                   point: EquilibriumPoint, n_modes: int = 1) -> np.ndarray:
    """Natural frequencies (Hz) of small motions about ``point`` at constant voltage:
    (K − V²G) φ = ω² M φ (shift-invert about 0 with the tangent factorised at the point, shared
    with :func:`center_compliance`). Needs ``system.M``."""
    if system.M is None:
        raise ValueError("system.M is required for the softened modes")
    solver = solver_for(system, load, gap_m)
    lam = point.voltage_v**2
    J = solver.tangent(lam, point.u)
    if J.shape[0] <= max(8, n_modes + 1):
        from scipy.linalg import eigh

        vals = eigh(J.toarray(), system.M.toarray(), eigvals_only=True)[:n_modes]
    else:
        lu = solver.factor_t(lam, point.u)
        op = spla.LinearOperator(J.shape, matvec=lu.solve, dtype=float)
        vals = spla.eigsh(J, k=n_modes, M=sp.csc_matrix(system.M), sigma=0.0, which="LM",
                          OPinv=op, return_eigenvectors=False, v0=start_vector(J.shape[0]))
    vals = np.sort(vals.real)
    return np.sqrt(np.maximum(vals, 0.0)) / (2 * np.pi)


def center_compliance(system: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                      point: EquilibriumPoint, unit_pressure_load: np.ndarray) -> float:
    """Centre deflection per pascal (m/Pa) of small static pressures about ``point`` at constant
    voltage: cᵀ J⁻¹ f_p, with ``unit_pressure_load`` the load vector f_p of 1 Pa on the diaphragm."""
    solver = solver_for(system, load, gap_m)
    x = solver.solve_t(point.voltage_v**2, point.u, np.asarray(unit_pressure_load, float))
    return float(solver.c @ x)
