"""Newton's method with a reused tangent for the equilibria of a nonlinear plate.

Problem. Find x with R(x, P) = 0, R the gradient of a total potential energy (residual) and
H = ∂R/∂x its Hessian (tangent stiffness), P the scaled uniform pressure; either

- P prescribed (load control), or
- the centre deflection prescribed, cᵀx = W0, P an unknown (displacement control): the bordered
  system [H −f; cᵀ 0][δx; δP] = [−R; W0 − cᵀx], f the unit load, solved with one factorisation
  of H as δx = a + δP b, H a = −R, H b = f, δP = (W0 − cᵀ(x + a))/(cᵀb). It stays regular at a
  limit point of P (where H is singular along the path but the bordered matrix is not).

Iteration (chord / modified Newton). The tangent is factorised at the start of a solve and reused
while the increments contract by at least ``CONTRACTION`` per step; otherwise it is refactorised at
the current iterate (a full Newton step). The factorisation is kept for the next solve of a
continuation: a start that is the last converged state, or a prediction extrapolated from it,
reuses it. The iteration stops when the error left after the last increment, estimated from the
observed contraction c of successive increments as c/(1 − c) times the increment (the geometric
tail of a linearly contracting iteration; the increment itself when no contraction is observed
yet), is below ``tol`` times the largest plate coefficient (and, displacement control, the same
for P). ``FULL_NEWTON`` True factorises at every iterate (the reference method). A solve may be
given a budget of factorisations: a step that diverges (e.g. across a snap) is then abandoned
early, for the caller to shorten it.

Linear algebra: SuperLU with a minimum-degree ordering of H + Hᵀ in symmetric mode (H is
symmetric; diagonal pivots), falling back to partial pivoting if that fails.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse.linalg as spla

__all__ = ["NewtonError", "ChordNewton"]


class NewtonError(RuntimeError):
    """Newton's method did not converge (a load step too large, or past a limit point)."""


class ChordNewton:
    """Mixin: the load- and displacement-controlled solves of a system providing
    ``residual(x, P)``, ``_residual_tangent(x, P)`` → (R, H), ``split(x)`` → (plate part, rest),
    ``unit_load`` (plate part of f), ``center`` (plate part of c), ``n`` and ``nq_dofs``."""

    CONTRACTION = 0.5
    FULL_NEWTON = False

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
        self._lu_at = (x.copy(), P)
        return self._lu

    def tangent_lu_at(self, x: np.ndarray, P: float):
        """Factorised tangent at (x, P): the stored one if it was factorised exactly there."""
        at = getattr(self, "_lu_at", None)
        if getattr(self, "_lu", None) is not None and at is not None and at[1] == P and \
                np.array_equal(at[0], x):
            return self._lu
        return self._refactor(x, P)

    def _size(self, x: np.ndarray) -> float:
        return float(np.max(np.abs(self.split(x)[0])))

    def _refactor_counted(self, x, P, state):
        state["factorisations"] = state.get("factorisations", 0) + 1
        limit = state.get("max_factorisations")
        if limit is not None and state["factorisations"] > limit:
            self._lu = None
            raise NewtonError(f"more than {limit} tangent factorisations at scaled pressure "
                              f"{P:.6g}")
        return self._refactor(x, P)

    def _step(self, x, P, step_fn, state):
        """One chord/Newton step; step_fn(lu) → increment. Refactors on slow contraction.
        Returns the increment, its size and the ratio of the error left after it to its size."""
        if getattr(self, "_lu", None) is None or state["fresh_needed"] or \
                (self.FULL_NEWTON and state.get("prev") is not None):
            self._refactor_counted(x, P, state)
            state["fresh"] = True
        dx = step_fn(self._lu)
        nd = self._size(dx)
        prev = state.get("prev")
        if not state["fresh"] and prev is not None and not nd <= self.CONTRACTION * prev:
            self._refactor_counted(x, P, state)
            dx = step_fn(self._lu)
            nd = self._size(dx)
            prev = None  # a new linearisation: no contraction observed yet
        state["fresh"] = False
        state["fresh_needed"] = False
        state["prev"] = nd
        factor = 1.0  # error left after the increment, per unit increment
        if prev is not None and prev > 0 and nd < prev:
            c = nd / prev
            factor = min(1.0, c / (1.0 - c))
        return dx, nd, factor

    def _start(self, x0, predicted: bool, max_factorisations) -> dict:
        """Iteration state: the stored factorisation is reused if x0 is the last converged state
        or a prediction from it (``predicted``); otherwise the tangent is factorised at x0. A
        solve needing more than ``max_factorisations`` (None: no limit) fails (a diverging
        step, e.g. one across a snap, is then abandoned early)."""
        last = getattr(self, "_last_x", None)
        reuse = x0 is last or (predicted and last is not None)
        return {"fresh_needed": not reuse or self.FULL_NEWTON, "fresh": False,
                "max_factorisations": max_factorisations}

    def solve_pressure(self, P: float, x0: np.ndarray, tol: float = 1e-9, maxit: int = 40,
                       predicted: bool = False, max_factorisations: int | None = None):
        """Equilibrium at the scaled uniform pressure P from the start x0; returns (x, lu).
        The stored tangent is reused if x0 is the last converged state (a load ramp: the first
        step is then the tangent predictor) or ``predicted`` from it; otherwise it is factorised
        afresh at x0."""
        x = x0.copy()
        state = self._start(x0, predicted, max_factorisations)
        for _ in range(maxit):
            r = self.residual(x, P)
            if not np.all(np.isfinite(r)):
                break
            dx, nd, ratio = self._step(x, P, lambda lu: -lu.solve(r), state)
            if not np.isfinite(nd):
                break
            x += dx
            if ratio * nd <= tol * max(self._size(x), 1e-12):
                self._last_x = x
                return x, self._lu
        self._lu = None
        raise NewtonError(f"no convergence at scaled pressure {P:.6g}")

    def _f_solve(self, lu, f):
        if getattr(self, "_lu_f", None) is None:
            self._lu_f = lu.solve(f)
        return self._lu_f

    def solve_deflection(self, W0: float, x0: np.ndarray, P0: float, tol: float = 1e-9,
                         maxit: int = 40, predicted: bool = False,
                         max_factorisations: int | None = None):
        """Equilibrium with the centre deflection prescribed (W0 = w0/h), the uniform pressure
        an unknown (bordered Newton; passes limit points of P(W0)). Returns (x, P, lu).
        ``predicted``: x0, P0 extrapolated from the last converged state (its factorisation is
        then reused)."""
        x, P = x0.copy(), float(P0)
        f = np.concatenate([self.unit_load, np.zeros(self.n - self.nq_dofs)])
        c = np.concatenate([self.center, np.zeros(self.n - self.nq_dofs)])
        state = self._start(x0, predicted, max_factorisations)
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
            dx, nd, ratio = self._step(x, P, step, state)
            if not np.isfinite(nd):
                break
            x += dx
            P += out["dP"]
            if ratio * nd <= tol * max(self._size(x), 1e-12) and \
                    ratio * abs(out["dP"]) <= tol * max(abs(P), 1e-12):
                self._last_x = x
                return x, P, self._lu
        self._lu = None
        raise NewtonError(f"no convergence at scaled centre deflection {W0:.6g}")

    def zero(self) -> np.ndarray:
        return np.zeros(self.n)
