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
P(ξ, W) at the quadrature points with their derivative in the tangent. The equilibria are solved
by Newton's method with a reused tangent (:mod:`diagap.fem.plate.newton`).

Evaluation: the basis gradients at the quadrature points are stored per element as matrices
G_e (2 n_q × n_basis, rows (direction, point)), so that fields, residuals and element tangents are
batched matrix products (∇W = G_e w_e, r_e = G_eᵀ(n∇W dx), k_e = G_eᵀ M G_e).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import CellBasis, ElementTriP2

from diagap.fem.plate.gather import Gather
from diagap.fem.plate.newton import ChordNewton, NewtonError

__all__ = ["VonKarmanSystem", "build_von_karman", "NewtonError", "WLoad"]




@dataclass(frozen=True)
class WLoad:
    """A deflection-dependent pressure on part of the plate (e.g. electrostatic attraction).

    ``pressure(w_m)`` → (p in Pa, dp/dw in Pa/m) at the quadrature points of ``elements`` (an
    index array of mesh elements); w_m has shape (len(elements), n_quadrature).
    """

    elements: np.ndarray
    pressure: object


def _scatter(rows: np.ndarray, cols: np.ndarray, local: np.ndarray, shape) -> sp.csr_matrix:
    """Sum element blocks (nel, ni, nj) at global (rows (ni, nel), cols (nj, nel))."""
    r = np.broadcast_to(rows.T[:, :, None], local.shape).ravel()
    c = np.broadcast_to(cols.T[:, None, :], local.shape).ravel()
    return sp.coo_matrix((local.ravel(), (r, c)), shape=shape).tocsr()


def _per_element(g: np.ndarray) -> np.ndarray:
    """(2, nb, nel, nq) gradients → (nel, 2 nq, nb) element matrices, rows (direction, point)."""
    nel, nq = g.shape[2:]
    return np.ascontiguousarray(np.transpose(g, (2, 0, 3, 1))).reshape(nel, 2 * nq, g.shape[1])


def _apply(G: np.ndarray, ve: np.ndarray) -> np.ndarray:
    """G_e v_e for element values ve (nb, nel) → (2, nel, nq) gradient components."""
    nel = G.shape[0]
    out = np.matmul(G, ve.T[:, :, None])[:, :, 0].reshape(nel, 2, -1)
    return np.transpose(out, (1, 0, 2))


def _apply_t(G: np.ndarray, v: np.ndarray) -> np.ndarray:
    """Σ_(a,q) G_e[(a,q), i] v[a, e, q] for v (2, nel, nq) → (nel, nb)."""
    nel = G.shape[0]
    return np.matmul(np.transpose(v, (1, 0, 2)).reshape(nel, 1, -1), G)[:, 0, :]


def _weighted(G: np.ndarray, M, nq: int) -> np.ndarray:
    """(M G_e) with M a 2×2 array of (nel, nq) weights per point: (nel, 2 nq, nb)."""
    nel, _, nb = G.shape
    G4 = G.reshape(nel, 2, nq, nb)
    out = np.empty_like(G4)
    for a in range(2):
        out[:, a] = M[a][0][:, :, None] * G4[:, 0] + M[a][1][:, :, None] * G4[:, 1]
    return out.reshape(nel, 2 * nq, nb)


