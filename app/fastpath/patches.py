r"""Patches: the part of a global scaled table that one study reaches, built for that study.

A global table (:mod:`diagap.fastpath.catalog`) spans the whole validated range of its
dimensionless groups, because it serves every design. A study (an optimisation over bounds of a
few design values) reads only a small part of it: for the hole pattern of one capsule the
Stokes flow cell's Knudsen number and the cell table's backplate thickness over pitch move over
a few per cent to a factor of two, not over their decades. A *patch* is a table of the same
scaled FE function (the same solver call at the same table coordinates, so the same values as
the global table's nodes would hold) over the bounding box of the coordinates that the study's
designs reach, built by nested Chebyshev–Lobatto levels (:func:`diagap.fastpath.nested.
build_nested_table`: three nodes per axis to start, the axis with the largest share of the
error raised to the next level until the held-out error is within the global table's
tolerance, then random held-out validation points). Patchable tables: ``cell-hex``,
``cell-square`` (:mod:`~.cells`, perforation factor, tolerance 5e-4), ``rim``
(:mod:`~.fringe`, tolerance 1e-3) and ``flowcell`` (:mod:`~.flowcell`, tolerance 1e-3, the
points that differ only in the Knudsen number share one mesh as in the global build). The
diaphragm and film-shape tables are cheap (seconds) and stay global.

Region of a study. The coordinates at which the fast path reads each table are functions of
the design alone (:func:`table_points`):

- cell table: (1/2 − a/p, t/p, g_j/p) at the stage's c(g) sample gaps g_j (Chebyshev nodes of
  [0.25 g, 1.45 g], :data:`diagap.stages.GAP_TABLE`);
- rim table: (1 + k, t/g), k = min(R_d − R_e, 30 g)/g;
- flow cell: (r/(R_c − r), g/R_c, t/R_c, λ/g) with λ at the design's air conditions.

Each is monotonic in every design value, so over a box of design values their extremes lie at
the box's corners; :func:`study_patches` takes the nominal design and every corner (up to ten
varied values; beyond that the ends of each value and 1024 seeded random points), and widens
each coordinate's range by 1 % of its width (mapped coordinates) on either side, clipped to the
global table's range (a table that the box reaches only outside that range gets no patch: the
fast path refuses those designs before it reads a table). A coordinate that does not move at
all (a gap the study does not vary fixes the Knudsen number) is held fixed: the patch has no
axis for it and answers only there.
A design whose coordinates leave the patch gets :class:`~diagap.fastpath.FastPathUnavailable`
(the study then runs that point with the full FE), never an extrapolation.

Measured (two cores, empty cache; tests/bench/bench_studies.py and bench_patches.py, the demo
design, an invented scenario). The demo optimisation's box (hole radius 2–6 µm, pitch 14–30 µm,
electrode radius 0.3–0.48 mm) reaches a/p 0.07–0.43 and t/R_c 0.13–0.27 with the Knudsen
number fixed; at "draft" its patches took 13.0 s (cell, 269 FE points, nodes 9 × 3 × 9), 8.7 s
(rim, 17, nodes 9) and 32.8 s (flow cell, 485, nodes 17 × 9 × 3), 77 s with the diaphragm and
film-shape tables, where the global tables it would read took 305 s; the whole first
optimisation 90 s, the same optimum as with the global tables. At "normal" 103 s of tables
(the first run 120 s in all). Fast summary from the patches against the full FE pipeline,
random designs of the box: "draft" 20 designs, 0 of 1536 outputs over 1e-3 (the largest the
film's cutoff 9.1e-4, of the size of the draft reference's own error); "normal" 12 designs,
0 of 920 (largest 6.3e-4). A process box (gap ±15 %, backplate thickness 1.5–2.5 µm,
diaphragm thickness ±10 %, stress 5–15 MPa: every flow-cell group moves, the Knudsen number
with the gap): patches 16 s ("draft"), 38 s ("normal"); 0 of 1540 and 0 of 924 outputs over
1e-3.

Use. :func:`using` makes a :class:`PatchSet` active for the fast-path calls inside it
(:func:`diagap.fastpath.fast_summary` with ``patches=``); the fast path then reads each
patchable table from its patch (:func:`active_table`), built on demand with the building
mapper and cached on disk under its region, or, with a read-only mapper, only read.
"""
from __future__ import annotations

import contextlib
import contextvars
import itertools
import logging
import math
import time
from dataclasses import dataclass
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["PATCHABLE", "Region", "PatchSet", "PatchTable", "table_points", "study_patches",
           "using", "active", "active_table", "patch_table"]

log = logging.getLogger(__name__)

