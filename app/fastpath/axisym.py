r"""The clamped disk under an axisymmetric electrostatic load: a 1-D Hermite FE in the radius.

Equation (SI). Kirchhoff plate with in-plane tension on the disk r < a,

.. math:: D\nabla^4 w - T\nabla^2 w = p(r), \qquad
          \nabla^2 w = w'' + w'/r,

D = Eh³/(12(1−ν²)) (N·m), T = σ0 h (N/m), deflection w (m, positive towards the backplate),
pressure p (Pa); clamped edge w(a) = w'(a) = 0, regular centre w'(0) = 0. The electrostatic
pressure of a rigid backplate at bias V acts on the electrode r < R_e only,
p_e = ½V² π(g − w), π(ĝ) = −dc/dĝ (F/m³) of the capacitance density c(ĝ) of the gap
(π = ε0/ĝ² for solid parallel plates); no rim force. Small motions about an equilibrium w_b
obey the tangent operator D∇⁴ − T∇² − ½V²|π'(g − w_b)|χ_e and the mass ρ_s = ρh (kg/m², the
plate's mass alone, as the FE's M).

Scaling. ρ = r/a, ŵ = w/g, s = ĝ/g, τ = T a²/D, π̂(s) = π(g s) g²/ε0 (1/s² for parallel
plates) and

.. math:: \hat\nabla^4\hat w - \tau\hat\nabla^2\hat w = \beta\,\hat\pi(1-\hat w)\,\chi_{\rho<\rho_e},
          \qquad \beta = \frac{\varepsilon_0 V^2 a^4}{2 D g^3},

so the branch depends on τ, ρ_e = R_e/a and π̂ alone. A uniform pressure p gives
ŵ = (p a⁴/(D g)) × the solution with right-hand side 1; a mode of scaled eigenvalue μ has
ω² = μ D/(ρ_s a⁴).

Weak form (the 2π of the axisymmetric measure dropped on both sides): find ŵ with
ŵ(1) = ŵ'(1) = 0, ŵ'(0) = 0 such that for every such v

.. math:: \int_0^1 [\hat\nabla^2\hat w\,\hat\nabla^2 v + \tau\,\hat w' v']\rho\,d\rho
          = \beta\int_0^{\rho_e}\hat\pi(1-\hat w)\,v\,\rho\,d\rho .

The Kirchhoff energy's Gauss-curvature term (1−ν)∫2ŵ''ŵ'/ρ·ρdρ = (1−ν)[ŵ'²]₀¹ vanishes for the
clamped edge, so ν does not enter. Discretisation: C¹ cubic Hermite elements (nodal ŵ, ŵ'),
8-point Gauss quadrature per element, a node at ρ_e (the load is discontinuous there) and
elements graded towards the edge and ρ_e on the bending length ℓ = 1/√τ (the boundary layers of
a tensioned plate). Matrices: K = K_Δ + τK_T, M = ∫N_iN_jρdρ, F_p = ∫N_iρdρ, the load
F(ŵ) = ∫_e π̂(1 − ŵ)N_iρdρ and its Jacobian G = ∫_e −π̂'(1 − ŵ)N_iN_jρdρ (π̂' < 0).

Branch (as :mod:`diagap.fem.coupling.branch`): the centre deflection ŵ0 = u₀ is prescribed and β
is an unknown (Newton with a fresh tangent J = K − βG at every iterate on the bordered system),
steps of ``STEP`` in ŵ0 with the tangent predictor; dβ/dŵ0 = 1/(J⁻¹F)₀ and pull-in is its zero
(Brent's method, to 1e-13). The bias point is the stable equilibrium at β_b (Newton in u from
the branch, else Brent on β(ŵ0) − β_b). Mode 1 at bias: the smallest eigenvalue of
(K − β_bG)x = μMx; centre compliance (J⁻¹F_p)₀ (scaled: ×a⁴/D in m/Pa).

Error estimate: every quantity on the graded mesh and on its uniform bisection; the finer value
is reported, with |fine − coarse|/15 (fourth order, measured in tests/test_fastpath_coupled.py)
as its relative discretisation error.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import eigh, solve

__all__ = ["disk_nodes", "DiskSystem", "DiskBranch", "solve_branch"]

#: Gauss points per element
QUAD = 8
#: base element size (radii), element size at a layer point (bending lengths) and growth
BASE_H, LAYER_H, GROWTH = 1.0 / 12.0, 1.0 / 3.0, 0.5
#: step of the centre deflection along the branch and its end (gaps)
STEP, MAX_W0 = 0.08, 0.72
#: tolerance of the fold's centre deflection (gaps): β is flat there, so β_PI is exact to
#: round-off and ŵ0 to about this
FOLD_XTOL = 1e-9


def disk_nodes(rho_e: float, tau: float, refine: int = 0) -> np.ndarray:
    """Nodes in ρ ∈ [0, 1]: a node at ρ_e; element size min(BASE_H, ℓ·LAYER_H + GROWTH·d), d the
    distance to the edge or to ρ_e, ℓ = 1/√max(τ, 1); each element then bisected ``refine``
    times."""
    ell = 1.0 / math.sqrt(max(tau, 1.0))
    layers = [1.0] + ([rho_e] if rho_e < 1.0 - 1e-12 else [])
    pieces = [(0.0, rho_e), (rho_e, 1.0)] if rho_e < 1.0 - 1e-12 else [(0.0, 1.0)]
    out = [0.0]
    for lo, hi in pieces:
        x = np.linspace(lo, hi, 2001)
        d = np.min(np.abs(x[:, None] - np.array(layers)[None, :]), axis=1)
        size = np.minimum(BASE_H, ell * LAYER_H + GROWTH * d)
        s = np.concatenate([[0.0], np.cumsum(0.5 * (1 / size[1:] + 1 / size[:-1]) * np.diff(x))])
        n = max(2, int(math.ceil(s[-1])))
        out.extend(np.interp(np.linspace(0, s[-1], n + 1)[1:], s, x))
    nodes = np.array(out)
    for _ in range(refine):
        nodes = np.sort(np.concatenate([nodes, 0.5 * (nodes[1:] + nodes[:-1])]))
    return nodes


def _hermite(t: np.ndarray, h):
    """Cubic Hermite shape functions on elements of lengths h (shape (ne, 1, 1)) at t ∈ [0, 1]
    and their first two ρ derivatives: arrays (ne, 4, nq) for the DOFs (w_a, w'_a, w_b, w'_b)."""
    t2, t3 = t * t, t * t * t
    one = np.ones_like(h)
    N = np.stack(np.broadcast_arrays(one * (1 - 3 * t2 + 2 * t3), h * (t - 2 * t2 + t3),
                                     one * (3 * t2 - 2 * t3), h * (t3 - t2)), axis=-2)[:, 0]
    dN = np.stack(np.broadcast_arrays(one * (6 * t2 - 6 * t), h * (1 - 4 * t + 3 * t2),
                                      one * (6 * t - 6 * t2), h * (3 * t2 - 2 * t)),
                  axis=-2)[:, 0] / h
    ddN = np.stack(np.broadcast_arrays(one * (12 * t - 6), h * (6 * t - 4), one * (6 - 12 * t),
                                       h * (6 * t - 2)), axis=-2)[:, 0] / h**2
    return N, dN, ddN


@dataclass(frozen=True)
class DiskSystem:
    """Scaled matrices of the clamped disk on ``nodes`` (free DOFs: ŵ at every node but the edge,
    ŵ' at every inner node; DOF 0 is the centre deflection)."""

    nodes: np.ndarray
    tau: float
    rho_e: float
    K: np.ndarray
    M: np.ndarray
    Fp: np.ndarray
    B: np.ndarray = field(repr=False)   # (nq, n): ŵ at the electrode quadrature points
    W: np.ndarray = field(repr=False)   # (nq,): weights ρ dρ

    @staticmethod
    def build(nodes: np.ndarray, tau: float, rho_e: float) -> "DiskSystem":
        nn = len(nodes)
        # global DOFs of the nodes' (ŵ, ŵ'), −1 where constrained (ŵ'(0), ŵ(1), ŵ'(1));
        # ŵ of node i is DOF 2i − 1 (i ≥ 1), ŵ' DOF 2i; ŵ(0) is DOF 0
        gw = np.append(np.maximum(2 * np.arange(nn - 1) - 1, 0), -1)
        gd = np.append(np.r_[-1, 2 * np.arange(1, nn - 1)], -1)
        n = 2 * nn - 3
        xg, wg = np.polynomial.legendre.leggauss(QUAD)
        t = 0.5 * (xg + 1.0)
        a, h = nodes[:-1, None], np.diff(nodes)[:, None, None]  # (ne, 1), (ne, 1, 1)
        r = a + np.diff(nodes)[:, None] * t                     # (ne, q)
        w = 0.5 * np.diff(nodes)[:, None] * wg * r
        N, dN, ddN = _hermite(t, h)                             # (ne, 4, q) each
        lap = ddN + dN / r[:, None, :]
        wq = w[:, None, :]
        ke = np.einsum("eiq,ejq->eij", lap * wq, lap) + tau * np.einsum("eiq,ejq->eij", dN * wq, dN)
        me = np.einsum("eiq,ejq->eij", N * wq, N)
        fe = (N * wq).sum(axis=2)
        dofs = np.column_stack([gw[:-1], gd[:-1], gw[1:], gd[1:]])  # (ne, 4)
        keep = dofs >= 0
        ext = np.where(keep, dofs, n)  # constrained DOFs go to a dropped extra row
        I, J = np.broadcast_arrays(ext[:, :, None], ext[:, None, :])
        K = np.zeros((n + 1, n + 1))
        M = np.zeros((n + 1, n + 1))
        Fp = np.zeros(n + 1)
        np.add.at(K, (I, J), ke)
        np.add.at(M, (I, J), me)
        np.add.at(Fp, ext, fe)
        loaded = np.nonzero(nodes[1:] <= rho_e * (1 + 1e-12))[0]
        B = np.zeros((loaded.size, QUAD, n + 1))
        for k in range(4):
            B[np.arange(loaded.size)[:, None], np.arange(QUAD)[None, :],
              ext[loaded, k][:, None]] = N[loaded, k, :]
        return DiskSystem(nodes, tau, rho_e, K[:n, :n].copy(), M[:n, :n].copy(), Fp[:n].copy(),
                          np.ascontiguousarray(B.reshape(-1, n + 1)[:, :n]), w[loaded].ravel())


    def prolong(self, u: np.ndarray, nodes: np.ndarray) -> np.ndarray:
        """The DOFs on this system's nodes of the Hermite function ``u`` on ``nodes`` (exact
        when this mesh refines ``nodes``)."""
        full = np.zeros(2 * len(nodes))  # (ŵ, ŵ') per node, constrained ones 0
        idx = np.r_[0, np.arange(2, 2 * len(nodes) - 2)]
        full[idx] = u
        e = np.clip(np.searchsorted(nodes, self.nodes, side="right") - 1, 0, len(nodes) - 2)
        h = nodes[e + 1] - nodes[e]
        t = (self.nodes - nodes[e]) / h
        t2, t3 = t * t, t * t * t
        wa, da, wb, db = full[2 * e], full[2 * e + 1], full[2 * e + 2], full[2 * e + 3]
        w = (wa * (1 - 3 * t2 + 2 * t3) + da * h * (t - 2 * t2 + t3) + wb * (3 * t2 - 2 * t3)
             + db * h * (t3 - t2))
        dw = (wa * (6 * t2 - 6 * t) / h + da * (1 - 4 * t + 3 * t2) + wb * (6 * t - 6 * t2) / h
              + db * (3 * t2 - 2 * t))
        out = np.empty(2 * len(self.nodes))
        out[0::2], out[1::2] = w, dw
        return out[np.r_[0, np.arange(2, 2 * len(self.nodes) - 2)]]


class _NoConvergence(RuntimeError):
    """No equilibrium found (Newton, the fold search, or a local gap outside the load's range)."""


@dataclass(frozen=True)
class DiskBranch:
    """Scaled results: β and ŵ0 at pull-in, and at the bias β_b (None when collapsed) ŵ0, mode-1
    eigenvalue μ (ω² = μD/(ρ_s a⁴)) and centre compliance ĉ = (J⁻¹F_p)₀ (×a⁴/D: m/Pa); μ0, ĉ0
    without bias."""

    beta_pi: float
    w_pi: float
    mu0: float
    c0: float
    w_b: float | None = None
    mu_b: float | None = None
    c_b: float | None = None
    nodes: np.ndarray | None = field(default=None, repr=False)
    u_pi: np.ndarray | None = field(default=None, repr=False)
    u_b: np.ndarray | None = field(default=None, repr=False)


#: Newton stops at a relative increment below TOL, or below ROUNDOFF once the increments stop
#: falling quadratically (the round-off floor of the stiff fourth-order matrices, ~1e-16·cond)
TOL, ROUNDOFF = 1e-12, 1e-8


def _converged(size: float, prev: float) -> bool:
    return size <= TOL or (size <= ROUNDOFF and size > 1e-3 * prev)


class _Solver:
    def __init__(self, sys: DiskSystem, pi_hat, dpi_hat):
        self.s, self.pi, self.dpi = sys, pi_hat, dpi_hat
        self.BT = np.ascontiguousarray(sys.B.T)
        self.n = sys.K.shape[0]

    def force(self, u):
        gap = 1.0 - self.s.B @ u
        if np.any(gap <= 0.0):
            raise _NoConvergence("the diaphragm touches the backplate")
        try:
            return self.BT @ (self.s.W * self.pi(gap))
        except ValueError as exc:  # a local gap outside the c(ĝ) fit's range
            raise _NoConvergence(str(exc)) from exc

    def tangent(self, beta, u):
        gap = 1.0 - self.s.B @ u
        return self.s.K - (self.BT * (beta * self.s.W * -self.dpi(gap))) @ self.s.B

    def at_w0(self, w0, u, beta):
        """(u, β, J) with u₀ = w0 on the branch, Newton from (u, β)."""
        u = u.copy()
        u[0] = w0
        prev = math.inf
        for _ in range(30):
            f = self.force(u)
            J = self.tangent(beta, u)
            A = J.copy()
            A[:, 0] = -f
            x = np.linalg.solve(A, beta * f - self.s.K @ u)
            u[1:] += x[1:]
            beta += x[0]
            size = max(np.max(np.abs(x[1:])) / w0, abs(x[0]) / abs(beta))
            if _converged(size, prev):
                return u, beta, self.tangent(beta, u)
            prev = size
        raise _NoConvergence(f"no equilibrium at centre deflection {w0:.4g} gap")

    def slope(self, beta, u, J):
        """(dβ/dŵ0, du/dŵ0) at an equilibrium."""
        a = np.linalg.solve(J, self.force(u))
        return 1.0 / a[0], a / a[0]

    def at_beta(self, beta, u):
        """u at β (Newton from u)."""
        prev = math.inf
        for _ in range(30):
            J = self.tangent(beta, u)
            du = np.linalg.solve(J, beta * self.force(u) - self.s.K @ u)
            u = u + du
            size = np.max(np.abs(du)) / max(np.max(np.abs(u)), 1e-12)
            if _converged(size, prev):
                return u
            prev = size
        raise _NoConvergence(f"no equilibrium at beta {beta:.4g}")


def _fold(sv: _Solver, lo, hi, known: list):
    """The fold inside the bracket [lo, hi] of branch points (slope lo > 0 > hi): the zero of
    the exact slope dβ/dŵ0 by the secant method from the fold of the cubic Hermite interpolant
    of β(ŵ0), regula falsi (Illinois) where a secant step leaves the bracket; to ``FOLD_XTOL``.
    Returns (ŵ0, u, β) there; evaluated points are appended to ``known``."""
    a, b = lo, hi
    h = b[0] - a[0]
    d = (b[1] - a[1]) / h
    c0, c1, c2 = a[3], 6 * d - 4 * a[3] - 2 * b[3], 3 * (a[3] + b[3]) - 6 * d
    roots = [t.real for t in np.atleast_1d(np.roots([c2, c1, c0]))
             if abs(t.imag) < 1e-12 and 0 < t.real < 1]
    x = a[0] + (roots[0] if roots else a[3] / (a[3] - b[3])) * h
    prev = None
    for _ in range(60):
        p = min(known, key=lambda q: abs(q[0] - x))
        dw = x - p[0]
        u, beta, J = sv.at_w0(x, p[2] + dw * p[4], p[1] + dw * p[3])
        q = (x, beta, u, *sv.slope(beta, u, J))
        known.append(q)
        if q[3] > 0:
            a = q
        else:
            b = q
        if prev is not None and prev[3] != q[3]:
            x_new = q[0] - q[3] * (q[0] - prev[0]) / (q[3] - prev[3])
        else:
            x_new = a[0] - a[3] * (b[0] - a[0]) / (b[3] - a[3])
        if not a[0] < x_new < b[0]:
            x_new = a[0] - a[3] * (b[0] - a[0]) / (b[3] - a[3])
        if abs(x_new - x) <= FOLD_XTOL or q[3] == 0.0:
            return q[0], q[2], q[1]
        prev, x = q, x_new
    raise _NoConvergence("the pull-in fold search did not converge")


def _from_start(sv: _Solver, sys: DiskSystem, start: DiskBranch):
    """Branch points bracketing the fold, from the fold of a coarser mesh (``start``): Newton at
    its ŵ0 from its solution, then steps of 1e-4 gap (doubling) to the other side."""
    p = sv.at_w0(start.w_pi, sys.prolong(start.u_pi, start.nodes), start.beta_pi)
    pts = [(start.w_pi, p[1], p[0], *sv.slope(p[1], p[0], p[2]))]
    step = 1e-4 if pts[0][3] > 0 else -1e-4
    while (pts[-1][3] > 0) == (pts[0][3] > 0):
        q = pts[-1]
        if abs(q[0] - start.w_pi) > 0.05:
            raise _NoConvergence("the coarse fold is far from this mesh's fold")
        u, beta, J = sv.at_w0(q[0] + step, q[2] + step * q[4], q[1] + step * q[3])
        pts.append((q[0] + step, beta, u, *sv.slope(beta, u, J)))
        step *= 2
    return sorted(pts[-2:], key=lambda q: q[0]), pts


def solve_branch(sys: DiskSystem, pi_hat, dpi_hat, beta_b: float | None,
                 start: DiskBranch | None = None) -> DiskBranch:
    """Pull-in and the bias point β_b (None: pull-in only) of the scaled disk ``sys`` with the
    load π̂(s), dπ̂/ds (vectorised callables of the scaled local gap s). ``start``: the result of
    a coarser mesh (its fold and bias point start the searches; the full trace if they fail)."""
    sv = _Solver(sys, pi_hat, dpi_hat)
    if start is not None and start.nodes is not None:
        try:
            (lo, hi), known = _from_start(sv, sys, start)
            w_pi, u_pi, beta_pi = _fold(sv, lo, hi, known)
            u_b = None
            if beta_b is not None and start.u_b is not None and beta_b < beta_pi:
                u_b = sv.at_beta(beta_b, sys.prolong(start.u_b, start.nodes))
                if not 0.0 <= u_b[0] < w_pi:
                    raise _NoConvergence("left the stable branch")
            return _finish(sys, sv, w_pi, u_pi, beta_pi, beta_b, u_b, known)
        except (_NoConvergence, np.linalg.LinAlgError):
            pass
    return _trace(sys, sv, beta_b)


def _finish(sys, sv, w_pi, u_pi, beta_pi, beta_b, u_b, known):
    """The result from the fold and (if found, else searched on ``known``) the bias point."""
    mu0 = float(eigh(sys.K, sys.M, subset_by_index=[0, 0], eigvals_only=True)[0])
    c0 = float(solve(sys.K, sys.Fp, assume_a="pos")[0])
    out = dict(beta_pi=float(beta_pi), w_pi=float(w_pi), mu0=mu0, c0=c0, nodes=sys.nodes,
               u_pi=u_pi)
    if beta_b is None or beta_b >= beta_pi:
        return DiskBranch(**out)
    if u_b is None:
        u_b = _bias(sv, beta_b, w_pi, known)
    J = sv.tangent(beta_b, u_b)
    mu_b = float(eigh(J, sys.M, subset_by_index=[0, 0], eigvals_only=True)[0])
    c_b = float(solve(J, sys.Fp)[0])
    return DiskBranch(**out, w_b=float(u_b[0]), mu_b=mu_b, c_b=c_b, u_b=u_b)


def _trace(sys: DiskSystem, sv: _Solver, beta_b) -> DiskBranch:
    """The branch from rest in steps of ``STEP``, the fold inside the bracketing step."""
    n = sv.n
    u = np.zeros(n)
    a0 = solve(sys.K, sv.force(u), assume_a="pos")
    pts = [(0.0, 0.0, u, 1.0 / a0[0], a0 / a0[0])]  # (ŵ0, β, u, slope, du/dŵ0)
    w0 = 0.0
    while pts[-1][3] > 0:
        w0 += STEP
        if w0 > MAX_W0 + 1e-12:
            raise _NoConvergence(f"no pull-in up to a centre deflection of {MAX_W0} gap")
        p = pts[-1]
        u, beta, J = sv.at_w0(w0, p[2] + STEP * p[4], p[1] + STEP * p[3])
        pts.append((w0, beta, u, *sv.slope(beta, u, J)))
    known = list(pts)
    w_pi, u_pi, beta_pi = _fold(sv, pts[-2], pts[-1], known)
    return _finish(sys, sv, w_pi, u_pi, beta_pi, beta_b, None, known)


def _bias(sv: _Solver, beta_b: float, w_pi: float, known: list) -> np.ndarray:
    """The stable equilibrium at β_b: Newton in u from the branch points ``known``, else
    Brent's method on β(ŵ0) − β_b over the stable part."""
    from scipy.optimize import brentq

    if beta_b == 0.0:
        u_b = np.zeros(sv.n)
    else:
        stable = [q for q in known if q[0] <= w_pi]
        below = max((q for q in stable if q[1] <= beta_b), key=lambda q: q[0])
        above = [q for q in stable if q[1] > beta_b and q[0] > below[0]]
        w_hi = min((q[0] for q in above), default=w_pi)
        try:
            ds = (beta_b - below[1]) * below[4] / below[3] if below[3] > 0 else 0.0
            u_b = sv.at_beta(beta_b, below[2] + ds)
            if not below[0] - 1e-12 <= u_b[0] <= w_hi + 1e-12:
                raise _NoConvergence("left the stable branch")
        except (_NoConvergence, np.linalg.LinAlgError):
            cache = {"p": below}

            def resid(w):
                q = cache["p"]
                uu, bb, JJ = sv.at_w0(w, q[2] + (w - q[0]) * q[4], q[1] + (w - q[0]) * q[3])
                cache["p"] = (w, bb, uu, *sv.slope(bb, uu, JJ))
                return bb - beta_b

            brentq(resid, below[0], w_hi, xtol=1e-14, rtol=1e-13)
            u_b = sv.at_beta(beta_b, cache["p"][2])
    return u_b
