"""Two compliant plates across one air gap: bias equilibrium, pull-in and softening of the pair.

Physics
-------
The diaphragm deflects by w_d (positive towards the backplate) and the backplate by w_b
(positive towards the diaphragm), so the local gap is ĝ = g − w_d − w_b. (In a single global
direction, positive from diaphragm to backplate, the backplate deflection is −w_b and the gap
reads g − w_d + (−w_b).) The electrostatic pressure p_e = ½V²π(ĝ), π = −dc/dĝ
(:mod:`diagap.fem.coupling.branch`), pulls both plates towards each other with the same
magnitude at every point of the electrode. With the generalised coordinates u = [u_d; u_b] of the
two plates and w_q = (B_d u_d)_q + (B_b u_b)_q the gap closure at the electrode quadrature points
q (both plates assembled on the same mesh, so the points coincide), the equilibrium is

    K u = V² f(u),   K = diag(K_d, K_b),   f = [B_d B_b]ᵀ (W ½π(g − w)),

which is the one-plate problem of :mod:`diagap.fem.coupling.branch` with B = [B_d B_b], so the
same branch tracing applies: displacement control on the centre closure cᵀu = w_d(0) + w_b(0),
pull-in at the fold of V²(closure), the tangent J = K − V²BᵀGB couples the plates through G.
The mass matrix is diag(M_d, M_b); the small-signal modes about the bias point are the coupled
modes (the diaphragm's and the backplate's resonance).

Acoustic load. The backplate is taken as acoustically transparent through its holes to first
order: the sound pressure acts on the diaphragm only, and the backplate is loaded only
electrostatically (the pressure difference across it is the film pressure, second order at audio
frequencies for an open perforation). A pressure p on the diaphragm then moves the backplate
through the change of the electrostatic force, which increases the gap change per pascal.

Two pistons. With one quadrature point (area A, parallel plates) and K = diag(k₁, k₂) the
equilibrium is k₁x₁ = k₂x₂ = ε₀AV²/(2(g − x₁ − x₂)²): the springs act in series,
k = k₁k₂/(k₁ + k₂) on the closure, and V_PI = √(8kg³/(27ε₀A)) (checked in the tests).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from diagap.fem.coupling.branch import (Branch, CouplingSystem, ElectrostaticLoad,
                                        EquilibriumPoint, equilibrium_at_voltage, trace_branch)
from diagap.fem.coupling.corrector import solver_for

__all__ = ["pair_system", "PairPoint", "pair_point", "pair_modes", "pair_response",
           "PairLevel", "solve_pair"]


def pair_system(diaphragm: CouplingSystem, backplate: CouplingSystem) -> CouplingSystem:
    """The coupled system of two plates sharing the electrode quadrature points.

    Raises ValueError when the two systems do not share the quadrature points (weights differ).
    """
    w_d, w_b = np.asarray(diaphragm.weights, float), np.asarray(backplate.weights, float)
    if w_d.shape != w_b.shape or not np.allclose(w_d, w_b, rtol=1e-12, atol=0.0):
        raise ValueError("the two plates must be assembled on the same mesh (the electrode "
                         "quadrature points differ)")
    M = None
    if diaphragm.M is not None and backplate.M is not None:
        M = sp.block_diag([diaphragm.M, backplate.M]).tocsc()
    factor = None
    if diaphragm.stiffness_factor is not None and backplate.stiffness_factor is not None:
        factor = _BlockFactor(diaphragm.stiffness_factor, backplate.stiffness_factor,
                              diaphragm.K.shape[0])
    return CouplingSystem(
        K=sp.block_diag([diaphragm.K, backplate.K]).tocsc(),
        B=sp.hstack([diaphragm.B, backplate.B]).tocsr(), weights=w_d,
        center=np.concatenate([diaphragm.center, backplate.center]), M=M,
        stiffness_factor=factor)


class _BlockFactor:
    """Solves with the block-diagonal stiffness of the pair from the two plates' factorisations."""

    def __init__(self, first, second, n_first: int):
        self.first, self.second, self.n = first, second, n_first

    def solve(self, rhs):
        rhs = np.asarray(rhs, float)
        return np.concatenate([self.first.solve(rhs[:self.n]), self.second.solve(rhs[self.n:])])


@dataclass(frozen=True)
class PairPoint:
    """Centre deflections (m) of the two plates at one equilibrium point."""

    voltage_v: float
    diaphragm_center_m: float
    backplate_center_m: float


def pair_point(point: EquilibriumPoint, diaphragm: CouplingSystem) -> PairPoint:
    """Split an equilibrium of the pair into the plates' centre deflections."""
    n = diaphragm.K.shape[0]
    wd = float(np.asarray(diaphragm.center) @ point.u[:n])
    return PairPoint(point.voltage_v, wd, point.center_deflection_m - wd)