#: tables that patches can stand in for
PATCHABLE = ("cell-hex", "cell-square", "rim", "flowcell")
#: widening of each coordinate's range, as a fraction of its width (mapped coordinates)
MARGIN = 0.01
#: a coordinate whose range (mapped) is narrower than this is fixed
FIXED_WIDTH = 1e-9
#: most nodes per patch axis (nested levels 3, 5, 9, 17)
MAX_NODES = 17
#: random held-out points per validation round of a patch
VALIDATE = 8
#: a patch is built to this fraction of its global table's tolerance (the ``tol`` default of
#: cells.cell_table 5e-4, fringe.rim_table 1e-3, flowcell.cell_table 1e-3), because a patch's few nodes lie farther apart
#: along the gap than the global table's (which the 50-design comparison validated): the
#: distortion follows the curvature of 1/C(x) and so amplifies an error of P that changes
#: with g/p (:data:`diagap.fastpath.cells.WEB_NODES`)
TOL_FRACTION = 0.5


def _tol(getter) -> float:
    """TOL_FRACTION times the default ``tol`` of a global table's getter."""
    import inspect

    return TOL_FRACTION * float(inspect.signature(getter).parameters["tol"].default)

_ACTIVE: contextvars.ContextVar = contextvars.ContextVar("diagap_patches", default=None)


@dataclass(frozen=True)
class Region:
    """The box of table coordinates (physical, as the table is called) one patch covers.

    ``lows``/``highs`` per coordinate of the global table; ``lows[i] == highs[i]`` for a
    fixed coordinate."""

    name: str
    accuracy: str
    lows: tuple
    highs: tuple

    def key(self) -> dict:
        return {"table": self.name, "accuracy": self.accuracy,
                "lows": [float(f"{v:.12g}") for v in self.lows],
                "highs": [float(f"{v:.12g}") for v in self.highs]}


@dataclass(frozen=True)
class PatchSet:
    """Regions by table name, one accuracy setting (picklable, hashable: it travels with a
    study's evaluator to its worker processes)."""

    accuracy: str
    regions: tuple

    def region(self, name: str, accuracy: str) -> Region | None:
        if accuracy != self.accuracy:
            return None
        return next((r for r in self.regions if r.name == name), None)

    def __repr__(self) -> str:
        parts = [f"{r.name}: " + ", ".join(f"[{lo:.6g}, {hi:.6g}]"
                                           for lo, hi in zip(r.lows, r.highs))
                 for r in self.regions]
        return f"PatchSet({self.accuracy!r}; {'; '.join(parts)})"


def _spec(name: str, accuracy: str) -> dict:
    """What builds a patch of ``name``: the global table's scaled FE function (and its
    Knudsen-batched form), starting axes (for the mappings and the range), tolerance, driving
    outputs and code key."""
    from diagap.fastpath.store import module_hash

    if name in ("cell-hex", "cell-square"):
        from diagap.fastpath import cells

        lattice = name.split("-", 1)[1]
        return {"func": partial(cells.scaled_cell, lattice, accuracy), "last": None,
                "axes": cells.cell_axes(), "tol": _tol(cells.cell_table), "drive": None,
                "code": [module_hash(cells.__file__), cells.TABLE_VERSION]}
    if name == "rim":
        from diagap.fastpath import fringe

        return {"func": partial(fringe.scaled_rim, accuracy), "last": None,
                "axes": fringe.rim_axes(), "tol": _tol(fringe.rim_table), "drive": None,
                "code": [module_hash(fringe.__file__), fringe.TABLE_VERSION]}
    if name == "flowcell":
        from diagap.fastpath import flowcell

        return {"func": partial(flowcell.scaled_cell, accuracy),
                "last": partial(flowcell.scaled_cells, accuracy),
                "axes": flowcell.cell_axes(), "tol": _tol(flowcell.cell_table),
                "drive": flowcell._drives,
                "code": [module_hash(flowcell.__file__)]}
    raise ValueError(f"table {name!r}: no patch; allowed: {', '.join(PATCHABLE)}")


def table_points(design) -> dict[str, list[tuple]]:
    """The coordinates (physical, as each table is called) at which the fast path reads the
    patchable tables for ``design`` (module docstring)."""
    from diagap.fastpath.cells import table_point
    from diagap.fastpath.field import sample_gaps
    from diagap.fastpath.flowcell import _table_x, cell_coordinates
    from diagap.fastpath.fringe import OVERHANG_CAP
    from diagap.fem.air import air_properties

    b, d = design.backplate, design.diaphragm
    g, acc = b.gap_m, design.analysis.accuracy
    out: dict[str, list[tuple]] = {}
    if b.hole_lattice in ("hex", "square"):
        out[f"cell-{b.hole_lattice}"] = [
            table_point(b.hole_radius_m, b.hole_pitch_m, b.thickness_m, gj)
            for gj in sample_gaps(g, acc)]
        air = air_properties(*design.air_conditions)
        out["flowcell"] = [_table_x(cell_coordinates(b.hole_lattice, b.hole_radius_m,
                                                     b.hole_pitch_m, b.thickness_m, g,
                                                     air.mean_free_path_m))]
    k = min(d.size_m - b.electrode_size_m, OVERHANG_CAP * g) / g
    out["rim"] = [(1.0 + k, b.thickness_m / g)]
    return out


