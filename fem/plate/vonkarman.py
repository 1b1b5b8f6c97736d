"""Large deflection of the diaphragm: the von Kármán plate with an anchored edge and residual stress.

Equations (SI). Deflection w (m, positive in the direction of the pressure p), in-plane
displacements u = (u_1, u_2) (m), membrane strain and stress resultants

    ε_ab = ½(u_a,b + u_b,a) + ½ w_,a w_,b,
    N_ab = σ0 h δ_ab + A[(1−ν) ε_ab + ν ε_cc δ_ab],   A = E h/(1−ν²)   (N/m),

equilibrium out of plane and in plane

    D∇⁴w − N_ab w_,ab = p,      N_ab,b = 0,          D = E h³/(12(1−ν²)).

For small w, N = σ0 h δ and the first equation is the linear plate D∇⁴w − T∇²w = p
(:mod:`diagap.fem.plate.system`).

Edge conditions. w as the linear solver (:mod:`diagap.fem.plate.bc`: clamped w = ∂w/∂n = 0, or
simply supported w = 0 with zero edge moment); the edge is anchored: u = 0 there (immovable).

Weak form: stationarity of the total potential energy

    Π(w, u) = ∫ ½D[(∇²w)² − 2(1−ν)(w_xx w_yy − w_xy²)] dA + ∫ ½T|∇w|² dA
              + ∫ ½ h ε:C:ε dA − ∫ p w dA,

C the plane-stress elasticity, T = σ0 h. (The prestress work σ0 h ∫ u_a,a dA vanishes for u = 0 on
the edge, and σ0 h ½|∇w|² is the tension term.) Its gradient is the residual and its Hessian the
tangent stiffness, assembled here exactly (Newton).

Scaling. Lengths by L (radius, or half-side of a square; mesh: unit disk or [−1, 1]²), x = Lξ;
W = w/h, U = u·L/h², P = p L⁴/(D h), τ = T L²/D. Then ε = (h/L)² e with
e = sym∇U + ½∇W⊗∇W (ξ derivatives), and Π = (D h²/L²) Π̂ with

    Π̂ = ½ a(W, W) + ½ τ ∫|∇W|² dξ + 6 ∫ [(1−ν) e:e + ν (tr e)²] dξ − ∫ P W dξ,

a the Kirchhoff bilinear form of the linear solver (its scaled matrices ``parts``). The scaled
membrane stress is n = 12[(1−ν)e + ν tr(e) I] (so N − σ0 h I = (D/L²) n). In Voigt form with the
engineering shear γ = 2e_12: n = C_s e, C_s = 12[[1, ν, 0], [ν, 1, 0], [0, 0, (1−ν)/2]].

Gradient (test functions V for W, Ψ for U):
    Ŵ: a(W, V) + τ(∇W, ∇V) + ∫ ∇V·(n ∇W) − ∫ P V;      Û: ∫ n : sym∇Ψ
Hessian:
    WW: a + τ K_T + ∫ ∇V·M ∇δW,  M = n + 6(1−ν)|∇W|² I + 6(1+ν) ∇W⊗∇W
    UW: ∫ sym∇Ψ : C_s sym(∇W⊗∇δW);     UU: ∫ sym∇Ψ : C_s sym∇δU  (constant)

Discretisation: W in the constrained Argyris space of the linear solver (same DOF vector, now in
units of h), U in P2 (Lagrange, vertex and edge-midpoint values, zero on the boundary), on the same
mesh and quadrature (order 8). The polygonal disk boundary carries the O(h_edge²) geometric error
of the linear solver. Pressures depending on w (the electrostatic load) enter as
P(ξ, W) at the quadrature points with their derivative in the tangent.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from skfem import CellBasis, ElementTriP2

__all__ = ["VonKarmanSystem", "build_von_karman", "NewtonError", "WLoad"]


class NewtonError(RuntimeError):
    """Newton's method did not converge (a load step too large, or past a limit point)."""


@dataclass(frozen=True)
class WLoad:
    """A deflection-dependent pressure on part of the plate (e.g. electrostatic attraction).

    ``pressure(w_m)`` → (p in Pa, dp/dw in Pa/m) at the quadrature points of ``elements`` (an
    index array of mesh elements); w_m has shape (len(elements), n_quadrature).
    """

    elements: np.ndarray
    pressure: object


def _gram(a: np.ndarray, b: np.ndarray, dx: np.ndarray) -> np.ndarray:
    """Σ_q a_i b_j dx → (nel, ni, nj); a (ni, nel, nq), b (nj, nel, nq), dx (nel, nq)."""
    return np.matmul(np.transpose(a * dx[None], (1, 0, 2)), np.transpose(b, (1, 2, 0)))