def pair_modes(pair: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
               point: EquilibriumPoint, n_diaphragm: int, n_modes: int = 4):
    """(frequencies_hz, diaphragm kinetic-energy share) of the lowest coupled small-signal
    modes about ``point``: (K − V²BᵀGB)φ = ω²Mφ, share = φ_dᵀM_dφ_d / φᵀMφ."""
    import scipy.sparse.linalg as spla

    from diagap.fem.coupling.branch import _start_vector

    s = solver_for(pair, load, gap_m)
    lam = point.voltage_v**2
    J = s.tangent(lam, point.u)
    M = sp.csc_matrix(pair.M)
    k = min(n_modes, J.shape[0] - 2)
    if J.shape[0] <= 10:
        from scipy.linalg import eigh

        vals, vecs = eigh(J.toarray(), M.toarray())
        vals, vecs = vals[:n_modes], vecs[:, :n_modes]
    else:  # shift-invert about 0 with the tangent factorised at the point (shared)
        lu = s.factor_t(lam, point.u)
        op = spla.LinearOperator(J.shape, matvec=lambda x: lu.solve(np.asarray(x, float)),
                                 dtype=float)
        vals, vecs = spla.eigsh(J, k=k, M=M, sigma=0.0, which="LM", OPinv=op,
                                v0=_start_vector(J.shape[0]))
    order = np.argsort(vals)
    vals, vecs = vals[order], vecs[:, order]
    n = n_diaphragm
    Md = M[:n, :n]
    share = np.array([float(v[:n] @ (Md @ v[:n])) / float(v @ (M @ v)) for v in vecs.T])
    return np.sqrt(np.maximum(vals, 0.0)) / (2 * np.pi), share


def pair_response(pair: CouplingSystem, load: ElectrostaticLoad, gap_m: float,
                  point: EquilibriumPoint, diaphragm_pressure_load: np.ndarray, n_diaphragm: int):
    """Small static response to 1 Pa on the diaphragm only, about ``point`` at constant voltage:
    (diaphragm centre m/Pa, backplate centre m/Pa, slope factor ∫π(δw_d + δw_b)/∫π δw_d)."""
    s = solver_for(pair, load, gap_m)
    f = np.concatenate([np.asarray(diaphragm_pressure_load, float),
                        np.zeros(pair.K.shape[0] - n_diaphragm)])
    x = s.solve_t(point.voltage_v**2, point.u, f)
    n = n_diaphragm
    cd = float(pair.center[:n] @ x[:n])
    cb = float(pair.center[n:] @ x[n:])
    Bd, Bb = s.B[:, :n], s.B[:, n:]
    pi_w = s.W * load.pressure_per_v2(s.local_gap(point.u))
    dd, db = Bd @ x[:n], Bb @ x[n:]
    return cd, cb, float(pi_w @ (dd + db)) / float(pi_w @ dd)


@dataclass(frozen=True)
class PairLevel:
    """Everything computed for the pair on one mesh (SI)."""

    branch: Branch
    pull_in: PairPoint
    bias: PairPoint | None
    bias_point: EquilibriumPoint | None
    frequencies_hz: np.ndarray | None
    diaphragm_share: np.ndarray | None
    compliance_m_per_pa: tuple | None  # (diaphragm centre, backplate centre, slope factor)


def solve_pair(diaphragm: CouplingSystem, backplate: CouplingSystem, load: ElectrostaticLoad,
               gap_m: float, bias_voltage_v: float, diaphragm_pressure_load: np.ndarray,
               n_modes: int = 4) -> PairLevel:
    """Pull-in, bias point, coupled modes and pressure response of the two plates."""
    pair = pair_system(diaphragm, backplate)
    n = diaphragm.K.shape[0]
    br = trace_branch(pair, load, gap_m)
    pi = min(br.points, key=lambda p: abs(p.center_deflection_m - br.pull_in_center_deflection_m))
    out = dict(branch=br, pull_in=pair_point(pi, diaphragm), bias=None, bias_point=None,
               frequencies_hz=None, diaphragm_share=None, compliance_m_per_pa=None)
    if bias_voltage_v < br.pull_in_voltage_v:
        pt = equilibrium_at_voltage(pair, load, gap_m, bias_voltage_v, br)
        f, share = pair_modes(pair, load, gap_m, pt, n, n_modes)
        out.update(bias=pair_point(pt, diaphragm), bias_point=pt, frequencies_hz=f,
                   diaphragm_share=share,
                   compliance_m_per_pa=pair_response(pair, load, gap_m, pt,
                                                     diaphragm_pressure_load, n))
    return PairLevel(**out)
