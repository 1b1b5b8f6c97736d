r"""Tables over a study box by nested Chebyshev–Lobatto levels: few points, none wasted.

A study box is small (a few per cent to a factor of three per value), and the summary outputs
are smooth in it, so one polynomial segment per axis of modest degree reaches 1e-3. The
Chebyshev–Lobatto nodes of one segment are *nested*: the n = 2^l + 1 nodes

.. math:: u_j = \tfrac12(b_0 + b_1) - \tfrac12(b_1 - b_0)\cos\frac{\pi j}{n-1}

of level l are every other node of level l + 1 (n' = 2n − 1).

Error of a tensor table. Interpolating along d axes in turn, the error at a point is close to
the sum of the one-dimensional errors along each axis (the interpolant is exact along an axis at
its nodes), so each output's error budget ``tol`` is shared between the axes: the table is
accepted when, for every *driving* output, Σ_k e_k ≤ tol, with e_k the error along axis k.

Construction:

1. the table starts with the nodes of the given axes (3 per axis for study boxes,
   :func:`diagap.fastpath.study_table`) and the full tensor of them;
2. e_k of an axis at its starting level is *measured*: the held-out points are the nodes that
   the next level would add on axis k (midway in angle between consecutive nodes, where the node
   polynomial is close to its largest), combined with the first, middle and last nodes of every
   other axis (the table is exact along those axes there); e_k is the largest
   :func:`~diagap.fastpath.grid.scaled_error` there (relative, 0.01 dB per 1e-3 for levels);
3. while a driving output's sum exceeds ``tol``, the axis with the largest share of it goes to
   the next level (up to ``max_nodes`` nodes): its held-out points become nodes (when the other
   axes are at their starting level they are exactly the new tensor's missing nodes), and its
   e_k becomes the *coefficient-tail estimate*: the magnitude of the last Chebyshev coefficient
   of the output along the axis (Trefethen, Approximation Theory and Approximation Practice,
   2013, ch. 8: the interpolation error of a function with geometrically decaying coefficients
   is of the size of the first neglected ones, so the last retained one is a generous
   estimate), the largest over every line of the tensor;
4. ``validate`` points drawn uniformly in the box (mapped coordinates, seeded) are compared
   with the reference: a genuinely held-out check of the final table, including the directions
   between the axes. An output off by more than ``tol`` there raises the level of its largest
   axis once more and is validated again at new points (``rounds`` times at most).

The table's ``held_out_error`` of an output is the larger of Σ_k e_k and the largest error at
the validation points. Outputs above ``tol`` are *uncertified*, as in
:mod:`diagap.fastpath.refine`; the fast path leaves them out.

Compared with halving segments and testing 4 midpoints per segment (:func:`diagap.fastpath.
refine.build_table`), a held-out point that fails becomes a node instead of being thrown away,
and an axis that needs three nodes costs 2 held-out points per probe instead of 4.
"""
from __future__ import annotations

import itertools
from dataclasses import replace
from typing import Callable, Sequence

import numpy as np

from scipy.fft import dct

from diagap.fastpath.grid import DB_SCALE, Axis, TensorTable, is_level_db, scaled_error
from diagap.fastpath.refine import _names, _probe, _Reference, _table, _tensor, serial_mapper

__all__ = ["build_nested_table", "next_level"]


def next_level(axis: Axis) -> Axis:
    """``axis`` with every segment at the next nested level (n → 2n − 1 nodes)."""
    return replace(axis, n=2 * axis.n - 1)


def _new_nodes(axis: Axis) -> np.ndarray:
    """The nodes of :func:`next_level` that ``axis`` does not have (mapped)."""
    finer = next_level(axis).nodes
    return finer[1::2]


def _held_out(axes, k) -> list:
    others = [_new_nodes(a) if j == k else _probe(a.nodes) for j, a in enumerate(axes)]
    return list(itertools.product(*others))


def _tail(table: TensorTable, k: int) -> np.ndarray:
    """Coefficient-tail error estimate along axis k (one segment) per output: the largest
    |last Chebyshev coefficient| over the tensor's lines along k, scaled as
    :func:`scaled_error` (logarithmic outputs: relative already; levels: per 0.01 dB/1e-3;
    others: relative to the line's largest magnitude)."""
    v = table.values
    t = np.where(table.log_outputs, np.log(np.where(table.log_outputs, v, 1.0)), v)
    t = np.moveaxis(t, k, 0)
    n = t.shape[0]
    c = dct(t, type=1, axis=0) / (n - 1)
    last = 0.5 * np.abs(c[-1])                       # (..., K)
    db = np.array([is_level_db(name) for name in table.names])
    scale = np.max(np.abs(np.moveaxis(v, k, 0)), axis=0)
    scale = np.where(table.log_outputs, 1.0, np.where(db, DB_SCALE, scale))
    scale = np.where(scale > 0, scale, 1.0)
    err = last / scale
    return np.max(err.reshape(-1, err.shape[-1]), axis=0)