class VonKarmanSystem(ChordNewton):
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
        self._adofs_e = np.ascontiguousarray(self.adofs.T).ravel()  # element-major
        self.dx = np.asarray(basis.dx)
        self.nq = self.dx.shape[1]
        _, g, _ = basis.elem.fields(basis.mapping, basis.X, basis.tind)
        self.GA = _per_element(np.asarray(g))  # (nel, 2 nq, 21) Argyris gradients (ξ)
        value = np.asarray([np.asarray(basis.basis[i][0]) for i in range(21)])  # (21, nel, nq)
        self.VAL = np.ascontiguousarray(np.transpose(value, (1, 2, 0)))  # (nel, nq, 21)
        pb = CellBasis(plate.mesh, ElementTriP2(), quadrature=(basis.X, basis.W))
        gp = np.stack([np.stack([np.asarray(pb.basis[i][0].grad[a]) for i in range(6)])
                       for a in range(2)])  # (2, 6, nel, nq)
        self.GP = _per_element(gp)  # (nel, 2 nq, 6)
        npd = pb.N
        free = np.setdiff1d(np.arange(npd), pb.get_dofs().all())
        self.S = sp.csr_matrix((np.ones(free.size), (free, np.arange(free.size))),
                               shape=(npd, free.size))
        self.S2 = sp.block_diag([self.S, self.S]).tocsr()
        self.udofs = np.vstack([pb.element_dofs, pb.element_dofs + npd])  # (12, nel)
        self._udofs_e = np.ascontiguousarray(
            np.hstack([pb.element_dofs.T, pb.element_dofs.T + npd])).ravel()
        self.n_u_full = 2 * npd
        self.nq_dofs = self.B.shape[1]
        self.n = self.nq_dofs + 2 * free.size
        self.unit_load = self.BT @ np.bincount(
            self._adofs_e, weights=np.einsum("eqi,eq->ei", self.VAL, self.dx).ravel(),
            minlength=self.B.shape[0])
        self.center = plate.point_functional(0.0, 0.0)
        self.loads = tuple(loads)
        self._load_val = [self.VAL[ld.elements] for ld in self.loads]
        self.H_uu = self._uu_matrix()

    # -- fields at the quadrature points ---------------------------------------------------
    def split(self, x: np.ndarray):
        return x[:self.nq_dofs], x[self.nq_dofs:]

    def _fields(self, x: np.ndarray):
        q, U = self.split(x)
        s = _apply(self.GA, (self.B @ q)[self.adofs])  # ∇W, (2, nel, nq)
        Ue = (self.S2 @ U)[self.udofs]  # (12, nel)
        gu1, gu2 = _apply(self.GP, Ue[:6]), _apply(self.GP, Ue[6:])
        e11 = gu1[0] + 0.5 * s[0] ** 2
        e22 = gu2[1] + 0.5 * s[1] ** 2
        gam = gu1[1] + gu2[0] + s[0] * s[1]
        nu = self.nu
        n = (12 * (e11 + nu * e22), 12 * (e22 + nu * e11), 6 * (1 - nu) * gam)
        return s, n, (e11, e22, gam)

    def deflection_qp_m(self, x: np.ndarray) -> np.ndarray:
        """w (m) at the quadrature points, shape (nel, nq)."""
        we = (self.B @ self.split(x)[0])[self.adofs]
        return self.h * np.matmul(self.VAL, we.T[:, :, None])[:, :, 0]

    def center_deflection_m(self, x: np.ndarray) -> float:
        return self.h * float(self.center @ self.split(x)[0])

    # -- energy, gradient, Hessian -----------------------------------------------------------
    def _uu_matrix(self) -> sp.csr_matrix:
        c = 6 * (1 - self.nu)
        nq, dx, GP = self.nq, self.dx, self.GP
        zero = np.zeros_like(dx)

        def block(M):
            return np.matmul(np.transpose(GP, (0, 2, 1)), _weighted(GP, M, nq))

        # sym∇Ψ : C_s sym∇δU per component pair (a: component of Ψ, b: of δU)
        k11 = block([[12 * dx, zero], [zero, c * dx]])
        k22 = block([[c * dx, zero], [zero, 12 * dx]])
        k12 = block([[zero, 12 * self.nu * dx], [c * dx, zero]])
        ke = np.block([[k11, k12], [np.transpose(k12, (0, 2, 1)), k22]])
        K = _scatter(self.udofs, self.udofs, ke, (self.n_u_full,) * 2)
        return (self.S2.T @ K @ self.S2).tocsr()

    def _gather(self) -> Gather:
        """The fixed map from element tangent blocks to the reduced tangent (built on first use)."""
        if getattr(self, "_gather_map", None) is None:
            Nw = self.B.shape[0]
            a, u = self.adofs.T, self.udofs.T + Nw
            blocks = [(a, a), (u, a), (a, u)] + [(self.adofs[:, ld.elements].T,) * 2
                                                 for ld in self.loads]
            P = sp.block_diag([self.B, self.S2], format="csr")
            self._gather_map = Gather(P, blocks, sp.block_diag([self.K_lin, self.H_uu]))
        return self._gather_map

    def _external(self, x: np.ndarray, with_tangent: bool):
        """Scaled load vector and the element blocks of its tangent −∂F/∂q̂ (unconstrained
        Argyris indices) for the deflection-dependent pressures."""
        F = np.zeros(self.nq_dofs)
        T = []
        if not self.loads:
            return F, T
        w = self.deflection_qp_m(x)
        for ld, phi in zip(self.loads, self._load_val):
            el = ld.elements
            p, dp = ld.pressure(w[el])
            dx = self.dx[el]
            fe = np.matmul((p * dx / self.pressure_scale_pa)[:, None, :], phi)[:, 0, :]
            F += self.BT @ np.bincount(np.ascontiguousarray(self.adofs[:, el].T).ravel(),
                                       weights=fe.ravel(), minlength=self.B.shape[0])
            if with_tangent:
                wt = dp * self.h / self.pressure_scale_pa * dx
                T.append(-np.matmul(np.transpose(phi, (0, 2, 1)), wt[:, :, None] * phi))
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
        dx = self.dx
        ns = np.stack([(n[0] * s[0] + n[2] * s[1]) * dx, (n[2] * s[0] + n[1] * s[1]) * dx])
        rw = _apply_t(self.GA, ns)  # (nel, 21)
        r1 = _apply_t(self.GP, np.stack([n[0] * dx, n[2] * dx]))
        r2 = _apply_t(self.GP, np.stack([n[2] * dx, n[1] * dx]))
        Nw = self.B.shape[0]
        gw = self.BT @ np.bincount(self._adofs_e, weights=rw.ravel(), minlength=Nw)
        gu = self.S2.T @ np.bincount(self._udofs_e, weights=np.hstack([r1, r2]).ravel(),
                                     minlength=self.n_u_full)
        F, Tload = self._external(x, with_tangent)
        res = np.concatenate([self.K_lin @ q + gw - P * self.unit_load - F, gu])
        if not with_tangent:
            return res, None
        nu, nq, GA, GP = self.nu, self.nq, self.GA, self.GP
        ss = s[0] ** 2 + s[1] ** 2
        m01 = (n[2] + 6 * (1 + nu) * s[0] * s[1]) * dx
        M = [[(n[0] + 6 * (1 - nu) * ss + 6 * (1 + nu) * s[0] ** 2) * dx, m01],
             [m01, (n[1] + 6 * (1 - nu) * ss + 6 * (1 + nu) * s[1] ** 2) * dx]]
        kww = np.matmul(np.transpose(GA, (0, 2, 1)), _weighted(GA, M, nq))
        c = 6 * (1 - nu)
        Q1 = [[12 * s[0] * dx, 12 * nu * s[1] * dx], [c * s[1] * dx, c * s[0] * dx]]
        Q2 = [[c * s[1] * dx, c * s[0] * dx], [12 * nu * s[0] * dx, 12 * s[1] * dx]]
        GPt = np.transpose(GP, (0, 2, 1))
        k1 = np.matmul(GPt, _weighted(GA, Q1, nq))
        k2 = np.matmul(GPt, _weighted(GA, Q2, nq))
        kuw = np.concatenate([k1, k2], axis=1)
        # H is symmetric: the CSR arrays of the assembled pattern serve as its CSC storage
        H = self._gather().matrix([kww, kuw, np.transpose(kuw, (0, 2, 1)), *Tload], "csc")
        return res, H


def build_von_karman(plate, thickness_m: float, loads: tuple = ()) -> VonKarmanSystem:
    """The von Kármán system on an assembled :class:`~diagap.fem.plate.system.PlateSystem`."""
    return VonKarmanSystem(plate, thickness_m, loads)