def _scatter(rows: np.ndarray, cols: np.ndarray, local: np.ndarray, shape) -> sp.csr_matrix:
    """Sum element blocks (nel, ni, nj) at global (rows (ni, nel), cols (nj, nel))."""
    r = np.broadcast_to(rows.T[:, :, None], local.shape).ravel()
    c = np.broadcast_to(cols.T[:, None, :], local.shape).ravel()
    return sp.coo_matrix((local.ravel(), (r, c)), shape=shape).tocsr()


class VonKarmanSystem:
    """The scaled von Kármán system on one mesh (see the module docstring).

    Unknowns x = [q̂, Û]: q̂ the constrained Argyris coefficients of W = w/h (those of
    :class:`~diagap.fem.plate.system.PlateSystem`, divided by h), Û the free P2 values of U_1 then
    U_2. ``pressure_scale_pa`` = D h/L⁴ converts P to pascals.
    """

    def __init__(self, plate, thickness_m: float, loads: tuple = ()):
        self.plate = plate
        self.h = float(thickness_m)
        self.L = plate.length_m
        self.nu = plate.poisson_ratio
        D = plate.bending_stiffness_nm
        self.pressure_scale_pa = D * self.h / self.L**4
        self.tau = plate.tension_n_per_m * self.L**2 / D
        P = plate.parts
        self.K_lin = (P["lap"] - (1 - self.nu) * P["gauss"] + self.tau * P["tension"]).tocsr()
        self.B = plate.B
        self.BT = plate.B.T.tocsr()
        basis = plate.basis
        self.adofs = np.asarray(basis.element_dofs)
        self.dx = np.asarray(basis.dx)
        _, g, _ = basis.elem.fields(basis.mapping, basis.X, basis.tind)
        self.ga = g  # (2, 21, nel, nq) Argyris gradients (ξ)
        self.value = np.asarray([np.asarray(basis.basis[i][0]) for i in range(21)])
        pb = CellBasis(plate.mesh, ElementTriP2(), quadrature=(basis.X, basis.W))
        self.gp = np.stack([np.stack([np.asarray(pb.basis[i][0].grad[a]) for i in range(6)])
                            for a in range(2)])  # (2, 6, nel, nq)
        npd = pb.N
        free = np.setdiff1d(np.arange(npd), pb.get_dofs().all())
        self.S = sp.csr_matrix((np.ones(free.size), (free, np.arange(free.size))),
                               shape=(npd, free.size))
        self.S2 = sp.block_diag([self.S, self.S]).tocsr()
        self.udofs = np.vstack([pb.element_dofs, pb.element_dofs + npd])  # (12, nel)
        self.n_u_full = 2 * npd
        self.nq_dofs = self.B.shape[1]
        self.n = self.nq_dofs + 2 * free.size
        self.unit_load = self.BT @ np.asarray(
            np.bincount(self.adofs.ravel(), weights=np.einsum("ieq,eq->ie", self.value,
                                                              self.dx).ravel(),
                        minlength=self.B.shape[0]))
        self.center = plate.point_functional(0.0, 0.0)
        self.loads = tuple(loads)
        self.H_uu = self._uu_matrix()

    # -- fields at the quadrature points ---------------------------------------------------
    def split(self, x: np.ndarray):
        return x[:self.nq_dofs], x[self.nq_dofs:]

    def _fields(self, x: np.ndarray):
        q, U = self.split(x)
        we = (self.B @ q)[self.adofs]  # (21, nel)
        s = np.einsum("aieq,ie->aeq", self.ga, we, optimize=True)
        Ue = (self.S2 @ U)[self.udofs]  # (12, nel)
        gu1 = np.einsum("aieq,ie->aeq", self.gp, Ue[:6], optimize=True)
        gu2 = np.einsum("aieq,ie->aeq", self.gp, Ue[6:], optimize=True)
        e11 = gu1[0] + 0.5 * s[0] ** 2
        e22 = gu2[1] + 0.5 * s[1] ** 2
        gam = gu1[1] + gu2[0] + s[0] * s[1]
        nu = self.nu
        n = (12 * (e11 + nu * e22), 12 * (e22 + nu * e11), 6 * (1 - nu) * gam)
        return s, n, (e11, e22, gam)

    def deflection_qp_m(self, x: np.ndarray) -> np.ndarray:
        """w (m) at the quadrature points, shape (nel, nq)."""
        we = (self.B @ self.split(x)[0])[self.adofs]
        return self.h * np.einsum("ieq,ie->eq", self.value, we, optimize=True)

    def center_deflection_m(self, x: np.ndarray) -> float:
        return self.h * float(self.center @ self.split(x)[0])

    # -- energy, gradient, Hessian -----------------------------------------------------------
    def _uu_matrix(self) -> sp.csr_matrix:
        gx, gy = self.gp
        c = 6 * (1 - self.nu)
        k11 = 12 * _gram(gx, gx, self.dx) + c * _gram(gy, gy, self.dx)
        k22 = 12 * _gram(gy, gy, self.dx) + c * _gram(gx, gx, self.dx)
        k12 = 12 * self.nu * _gram(gx, gy, self.dx) + c * _gram(gy, gx, self.dx)
        ke = np.block([[k11, k12], [np.transpose(k12, (0, 2, 1)), k22]])
        K = _scatter(self.udofs, self.udofs, ke, (self.n_u_full,) * 2)
        return (self.S2.T @ K @ self.S2).tocsr()

    def _external(self, x: np.ndarray, with_tangent: bool):
        """Scaled load vector (and tangent −∂F/∂q̂) of the deflection-dependent pressures."""
        F = np.zeros(self.nq_dofs)
        T = None
        if not self.loads:
            return F, T
        w = self.deflection_qp_m(x)
        for ld in self.loads:
            el = ld.elements
            p, dp = ld.pressure(w[el])
            phi, dx = self.value[:, el], self.dx[el]
            fe = np.einsum("ieq,eq->ie", phi, p * dx) / self.pressure_scale_pa
            F += self.BT @ np.bincount(self.adofs[:, el].ravel(), weights=fe.ravel(),
                                       minlength=self.B.shape[0])
            if with_tangent:
                ke = _gram(phi * (dp * self.h / self.pressure_scale_pa)[None], phi, dx)
                Kt = _scatter(self.adofs[:, el], self.adofs[:, el], ke, (self.B.shape[0],) * 2)
                Kt = -(self.BT @ Kt @ self.B)
                T = Kt if T is None else T + Kt
        return F, T

    def energy_parts(self, x: np.ndarray) -> dict:
        """Scaled bending + tension and membrane energies (for checks)."""
        q, _ = self.split(x)
        _, _, (e11, e22, gam) = self._fields(x)
        nu = self.nu
        dens = 6 * ((e11**2 + e22**2 + 2 * nu * e11 * e22) + 0.5 * (1 - nu) * gam**2)
        return {"plate": 0.5 * float(q @ (self.K_lin @ q)), "membrane": float(np.sum(dens * self.dx))}

    def residual(self, x: np.ndarray, P: float) -> np.ndarray:
        """∇Π̂(x) − P·f̂ − F̂(x)."""
        return self._residual_tangent(x, P, False)[0]

    def _residual_tangent(self, x, P, with_tangent: bool = True):
        q, U = self.split(x)
        s, n, _ = self._fields(x)
        ns = np.stack([n[0] * s[0] + n[2] * s[1], n[2] * s[0] + n[1] * s[1]])
        ga, gp, dx = self.ga, self.gp, self.dx
        rw = np.einsum("aieq,aeq->ie", ga, ns * dx[None], optimize=True)
        r1 = np.einsum("ieq,eq->ie", gp[0], n[0] * dx) + np.einsum("ieq,eq->ie", gp[1], n[2] * dx)
        r2 = np.einsum("ieq,eq->ie", gp[1], n[1] * dx) + np.einsum("ieq,eq->ie", gp[0], n[2] * dx)
        Nw = self.B.shape[0]
        gw = self.BT @ np.bincount(self.adofs.ravel(), weights=rw.ravel(), minlength=Nw)
        gu = self.S2.T @ np.bincount(self.udofs.ravel(), weights=np.vstack([r1, r2]).ravel(),
                                     minlength=self.n_u_full)
        F, Tload = self._external(x, with_tangent)
        res = np.concatenate([self.K_lin @ q + gw - P * self.unit_load - F, gu])
        if not with_tangent:
            return res, None
        nu = self.nu
        ss = s[0] ** 2 + s[1] ** 2
        M = [[n[0] + 6 * (1 - nu) * ss + 6 * (1 + nu) * s[0] ** 2, n[2] + 6 * (1 + nu) * s[0] * s[1]],
             [None, n[1] + 6 * (1 - nu) * ss + 6 * (1 + nu) * s[1] ** 2]]
        M[1][0] = M[0][1]
        kww = sum(_gram(ga[a] * M[a][b][None], ga[b], dx) for a in range(2) for b in range(2))
        c = 6 * (1 - nu)
        Q1 = [[12 * s[0], 12 * nu * s[1]], [c * s[1], c * s[0]]]
        Q2 = [[c * s[1], c * s[0]], [12 * nu * s[0], 12 * s[1]]]
        k1 = sum(_gram(gp[a] * Q1[a][b][None], ga[b], dx) for a in range(2) for b in range(2))
        k2 = sum(_gram(gp[a] * Q2[a][b][None], ga[b], dx) for a in range(2) for b in range(2))
        Hww = self.BT @ _scatter(self.adofs, self.adofs, kww, (Nw, Nw)) @ self.B + self.K_lin
        if Tload is not None:
            Hww = Hww + Tload
        Huw = self.S2.T @ _scatter(self.udofs, self.adofs, np.concatenate([k1, k2], axis=1),
                                   (self.n_u_full, Nw)) @ self.B
        H = sp.bmat([[Hww, Huw.T], [Huw, self.H_uu]], format="csc")
        return res, H

    # -- Newton ------------------------------------------------------------------------------
    # The tangent is factorised at the start of a solve and reused (chord iterations) while the
    # iteration contracts by at least CONTRACTION per step; otherwise it is refactorised at the
    # current iterate (full Newton). The factorisation is kept for the next load step.
    CONTRACTION = 0.25

    @staticmethod
    def factor(H):
        try:
            return spla.splu(H, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                             options={"SymmetricMode": True})
        except RuntimeError:
            return spla.splu(H)

    def _refactor(self, x, P):
        _, H = self._residual_tangent(x, P)
        try:
            self._lu = self.factor(H)
        except RuntimeError as exc:  # exactly singular tangent
            self._lu = None
            raise NewtonError(f"singular tangent at scaled pressure {P:.6g}") from exc
        self._lu_f = None
        return self._lu

    def _size(self, x: np.ndarray) -> float:
        return float(np.max(np.abs(self.split(x)[0])))

    def _step(self, x, P, step_fn, state):
        """One chord/Newton step; step_fn(lu) → increment. Refactors on slow contraction."""
        if getattr(self, "_lu", None) is None or state["fresh_needed"]:
            self._refactor(x, P)
            state["fresh"] = True
        dx = step_fn(self._lu)
        nd = self._size(dx)
        prev = state.get("prev")
        if not state["fresh"] and prev is not None and not nd <= self.CONTRACTION * prev:
            self._refactor(x, P)
            dx = step_fn(self._lu)
            nd = self._size(dx)
        state["fresh"] = False
        state["fresh_needed"] = False
        state["prev"] = nd
        return dx, nd

    def solve_pressure(self, P: float, x0: np.ndarray, tol: float = 1e-9, maxit: int = 40):
        """Equilibrium at the scaled uniform pressure P from the start x0; returns (x, lu).
        The stored tangent is reused only if x0 is the last converged state (a load ramp: the
        first step is then the tangent predictor); otherwise it is factorised afresh at x0."""
        x = x0.copy()
        state = {"fresh_needed": x0 is not getattr(self, "_last_x", None), "fresh": False}
        for _ in range(maxit):
            r = self.residual(x, P)
            if not np.all(np.isfinite(r)):
                break
            dx, nd = self._step(x, P, lambda lu: -lu.solve(r), state)
            if not np.isfinite(nd):
                break
            x += dx
            if nd <= tol * max(self._size(x), 1e-12):
                self._last_x = x
                return x, self._lu
        self._lu = None
        raise NewtonError(f"no convergence at scaled pressure {P:.6g}")

    def _f_solve(self, lu, f):
        if getattr(self, "_lu_f", None) is None:
            self._lu_f = lu.solve(f)
        return self._lu_f

    def solve_deflection(self, W0: float, x0: np.ndarray, P0: float, tol: float = 1e-9,
                         maxit: int = 40):
        """Equilibrium with the centre deflection prescribed (W0 = w0/h), the uniform pressure
        an unknown (bordered Newton; passes limit points of P(W0)). Returns (x, P, lu)."""
        x, P = x0.copy(), float(P0)
        f = np.concatenate([self.unit_load, np.zeros(self.n - self.nq_dofs)])
        c = np.concatenate([self.center, np.zeros(self.n - self.nq_dofs)])
        state = {"fresh_needed": x0 is not getattr(self, "_last_x", None), "fresh": False}
        out = {}

        def step(lu):
            a, b = lu.solve(-r), self._f_solve(lu, f)
            dP = (W0 - c @ x - c @ a) / (c @ b)
            out["dP"] = dP
            return a + dP * b

        for _ in range(maxit):
            r = self.residual(x, P)
            if not np.all(np.isfinite(r)):
                break
            dx, nd = self._step(x, P, step, state)
            if not np.isfinite(nd):
                break
            x += dx
            P += out["dP"]
            if nd <= tol * max(self._size(x), 1e-12) and \
                    abs(out["dP"]) <= tol * max(abs(P), 1e-12):
                self._last_x = x
                return x, P, self._lu
        self._lu = None
        raise NewtonError(f"no convergence at scaled centre deflection {W0:.6g}")

    def zero(self) -> np.ndarray:
        return np.zeros(self.n)


def build_von_karman(plate, thickness_m: float, loads: tuple = ()) -> VonKarmanSystem:
    """The von Kármán system on an assembled :class:`~diagap.fem.plate.system.PlateSystem`."""
    return VonKarmanSystem(plate, thickness_m, loads)