def _corner_designs(design, ranges) -> list:
    """The nominal design and the corners of the box (module docstring); corners outside the
    design rules are left out."""
    from diagap.design import DesignError, with_overrides

    paths = [p for p, _, _ in ranges]
    if len(ranges) <= 10:
        points = list(itertools.product(*[(lo, hi) for _, lo, hi in ranges]))
    else:
        rng = np.random.default_rng(0)
        lo = np.array([r[1] for r in ranges], float)
        hi = np.array([r[2] for r in ranges], float)
        points = [tuple(lo + (hi - lo) * rng.random(len(ranges))) for _ in range(1024)]
        nominal = {p: None for p in paths}
        for i, (p, a, b) in enumerate(ranges):
            for v in (a, b):
                pt = [nominal[q] for q in paths]
                pt[i] = v
                points.append(tuple(pt))
    out = [design]
    for pt in points:
        try:
            out.append(with_overrides(design, {p: float(v) for p, v in zip(paths, pt)
                                               if v is not None}))
        except DesignError:
            continue
    return out


def study_patches(design, ranges) -> PatchSet:
    """The regions of the patchable tables that ``design`` with the values of ``ranges``
    (``(path, low, high)``, SI) varied inside their bounds reaches (module docstring)."""
    acc = design.analysis.accuracy
    seen: dict[str, list] = {}
    for probe in _corner_designs(design, ranges):
        for name, pts in table_points(probe).items():
            seen.setdefault(name, []).extend(pts)
    regions = []
    for name in sorted(seen):
        axes = _spec(name, acc)["axes"]
        u = np.array([[a.to_mapped(v) for a, v in zip(axes, x)] for x in seen[name]], float)
        if not np.all(np.isfinite(u)):
            continue
        lo, hi = u.min(axis=0), u.max(axis=0)
        width = hi - lo
        pad = np.where(width > FIXED_WIDTH, MARGIN * width, 0.0)
        g_lo = np.array([a.breaks[0] for a in axes])
        g_hi = np.array([a.breaks[-1] for a in axes])
        slack = 1e-9 * np.maximum(1.0, np.abs(g_hi - g_lo))
        fixed = width <= FIXED_WIDTH
        lo = np.where(fixed, lo, np.maximum(lo - pad, g_lo))
        hi = np.where(fixed, lo, np.minimum(hi + pad, g_hi))
        if np.any(lo < g_lo - slack) or np.any(hi > g_hi + slack) or \
                np.any(~fixed & (hi - lo <= FIXED_WIDTH)):
            continue  # the box reaches this table only outside its validated range
        lows = tuple(float(a.from_mapped(v)) for a, v in zip(axes, lo))
        highs = tuple(lw if f else float(a.from_mapped(v))
                      for a, v, f, lw in zip(axes, hi, fixed, lows))
        regions.append(Region(name, acc, lows, highs))
    return PatchSet(acc, tuple(regions))


@dataclass(frozen=True)
class PatchTable:
    """A patch: its region and the table over its free coordinates; called like the global
    table (``table(x)`` with every coordinate), it raises
    :class:`~diagap.fastpath.FastPathUnavailable` outside the region."""

    region: Region
    inner: TensorTable
    axis_names: tuple

    @property
    def names(self) -> tuple:
        return self.inner.names

    @property
    def held_out_error(self) -> np.ndarray:
        return self.inner.held_out_error

    def free(self) -> list[int]:
        return [i for i, (lo, hi) in enumerate(zip(self.region.lows, self.region.highs))
                if hi != lo]

    def covers(self, x) -> bool:
        for v, lo, hi in zip(x, self.region.lows, self.region.highs):
            pad = 1e-9 * max(abs(lo), abs(hi))
            if not (np.isfinite(v) and lo - pad <= v <= hi + pad):
                return False
        return True

    def __call__(self, x) -> np.ndarray:
        from diagap.fastpath import FastPathUnavailable

        x = [float(v) for v in x]
        if not self.covers(x):
            name, v, lo, hi = next(
                (n, v, lo, hi) for n, v, lo, hi in zip(self.axis_names, x, self.region.lows,
                                                       self.region.highs)
                if not (lo - 1e-9 * max(abs(lo), abs(hi)) <= v
                        <= hi + 1e-9 * max(abs(lo), abs(hi))))
            raise FastPathUnavailable(
                f"{self.region.name} patch: {name} = {v:.6g} outside the study's range "
                f"[{lo:.6g}, {hi:.6g}]")
        return self.inner([x[i] for i in self.free()])


