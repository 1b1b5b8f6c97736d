"""Assembly of a reduced sparse matrix from element blocks through a fixed linear map.

A Galerkin matrix of constrained or partly fixed unknowns is H = Pᵀ K P + C: K = Σ_e A_eᵀ k_e A_e
the sum of element blocks k_e over global (unconstrained) indices, P (global → reduced) the
constraint/selection matrix, C a constant reduced part. For a fixed mesh every entry of H is a
fixed linear combination of the element-block entries, H.data = G·vec(k) + c, with
G_(ab),(e,i,j) = P_(r_ei, a) P_(c_ej, b). :class:`Gather` builds G once (the pattern of H is the
union of all reachable (a, b)) so that each new set of element blocks, e.g. the tangent of a
Newton iteration, costs one sparse matrix-vector product instead of a coordinate-format
assembly, two sparse matrix products and a block concatenation.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["Gather"]


def _expand(rows: np.ndarray, P: sp.csr_matrix):
    """For entries with global rows ``rows``: (entry index, reduced index, weight) of every
    nonzero of P in those rows."""
    ip = P.indptr
    cnt = ip[rows + 1] - ip[rows]
    k = np.repeat(np.arange(rows.size), cnt)
    off = np.arange(k.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    pos = ip[rows][k] + off
    return k, P.indices[pos], P.data[pos]


class Gather:
    """H = Pᵀ(Σ blocks)P + C with a fixed pattern.

    Parameters
    ----------
    P : sparse (N_global, n) reduction
    blocks : list of (rows (nel, ni), cols (nel, nj)) global indices of each kind of element block
        (the values are given later, in the same order, each of shape (nel, ni, nj))
    const : sparse (n, n) constant reduced part
    """

    def __init__(self, P, blocks, const):
        P = sp.csr_matrix(P)
        n = P.shape[1]
        self.n = n
        keys, srcs, ws = [], [], []
        offset = 0
        for rows, cols in blocks:
            shape = rows.shape + (cols.shape[1],)
            r = np.broadcast_to(rows[:, :, None], shape).ravel()
            c = np.broadcast_to(cols[:, None, :], shape).ravel()
            k1, a, wa = _expand(r, P)
            k2, b, wb = _expand(c[k1], P)
            keys.append(a[k2].astype(np.int64) * n + b)
            srcs.append(offset + k1[k2])
            ws.append(wa[k2] * wb)
            offset += r.size
        C = sp.coo_matrix(const)
        ckey = C.row.astype(np.int64) * n + C.col
        allkeys = np.concatenate(keys + [ckey])
        pattern, inv = np.unique(allkeys, return_inverse=True)
        m = sum(x.size for x in keys)
        self.G = sp.csr_matrix((np.concatenate(ws), (inv[:m], np.concatenate(srcs))),
                               shape=(pattern.size, offset))
        self.c = np.bincount(inv[m:], weights=C.data, minlength=pattern.size)
        rows = pattern // n
        self.indices = (pattern % n).astype(np.int32)
        self.indptr = np.concatenate([[0], np.cumsum(np.bincount(rows, minlength=n))]
                                     ).astype(np.int32)
        self.n_sources = offset

    def matrix(self, values, fmt: str = "csr"):
        """H for element blocks ``values`` (one array per block kind); ``fmt`` "csc" gives the
        transpose's storage (the same matrix when H is symmetric)."""
        v = np.concatenate([np.ravel(x) for x in values])
        data = self.G @ v + self.c
        cls = sp.csr_matrix if fmt == "csr" else sp.csc_matrix
        return cls((data, self.indices, self.indptr), shape=(self.n, self.n))
