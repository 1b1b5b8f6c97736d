"""Adaptive construction of a :class:`~diagap.fastpath.grid.TensorTable` against a reference.

The reference is a function ``f(x) -> {name: value}`` of the physical axis values (a full
finite-element computation). Construction:

1. evaluate ``f`` at every tensor node of the starting axes;
2. for each axis k and each of its segments, evaluate ``f`` at held-out points — midway (in the
   mapped coordinate) between consecutive nodes of the segment, combined with the first, middle
   and last nodes of every other axis — and compare with the table (exact along the other axes,
   which sit on nodes). A segment whose largest :func:`~diagap.fastpath.grid.scaled_error`
   exceeds ``tol`` is halved (new nodes, new checks), up to ``max_splits`` times;
3. optionally, ``validate`` further points drawn uniformly (mapped coordinates, seeded) inside
   the box are compared with ``f``: a genuinely held-out check of the final table, including
   the directions between axes.

Outputs still above ``tol`` after the last split or at a validation point are *uncertified*:
their measured error stays in the table (``held_out_error``) and the fast path does not report
them. An output missing or non-finite at any node is dropped. Points are computed in batches
through a *mapper* ``mapper(f, points) -> results`` (:func:`local_mapper` for processes on this
machine, :func:`dask_mapper` for a ``distributed.Client``).
"""
from __future__ import annotations

import itertools
import logging
import math
from concurrent.futures import ProcessPoolExecutor
from functools import partial
from multiprocessing import get_context
from typing import Callable, Sequence

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable, scaled_error

__all__ = ["build_table", "local_mapper", "dask_mapper", "serial_mapper", "mapper_for",
           "LocalMapper", "close_mapper"]

log = logging.getLogger(__name__)


def serial_mapper(func: Callable, points: Sequence) -> list:
    """Compute the points one after the other in this process."""
    return [func(p) for p in points]


#: table points a local worker process computes before a fresh one replaces it
POINTS_PER_WORKER = 40


def _trimmed(func, point):
    """``func(point)`` in a worker, then the freed heap given back to the system
    (:func:`diagap.sweep.exec.release_memory`: a worker computing many table points of
    different geometry otherwise grows until it is killed)."""
    from diagap.sweep.exec import release_memory

    try:
        return func(point)
    finally:
        release_memory()


class LocalMapper:
    """A mapper over ``workers`` local processes (spawned, so gmsh starts clean; one BLAS
    thread each, SIGINT ignored, ended with their parent: the workers of the sweeps,
    :func:`diagap.sweep.exec._init_worker`).

    The processes are started by the first batch and kept for the next ones until
    :meth:`close` (or until the mapper is dropped): a table is built in several batches, and a
    fresh process pays seconds of imports and first-use set-up before its first point. The
    processes are replaced by fresh ones after :data:`POINTS_PER_WORKER` points each (a batch
    is cut into chunks for that): a process that has run many designs of different geometry
    keeps growing (by some 40 MB per design even with its freed heap trimmed, gmsh and the
    sparse factorisations being C libraries), and a study table of a few hundred points would
    otherwise hold gigabytes. (``max_tasks_per_child`` of the executor hangs on Python 3.11.)
    """

    def __init__(self, workers: int):
        self.workers = max(1, int(workers))
        self._pool = None
        self._done = 0  # points given to the current processes

    def __call__(self, func, points):
        if self.workers <= 1 or len(points) <= 1:
            return serial_mapper(func, points)
        out, points = [], list(points)
        while points:  # in chunks, the processes replaced between them (see the class)
            if self._done >= POINTS_PER_WORKER * self.workers:
                self.close()
            if self._pool is None:
                import os

                from diagap.sweep.exec import _init_worker

                self._pool = ProcessPoolExecutor(self.workers, mp_context=get_context("spawn"),
                                                 initializer=_init_worker,
                                                 initargs=(os.getpid(),))
                self._done = 0
            n = POINTS_PER_WORKER * self.workers - self._done
            chunk, points = points[:n], points[n:]
            out += list(self._pool.map(partial(_trimmed, func), chunk))
            self._done += len(chunk)
        return out

    def close(self) -> None:
        """End the worker processes (a later batch starts new ones)."""
        pool, self._pool = self._pool, None
        if pool is not None:
            pool.shutdown(wait=True, cancel_futures=True)

    def __del__(self):
        pool, self._pool = getattr(self, "_pool", None), None
        if pool is not None:
            pool.shutdown(wait=False, cancel_futures=True)