def _measured(ref, axes, k, names, held) -> np.ndarray:
    pts = _held_out(axes, k)
    ref.need(axes, pts)
    table = _table(ref, axes, names, held)
    return np.max([scaled_error(names, table.evaluate_mapped(u), ref.vector(u, names))
                   for u in pts], axis=0)


def build_nested_table(func: Callable, axes: Sequence[Axis], *, tol: float = 1e-3,
                       max_nodes: int = 9, mapper: Callable = serial_mapper, validate: int = 0,
                       seed: int = 0, drive: Callable[[str], bool] | None = None,
                       rounds: int = 2) -> tuple[TensorTable, dict]:
    """Tabulate ``func`` on ``axes`` by nested levels until the error budget is met.

    Parameters
    ----------
    func : callable
        ``func(x) -> {name: value}``, ``x`` the tuple of physical axis values; picklable for
        process mappers.
    axes : sequence of Axis
        Starting axes, one segment each; their ``n`` must be 2^l + 1 (3, 5, 9, …) to nest.
    tol : float
        Error budget per output (:func:`~diagap.fastpath.grid.scaled_error`).
    max_nodes : int
        Most nodes per axis.
    mapper : callable
        ``mapper(func, points) -> results`` (:func:`diagap.fastpath.refine.mapper_for`).
    validate : int
        Random held-out points checked per validation round.
    seed : int
        Seed of the validation points.
    drive : callable, optional
        ``drive(name)`` is True for outputs whose errors raise a level (default: all); the
        others are certified where they meet ``tol`` and left uncertified otherwise.
    rounds : int
        Validation rounds at most (a failed round raises a level, then validates again).

    Returns
    -------
    (TensorTable, dict)
        The table, and build facts: ``reference_points`` computed, ``uncertified`` outputs,
        ``nodes`` per axis, ``axis_errors`` (e_k of the driving outputs' worst, per axis),
        ``validation_error`` (largest over driving outputs).
    """
    axes = list(axes)
    for a in axes:
        n = a.n - 1
        if a.n < 3 or n & (n - 1) or len(a.breaks) != 2:
            raise ValueError(f"axis {a.name}: {a.n} nodes on {len(a.breaks) - 1} segments do not "
                             "nest (one segment of 3, 5, 9, … nodes)")
    ref = _Reference(func, mapper)
    ref.need(axes, _tensor(axes))
    names = _names(ref, axes)
    driving = np.array([drive is None or drive(n) for n in names])
    zero = np.zeros(len(names))
    e = [np.nan_to_num(_measured(ref, axes, k, names, zero), nan=np.inf)
         for k in range(len(axes))]

    def complete() -> np.ndarray:
        """Driving outputs with a number at every node (an output missing at a node, e.g. the
        response of a design collapsing at its bias, stays uncertified: no level helps)."""
        vals = _table(ref, axes, names, zero).values.reshape(-1, len(names))
        return driving & np.all(np.isfinite(vals), axis=0)

    def raise_level(worst: int) -> bool:
        """Next level on the refinable axis with the largest share of output ``worst``."""
        order = sorted(range(len(axes)), key=lambda k: -e[k][worst])
        for k in order:
            if 2 * axes[k].n - 1 <= max_nodes and e[k][worst] > 0:
                axes[k] = next_level(axes[k])
                ref.need(axes, _tensor(axes))
                e[k] = _tail(_table(ref, axes, names, zero), k)
                return True
        return False

    rng = np.random.default_rng(seed)
    val = np.zeros(len(names))
    for rnd in range(max(1, rounds)):
        while True:
            total = np.sum(e, axis=0)
            over = np.where(complete() & (total > tol), total, 0.0)
            if not np.any(over > 0) or not raise_level(int(np.argmax(over))):
                break
        if not validate:
            break
        table = _table(ref, axes, names, zero)
        lo = np.array([a.breaks[0] for a in axes])
        hi = np.array([a.breaks[-1] for a in axes])
        pts = [tuple(lo + (hi - lo) * rng.random(len(axes))) for _ in range(validate)]
        ref.need(axes, pts)
        val = np.max([np.nan_to_num(scaled_error(names, table.evaluate_mapped(u),
                                                 ref.vector(u, names)), nan=np.inf)
                      for u in pts], axis=0)
        over = np.where(complete() & (val > tol), val, 0.0)
        if not np.any(over > 0) or rnd == rounds - 1 or not raise_level(int(np.argmax(over))):
            break
    held = np.maximum(np.sum(e, axis=0), val)
    table = _table(ref, axes, names, held)
    uncertified = sorted(n for n, h in zip(names, held) if not h <= tol)
    worst = [float(np.max(np.where(driving, ek, 0.0))) for ek in e]
    facts = {"reference_points": ref.count, "uncertified": uncertified,
             "nodes": [a.n for a in axes], "axis_errors": worst,
             "validation_error": float(np.max(np.where(driving, val, 0.0)))}
    return table, facts
