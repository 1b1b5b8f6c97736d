r"""Tensor tables of composite Chebyshev–Lobatto interpolants in mapped coordinates.

A table approximates a vector function y(u_1, …, u_d) of d mapped coordinates u_k (the physical
value x_k on a linear or a logarithmic axis, u = x or u = ln x). Each axis is split into
segments [b_i, b_{i+1}]; every segment carries n Chebyshev–Lobatto nodes

.. math:: u_j = \tfrac12(b_i + b_{i+1}) - \tfrac12(b_{i+1} - b_i)\cos\frac{\pi j}{n-1},
          \qquad j = 0 … n-1,

shared at the segment ends. Inside a segment the interpolant is the polynomial of degree n − 1
through the nodes, evaluated with the second barycentric formula (Berrut & Trefethen, SIAM
Review 46, 2004, eq. 5.2, weights w_j = (−1)^j, halved at both ends); along several axes the
interpolant is the tensor product, i.e. the node values contracted with one weight vector per
axis. Values may be interpolated as they are or as their logarithm (positive outputs that follow
power laws of the inputs are nearly linear in log–log coordinates).

Error measure of an output (:func:`scaled_error`): |ŷ − y| / |y| for most quantities, and
|ŷ − y| / (0.01 dB / 1e-3) for levels in decibels, so that one tolerance of 1e-3 means 1e-3
relative or 0.01 dB.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Axis", "TensorTable", "chebyshev_nodes", "axis_weights", "scaled_error",
           "is_level_db", "DB_SCALE"]

#: an error of 0.01 dB counts like a relative error of 1e-3
DB_SCALE = 0.01 / 1e-3


def is_level_db(name: str) -> bool:
    """True for outputs stated in decibels (their error is measured in dB, not relatively),
    also the entries of a dB-valued group (``noise_contributions_dba_spl.vent``)."""
    return any("_db" in part or part.endswith("db") for part in name.split("."))


def chebyshev_nodes(lo: float, hi: float, n: int) -> np.ndarray:
    """n Chebyshev–Lobatto nodes of [lo, hi], ascending, both ends included."""
    j = np.arange(n)
    return 0.5 * (lo + hi) - 0.5 * (hi - lo) * np.cos(np.pi * j / (n - 1))


def _bary_weights(n: int) -> np.ndarray:
    w = (-1.0) ** np.arange(n)
    w[0] *= 0.5
    w[-1] *= 0.5
    return w


@dataclass(frozen=True)
class Axis:
    """One table axis: its name, log or linear mapping, segment ends (mapped) and nodes/segment.

    Attributes
    ----------
    name : str
        What the axis is (a design path or a dimensionless group).
    log : bool
        Mapped coordinate u = ln x (True) or u = x.
    breaks : tuple of float
        Segment ends in the mapped coordinate, ascending.
    n : int
        Chebyshev–Lobatto nodes per segment (≥ 2).
    """

    name: str
    log: bool
    breaks: tuple
    n: int = 5

    def to_mapped(self, x) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        return np.log(x) if self.log else x

    def from_mapped(self, u) -> np.ndarray:
        u = np.asarray(u, dtype=float)
        return np.exp(u) if self.log else u

    @property
    def nodes(self) -> np.ndarray:
        """All nodes of the axis (mapped), ascending, segment ends shared."""
        parts = [chebyshev_nodes(a, b, self.n)[(0 if i == 0 else 1):]
                 for i, (a, b) in enumerate(zip(self.breaks[:-1], self.breaks[1:]))]
        return np.concatenate(parts)

    def segment_nodes(self, i: int) -> np.ndarray:
        return chebyshev_nodes(self.breaks[i], self.breaks[i + 1], self.n)

    def midpoints(self, i: int) -> np.ndarray:
        """Held-out points of segment i: midway (mapped) between its consecutive nodes."""
        x = self.segment_nodes(i)
        return 0.5 * (x[1:] + x[:-1])

    def split(self, i: int) -> "Axis":
        """The axis with segment i halved (mapped coordinate)."""
        b = list(self.breaks)
        b.insert(i + 1, 0.5 * (b[i] + b[i + 1]))
        return Axis(self.name, self.log, tuple(b), self.n)

    def contains(self, u: float, slack: float = 1e-9) -> bool:
        lo, hi = self.breaks[0], self.breaks[-1]
        pad = slack * max(1.0, abs(hi - lo))
        return lo - pad <= u <= hi + pad


def axis_weights(axis: Axis, u: float) -> np.ndarray:
    """Interpolation weights over all nodes of ``axis`` at mapped coordinate ``u``."""
    b = np.asarray(axis.breaks)
    u = float(np.clip(u, b[0], b[-1]))
    i = int(np.clip(np.searchsorted(b, u, side="right") - 1, 0, len(b) - 2))
    x = axis.segment_nodes(i)
    out = np.zeros((len(b) - 1) * (axis.n - 1) + 1)
    d = u - x
    hit = np.nonzero(np.abs(d) <= 1e-14 * max(1.0, abs(u)))[0]
    local = np.zeros(axis.n)
    if hit.size:
        local[hit[0]] = 1.0
    else:
        t = _bary_weights(axis.n) / d
        local = t / t.sum()
    start = i * (axis.n - 1)
    out[start:start + axis.n] = local
    return out


def scaled_error(names, approx, exact) -> np.ndarray:
    """Per-output error: relative, or in units of 0.01 dB/1e-3 for decibel levels."""
    approx, exact = np.asarray(approx, float), np.asarray(exact, float)
    db = np.array([is_level_db(n) for n in names])
    scale = np.where(db, DB_SCALE, np.abs(exact))
    scale = np.where(scale > 0, scale, 1.0)
    return np.abs(approx - exact) / scale


@dataclass(frozen=True)
class TensorTable:
    """Node values of d axes and K outputs, interpolated by the composite Chebyshev rule.

    Attributes
    ----------
    axes : tuple of Axis
    names : tuple of str
        Output names.
    values : ndarray, shape (N_1, …, N_d, K)
        Outputs at the tensor nodes (as computed, not transformed).
    log_outputs : ndarray of bool, shape (K,)
        Outputs interpolated as logarithms (positive at every node).
    held_out_error : ndarray, shape (K,)
        Largest :func:`scaled_error` seen at held-out points that were checked against the
        reference after the last refinement.
    """

    axes: tuple
    names: tuple
    values: np.ndarray
    log_outputs: np.ndarray
    held_out_error: np.ndarray

    def coordinates(self, x) -> np.ndarray:
        """Mapped coordinates of physical axis values ``x`` (length d)."""
        return np.array([a.to_mapped(v) for a, v in zip(self.axes, x)], dtype=float)

    def covers(self, x) -> bool:
        u = self.coordinates(x)
        return bool(np.all(np.isfinite(u))) and all(a.contains(v) for a, v in zip(self.axes, u))

    def evaluate_mapped(self, u) -> np.ndarray:
        """Interpolated outputs (K,) at mapped coordinates ``u``."""
        t = np.where(self.log_outputs, np.log(np.where(self.log_outputs, self.values, 1.0)),
                     self.values)
        for a, v in zip(self.axes, u):
            t = np.tensordot(axis_weights(a, v), t, axes=(0, 0))
        return np.where(self.log_outputs, np.exp(t), t)

    def __call__(self, x) -> np.ndarray:
        """Interpolated outputs (K,) at physical axis values ``x``."""
        return self.evaluate_mapped(self.coordinates(x))