def local_mapper(workers: int) -> Callable:
    """A :class:`LocalMapper` over ``workers`` local processes."""
    return LocalMapper(workers)


def close_mapper(mapper) -> None:
    """End the worker processes of ``mapper`` if it keeps any (a :class:`LocalMapper`)."""
    close = getattr(mapper, "close", None)
    if close is not None:
        close()


def dask_mapper(client) -> Callable:
    """A mapper over the workers of a ``distributed.Client``."""
    def run(func, points):
        return client.gather(client.map(partial(_trimmed, func), list(points), pure=False))
    return run


def mapper_for(workers: int | None = None, client=None) -> Callable:
    """The mapper for a Dask ``client`` if given, else ``workers`` local processes
    (default: the cores available)."""
    import os

    if client is not None:
        return dask_mapper(client)
    n = workers if workers is not None else (len(os.sched_getaffinity(0))
                                             if hasattr(os, "sched_getaffinity") else 1)
    return local_mapper(max(1, int(n)))


def _key(u) -> tuple:
    return tuple(float(f"{v:.12g}") for v in u)


def _run_group(func_last, group):
    head, lasts = group
    return func_last(head, lasts)


class _Reference:
    """Memo of reference values by mapped point; computes missing points in one batch (by
    groups that share all but the last coordinate when ``func_last`` is given)."""

    def __init__(self, func, mapper, func_last=None):
        self.func, self.mapper, self.func_last = func, mapper, func_last
        self.memo, self.count = {}, 0

    def need(self, axes, points_u) -> None:
        todo = list(dict.fromkeys(_key(u) for u in points_u if _key(u) not in self.memo))
        if not todo:
            return
        xs = [tuple(float(a.from_mapped(v)) for a, v in zip(axes, u)) for u in todo]
        log.info("fast-path table: computing %d reference points", len(xs))
        if self.func_last is None:
            outs = self.mapper(self.func, xs)
        else:
            groups: dict = {}
            for i, x in enumerate(xs):
                groups.setdefault(x[:-1], []).append(i)
            heads = list(groups)
            batches = self.mapper(partial(_run_group, self.func_last),
                                  [(h, tuple(xs[i][-1] for i in groups[h])) for h in heads])
            outs = [None] * len(xs)
            for h, batch in zip(heads, batches):
                for i, out in zip(groups[h], batch):
                    outs[i] = out
        for u, out in zip(todo, outs):
            self.memo[u] = {k: float(v) for k, v in out.items()
                            if v is not None and math.isfinite(float(v))}
        self.count += len(todo)

    def vector(self, u, names) -> np.ndarray:
        row = self.memo[_key(u)]
        return np.array([row.get(n, np.nan) for n in names])


def _tensor(axes) -> list:
    return list(itertools.product(*[a.nodes for a in axes]))