def _full(template: tuple, free: tuple, u) -> tuple:
    x = list(template)
    for i, v in zip(free, u):
        x[i] = float(v)
    return tuple(x)


def _call_full(func, template, free, u) -> dict:
    return func(_full(template, free, u))


def _group_full(last, template, free, group) -> list:
    head, lasts = group
    x = _full(template, free[:-1], head)
    return last(x[:-1], lasts)


class _ByHead:
    """A table mapper that sends the points differing only in their last (free, and last of
    the global table) coordinate to ``last`` together: one mesh per geometry."""

    def __init__(self, inner, last, template, free):
        self.inner, self.last, self.template, self.free = inner, last, template, free

    def __call__(self, func, points):
        points = [tuple(p) for p in points]
        groups: dict = {}
        for i, p in enumerate(points):
            groups.setdefault(p[:-1], []).append(i)
        heads = list(groups)
        batches = self.inner(partial(_group_full, self.last, self.template, self.free),
                             [(h, tuple(points[i][-1] for i in groups[h])) for h in heads])
        out = [None] * len(points)
        for h, batch in zip(heads, batches):
            for i, row in zip(groups[h], batch):
                out[i] = row
        return out


def _build(region: Region, mapper) -> tuple[TensorTable, dict]:
    from diagap.fastpath.nested import build_nested_table

    spec = _spec(region.name, region.accuracy)
    axes = spec["axes"]
    free = tuple(i for i, (lo, hi) in enumerate(zip(region.lows, region.highs)) if hi != lo)
    template = tuple(region.lows)
    func = partial(_call_full, spec["func"], template, free)
    if not free:
        row = mapper(func, [()])[0]
        names = tuple(sorted(k for k, v in row.items() if v is not None
                             and math.isfinite(float(v))))
        values = np.array([float(row[n]) for n in names])
        table = TensorTable((), names, values, values > 0, np.zeros(len(names)))
        return table, {"reference_points": 1, "uncertified": [], "nodes": []}
    patch_axes = [Axis(axes[i].name, axes[i].log,
                       (float(axes[i].to_mapped(region.lows[i])),
                        float(axes[i].to_mapped(region.highs[i]))), 3) for i in free]
    last_free = free[-1] == len(axes) - 1
    if spec["last"] is not None and last_free:
        mapper = _ByHead(mapper, spec["last"], template, free)
    return build_nested_table(func, patch_axes, tol=spec["tol"], max_nodes=MAX_NODES,
                              mapper=mapper, validate=VALIDATE, seed=3, drive=spec["drive"])


def patch_table(region: Region, mapper) -> tuple[PatchTable, dict]:
    """The patch over ``region`` (cached on disk, kept in memory; built with ``mapper`` on a
    miss: a read-only mapper raises :class:`~diagap.fastpath.FastPathUnavailable`)."""
    from diagap.fastpath.refine import serial_mapper
    from diagap.fastpath.store import held_table, module_hash

    spec = _spec(region.name, region.accuracy)
    params = {**region.key(), "tol": spec["tol"], "start": 3, "max_nodes": MAX_NODES,
              "validate": VALIDATE, "code": spec["code"], "patch": module_hash(__file__)}
    def build():
        t0 = time.perf_counter()
        table, facts = _build(region, mapper or serial_mapper)
        log.info("patch %s built in %.1f s: %s", region.name, time.perf_counter() - t0, facts)
        return table, facts

    table, facts = held_table("fastpath-patch", params, build)
    return PatchTable(region, table, tuple(a.name for a in spec["axes"])), facts


def active() -> PatchSet | None:
    """The patch set of the enclosing :func:`using`, if any."""
    return _ACTIVE.get()


@contextlib.contextmanager
def using(patches: PatchSet | None):
    """Make ``patches`` the active patch set inside the block (None: the global tables)."""
    token = _ACTIVE.set(patches)
    try:
        yield patches
    finally:
        _ACTIVE.reset(token)


def active_table(name: str, accuracy: str, mapper) -> tuple[PatchTable, dict] | None:
    """The active patch of table ``name`` at ``accuracy`` (built with ``mapper`` if missing),
    or None when no patch set is active or it has no region for ``name``."""
    patches = _ACTIVE.get()
    region = None if patches is None else patches.region(name, accuracy)
    if region is None:
        return None
    return patch_table(region, mapper)
