"""Every global fast-path table of an accuracy setting, by name: build them, or say which exist.

The global tables do not depend on a design (they are scaled solutions); a design's fast summary
reads them (:func:`diagap.fastpath.fast_summary`):

============================  ================================================================
name                          table
============================  ================================================================
``plate-SHAPE-EDGE-PIECE``    the scaled diaphragm (:mod:`diagap.fastpath.plate`) per shape
                              (circle, square), edge (clamped, simply supported) and τ piece
                              (bending, tension, membrane); seconds each
``cell-hex``, ``cell-square``  the perforation factor P(a/p, t/p, g/p) (:mod:`~.cells`)
``rim``                       the rim of a large electrode pair (:mod:`~.fringe`)
``flowcell``                  the Stokes flow cell of the perforation (:mod:`~.flowcell`)
``shape``                     the static-shape correction of the film (:mod:`~.shape`)
============================  ================================================================

Each table is refined until its held-out points agree with the FE within its tolerance
(:func:`diagap.fastpath.refine.build_table`); outputs that do not are listed as uncertified and
left out of the summaries. Tables are cached on disk (:mod:`~.store`) under a hash of the code
that produces their values, so a changed solver builds them again.
"""
from __future__ import annotations

import time
from dataclasses import dataclass
from functools import partial
from typing import Callable

__all__ = ["table_names", "TableStatus", "table_status"]


def _plate(shape: str, edge: str, piece: str, accuracy: str, mapper):
    from diagap.fastpath.plate import plate_tables

    return plate_tables(accuracy, shape, edge, pieces=(piece,), mapper=mapper)[piece]


def _cell(lattice: str, accuracy: str, mapper):
    from diagap.fastpath.cells import cell_table

    return cell_table(lattice, accuracy, mapper=mapper)


def _rim(accuracy: str, mapper):
    from diagap.fastpath.fringe import rim_table

    return rim_table(accuracy, mapper=mapper)


def _flowcell(accuracy: str, mapper):
    from diagap.fastpath.flowcell import cell_table

    return cell_table(accuracy, mapper=mapper)


def _shape(accuracy: str, mapper):
    from diagap.fastpath.shape import shape_table

    return shape_table(accuracy, mapper=mapper)


def _catalog() -> dict[str, Callable]:
    from diagap.fastpath.plate import PIECES

    out = {f"plate-{s}-{e}-{p}": partial(_plate, s, e, p)
           for s in ("circle", "square") for e in ("clamped", "simply-supported")
           for p in PIECES}
    out.update({"cell-hex": partial(_cell, "hex"), "cell-square": partial(_cell, "square"),
                "rim": _rim, "flowcell": _flowcell, "shape": _shape})
    return out


def table_names() -> tuple[str, ...]:
    """Names of the global tables, in build order."""
    return tuple(_catalog())


@dataclass(frozen=True)
class TableStatus:
    """One table: ``state`` "built" (computed now), "read" (from the cache) or "missing";
    the FE points it holds, the largest held-out error of its certified outputs (scaled:
    relative, 0.01 dB counts as 1e-3), its uncertified outputs (left out of every answer) and
    the seconds spent."""

    name: str
    state: str
    points: int = 0
    held_out_error: float = float("nan")
    uncertified: tuple = ()
    seconds: float = 0.0


class _Counting:
    """A table mapper that counts the points it computes (``inner`` None: computes nothing and
    raises FastPathUnavailable, so that a missing table stays missing)."""

    def __init__(self, inner):
        self.inner, self.points = inner, 0

    def __call__(self, func, points):
        if self.inner is None:
            from diagap.fastpath import FastPathUnavailable

            raise FastPathUnavailable("not built")
        points = list(points)
        self.points += len(points)
        return self.inner(func, points)


def table_status(accuracy: str, mapper=None, *, build: bool = True, names=None,
                 on_table: Callable[[TableStatus], None] | None = None) -> list[TableStatus]:
    """Build (``build``) or only look up the global tables of ``accuracy``.

    Parameters
    ----------
    accuracy : {"draft", "normal", "fine"}
    mapper : callable, optional
        How table points are computed (:func:`diagap.fastpath.refine.mapper_for`: local
        processes or a Dask client); default: local processes on every core.
    build : bool
        False: nothing is computed; tables not in the cache are "missing".
    names : iterable of str, optional
        A subset of :func:`table_names` (unknown names raise ValueError).
    on_table : callable, optional
        Called with each table's status as soon as it is known (progress).
    """
    from diagap.fastpath.refine import close_mapper, mapper_for

    catalog = _catalog()
    names = tuple(catalog) if names is None else tuple(names)
    unknown = [n for n in names if n not in catalog]
    if unknown:
        raise ValueError(f"table {unknown[0]!r}: unknown; allowed: {', '.join(catalog)}")
    owned = build and mapper is None
    if owned:
        mapper = mapper_for()
    try:
        return _statuses(catalog, names, accuracy, mapper, build, on_table)
    finally:
        if owned:
            close_mapper(mapper)


def _statuses(catalog, names, accuracy, mapper, build, on_table) -> list:
    import numpy as np

    from diagap.fastpath import FastPathUnavailable

    out = []
    for name in names:
        counting = _Counting(mapper if build else None)
        t0 = time.perf_counter()
        try:
            table, facts = catalog[name](accuracy, counting)
        except FastPathUnavailable:
            status = TableStatus(name, "missing", seconds=time.perf_counter() - t0)
        else:
            skip = set(facts.get("uncertified", ()))
            err = np.array([e for n, e in zip(table.names, table.held_out_error)
                            if n not in skip], float)
            status = TableStatus(
                name, "built" if counting.points else "read",
                points=int(facts.get("reference_points", 0)),
                held_out_error=float(np.max(err)) if err.size else float("nan"),
                uncertified=tuple(sorted(skip)),
                seconds=time.perf_counter() - t0)
        out.append(status)
        if on_table is not None:
            on_table(status)
    return out