def _probe(nodes: np.ndarray) -> np.ndarray:
    return nodes if len(nodes) <= 3 else nodes[[0, len(nodes) // 2, -1]]


def _assemble(ref, axes, names) -> tuple:
    shape = tuple(len(a.nodes) for a in axes)
    vals = np.array([ref.vector(u, names) for u in _tensor(axes)]).reshape(shape + (len(names),))
    return vals


def _names(ref, axes) -> tuple:
    rows = [ref.memo[_key(u)] for u in _tensor(axes)]
    common = set(rows[0])
    for r in rows[1:]:
        common &= set(r)
    return tuple(sorted(common))


def _table(ref, axes, names, held) -> TensorTable:
    vals = _assemble(ref, axes, names)
    flat = vals.reshape(-1, len(names))
    log_out = np.all(flat > 0, axis=0)
    return TensorTable(tuple(axes), tuple(names), vals, log_out, held)


def _check_points(axes, k, lo, hi) -> list:
    seg = Axis(axes[k].name, axes[k].log, (lo, hi), axes[k].n)
    others = [_probe(a.nodes) if j != k else seg.midpoints(0) for j, a in enumerate(axes)]
    return list(itertools.product(*others))


def build_table(func: Callable, axes: Sequence[Axis], *, tol: float = 1e-3,
                max_splits: int = 3, mapper: Callable = serial_mapper, validate: int = 0,
                seed: int = 0, drive: Callable[[str], bool] | None = None,
                along_last: Callable | None = None) -> tuple[TensorTable, dict]:
    """Tabulate ``func`` on ``axes`` until every held-out check is within ``tol``.

    Parameters
    ----------
    func : callable
        ``func(x) -> {name: value}`` with ``x`` the tuple of physical axis values; picklable
        (a module-level function or a ``functools.partial`` of one) for process mappers.
    axes : sequence of Axis
        Starting axes (segments and nodes per segment).
    tol : float
        Largest allowed :func:`~diagap.fastpath.grid.scaled_error` at a held-out point.
    max_splits : int
        How often a segment may be halved.
    mapper : callable
        ``mapper(func, points) -> results`` (see :func:`mapper_for`).
    validate : int
        Number of random held-out points checked after the refinement.
    seed : int
        Seed of the validation points.
    drive : callable, optional
        ``drive(name)`` is True for the outputs whose errors make a segment split (default:
        all). The others are certified where they meet ``tol`` and left uncertified otherwise.
    along_last : callable, optional
        ``along_last(x_head, lasts) -> [{name: value}, ...]``: ``func`` at (*x_head, v) for
        every v of ``lasts`` in one call (one mesh for the points that differ only in the last
        axis); the batches are then mapped by groups. It must agree with ``func``.

    Returns
    -------
    (TensorTable, dict)
        The table, and build facts: reference points computed, uncertified outputs.
    """
    axes = list(axes)
    ref = _Reference(func, mapper, along_last)
    ref.need(axes, _tensor(axes))
    names = _names(ref, axes)
    held = np.zeros(len(names))
    uncertified: set = set()
    for k in range(len(axes)):
        pending = [(lo, hi, 0) for lo, hi in zip(axes[k].breaks[:-1], axes[k].breaks[1:])]
        while pending:
            checks = {(lo, hi): _check_points(axes, k, lo, hi) for lo, hi, _ in pending}
            ref.need(axes, [u for pts in checks.values() for u in pts])
            table = _table(ref, axes, names, held)
            nxt = []
            for lo, hi, depth in pending:
                pts = checks[(lo, hi)]
                err = np.max([scaled_error(names, table.evaluate_mapped(u), ref.vector(u, names))
                              for u in pts], axis=0)
                bad = [n for n, e in zip(names, err) if e > tol and n not in uncertified]
                if any(drive is None or drive(n) for n in bad) and depth < max_splits:
                    i = list(axes[k].breaks).index(lo)
                    axes[k] = axes[k].split(i)
                    mid = 0.5 * (lo + hi)
                    nxt += [(lo, mid, depth + 1), (mid, hi, depth + 1)]
                else:
                    held = np.maximum(held, np.nan_to_num(err, nan=np.inf))
                    uncertified.update(bad)
            if nxt:
                ref.need(axes, _tensor(axes))
            pending = nxt
    table = _table(ref, axes, names, held)
    if validate:
        rng = np.random.default_rng(seed)
        lo = np.array([a.breaks[0] for a in axes])
        hi = np.array([a.breaks[-1] for a in axes])
        pts = [tuple(lo + (hi - lo) * rng.random(len(axes))) for _ in range(validate)]
        ref.need(axes, pts)
        for u in pts:
            err = scaled_error(names, table.evaluate_mapped(u), ref.vector(u, names))
            held = np.maximum(held, np.nan_to_num(err, nan=np.inf))
        table = _table(ref, axes, names, held)
    uncertified |= {n for n, e in zip(names, held) if e > tol}
    facts = {"reference_points": ref.count, "uncertified": sorted(uncertified)}
    return table, facts
