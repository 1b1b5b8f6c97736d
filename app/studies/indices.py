"""Variance-based sensitivity indices: which varied input drives an output's spread.

For Y = f(X_1, …, X_d) with independent inputs, the first-order index of X_i is the share of the
variance explained by X_i alone and the total index its share including all interactions
(Sobol' 1993; Saltelli et al., Global Sensitivity Analysis: The Primer, 2008, ch. 4):

    S_i  = Var(E[Y | X_i]) / Var(Y),        S_Ti = E[Var(Y | X_~i)] / Var(Y).

Two estimators:

- Saltelli scheme (first and total): two independent sample matrices A, B (N × d) and, for each
  i, A_B^(i) = A with column i taken from B. With f_A, f_B, f_AB^(i)

      S_i  ≈ mean(f_B (f_AB^(i) − f_A)) / V                 (Saltelli et al. 2010, Comput. Phys.
      S_Ti ≈ mean((f_A − f_AB^(i))²) / (2V)                  Commun. 181, 259, Table 2 (b), (f);
                                                              the total after Jansen 1999)

  with V the variance of f_A and f_B pooled; N (d + 2) evaluations.
- Given data (first order only): the correlation ratio of Y to X_i from one sample set, by
  binning X_i into M equal-count classes, Var(class means)/Var(Y), less the expected variance of
  class means of pure noise (mean within-class variance over the class size); no evaluations
  beyond the N samples (Plischke, Borgonovo & Smith 2013, Eur. J. Oper. Res. 226, 536).

Standard errors come from a bootstrap over the sample rows (fixed seed, reproducible).
"""
from __future__ import annotations

import numpy as np

__all__ = ["saltelli_indices", "binned_first_order", "saltelli_matrices"]

_BOOT = 200


def saltelli_matrices(ab: np.ndarray) -> list[np.ndarray]:
    """From ``ab`` (N, 2d) — the two halves are A and B — the matrices [A, B, A_B^(1), …]."""
    d = ab.shape[1] // 2
    A, B = ab[:, :d], ab[:, d:]
    out = [A, B]
    for i in range(d):
        M = A.copy()
        M[:, i] = B[:, i]
        out.append(M)
    return out


def _saltelli(fA, fB, fAB):
    V = np.var(np.concatenate([fA, fB]), ddof=1)
    if not V > 0:
        return np.zeros(len(fAB)), np.zeros(len(fAB))
    s1 = np.array([np.mean(fB * (f - fA)) for f in fAB]) / V
    st = np.array([0.5 * np.mean((fA - f) ** 2) for f in fAB]) / V
    return s1, st


def saltelli_indices(fA, fB, fAB, seed: int = 0) -> dict:
    """First and total indices with bootstrap standard errors.

    Parameters
    ----------
    fA, fB : ndarray (N,)
        The output on A and B.
    fAB : sequence of ndarray (N,)
        The output on A_B^(i), one per input.

    Returns
    -------
    dict
        ``{"first": [...], "total": [...], "first_se": [...], "total_se": [...]}``.
    """
    fA, fB = np.asarray(fA, float), np.asarray(fB, float)
    fAB = [np.asarray(f, float) for f in fAB]
    s1, st = _saltelli(fA, fB, fAB)
    rng = np.random.default_rng(seed)
    boot1, boott = [], []
    n = fA.size
    for _ in range(_BOOT):
        k = rng.integers(0, n, n)
        b1, bt = _saltelli(fA[k], fB[k], [f[k] for f in fAB])
        boot1.append(b1)
        boott.append(bt)
    return {"first": s1.tolist(), "total": st.tolist(),
            "first_se": np.std(boot1, axis=0, ddof=1).tolist(),
            "total_se": np.std(boott, axis=0, ddof=1).tolist()}


def _binned(x: np.ndarray, y: np.ndarray, bins: int) -> np.ndarray:
    V = np.var(y, ddof=1)
    out = np.zeros(x.shape[1])
    if not V > 0:
        return out
    for i in range(x.shape[1]):
        classes = np.array_split(np.argsort(x[:, i], kind="stable"), bins)
        means = np.array([y[c].mean() for c in classes])
        sizes = np.array([c.size for c in classes], float)
        within = np.array([y[c].var(ddof=1) if c.size > 1 else 0.0 for c in classes])
        between = np.sum(sizes * (means - y.mean()) ** 2) / (y.size - 1)
        noise = np.sum(within) / y.size * (bins - 1) / bins * y.size / (y.size - 1)
        out[i] = (between - noise) / V
    return out


def binned_first_order(x, y, bins: int | None = None, seed: int = 0) -> dict:
    """First-order indices from one sample set ``x`` (N, d) → ``y`` (N,), with bootstrap
    standard errors; ``bins`` defaults to ⌈√N⌉ classes (at least 2)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    n = y.size
    bins = bins or max(2, int(np.ceil(np.sqrt(n))))
    s1 = _binned(x, y, bins)
    rng = np.random.default_rng(seed)
    boot = []
    for _ in range(_BOOT):
        k = rng.integers(0, n, n)
        boot.append(_binned(x[k], y[k], bins))
    return {"first": s1.tolist(), "first_se": np.std(boot, axis=0, ddof=1).tolist()}
