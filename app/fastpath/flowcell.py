r"""The perforation cell in scaled form: one table serves every hole of the range.

The Stokes cell (:mod:`diagap.fem.film.stokes`) is solved in lengths of the gap g, velocities
of the diaphragm speed v and pressures of μv/g, so that its flow resistance is

    R_cell = (μ / g³) · Ẑ(R_c/g, r/g, t/g, H/g, ℓ_s/g)                         (Pa·s/m³)

with r the hole radius, t the backplate thickness, R_c the radius of the circle of the cell's
area (√(√3/2π)·p for the hexagonal lattice of pitch p, p/√π for the square one), H = p the
exit chamber and ℓ_s = λ the Maxwell slip length (accommodation 1, as in the damping stage).
The exit chamber is long enough for the jet to have merged (H/R_c = 1.90 hex, 1.77 square):
changing H/R_c between the two, or to 3, moves Ẑ by ≤ 1e-4 (measured), below the Stokes FE's
own mesh scatter, so one table made with H/R_c = 1.90 serves both lattices. The table axes
(all logarithmic) are four dimensionless groups,

    x = (r/(R_c − r), g/R_c, t/R_c, Kn = λ/g),

the first a logit of r/R_c that sends the touching-holes limit r → R_c (where the annulus of
film around the hole closes) to infinity, so that Ẑ stays smooth on it.

The table holds Ẑ as a factor F = Ẑ / Ẑ₀ over a closed form with first-order slip (scaled
units: μ = 1, g = 1, lengths in gaps):

    Ẑ₀ = (3/(2π)) (4A − A² − 2 ln A − 3)/(1 + 6 Kn)            film of the cell (Škvor 1969;
                                                                Bao et al. 2003; Maxwell slip
                                                                between plates: flow × (1 + 6 Kn))
       + 8t / (π r⁴ (1 + 4 Kn/r))                               Hagen–Poiseuille with slip
       + 3 / r³                                                 Sampson's orifice (1891),

A = r²/R_c². Ẑ₀ carries the power laws over the decades of the range, so F stays within
0.8 … 2 and is interpolated as its logarithm on Chebyshev segments
(:mod:`diagap.fastpath.grid`), refined towards 1e-3 relative at held-out midpoints and random
points against the Stokes FE (:mod:`diagap.fastpath.refine`, one halving per segment at
most). F changes fastest with the gap where the film around the hole is about as wide as the
gap (the flow turning into the hole then costs as much as the film): that axis starts with
three segments, the hole-radius axis with two; along the Knudsen axis one segment of seven
nodes interpolates as well as two of five (1-D cuts at eight geometries, six random and the two
corners: ≤ 2.8e-5 between the nodes either way; five nodes 0.6 … 3.8e-4).

At "draft" (Stokes cell levels 0.7 and 0.35 gaps), with the hole-radius and Knudsen axes
starting at one segment, the build took 6905 Stokes solves, 20 min on two shared cores (the
refinement halved the Knudsen axis), and ended with a held-out error of 8.4e-4 at its worst
point; against the stage at 20 random designs the hole resistance was within 1.22e-3 (18 of
20 designs within 1e-3 on every output). The present start (9126 points before any
refinement) built in 561 s on two cores shared with the test suite: 10133 Stokes solves,
held-out error 4.4e-4 on the resistance; against the stage at 50 random designs
(tests/bench/bench_fastpath_all.py) the damping outputs were within 5.0e-4. With the hole
ratio's range widened from 0.76 to 0.86 (the same start, no segment halved): 10133 Stokes
solves in 522 s on two idle cores, held-out error 5.9e-4; 50 random designs with r/R_c up to
0.85: hole resistance within 4.9e-4 of the stage, every damping output within 1e-3 (the
film's cutoff frequency 9.95e-4 at worst). The points that differ only in Kn share one mesh,
one assembly and the blocks restricted to the free unknowns per level (:func:`scaled_cells`,
``build_table(along_last=...)``; each Kn then costs one sparse LU): the same 10133 points,
values within 5e-7 of the earlier build (median 1.5e-11; the largest at r/R_c = 0.1 with the
thickest plate, where the saddle-point solve is worst conditioned: two direct solves that only
order their arithmetic differently differ as much there), built in 185 s on two idle cores
(was 506 s one point at a time). Then the Knudsen axis went to one segment of seven nodes, the
saddle-point LU to the minimum-degree ordering of K + Kᵀ with diagonal pivots
(:func:`diagap.fem.film.stokes._saddle_solve`) and each point to the finest mesh level alone:
8051 points, 114.5 s at "draft" (held-out error 5.06e-4) and 248 s at "normal" (4.06e-4), on
two cores. Where the error came from:

* the FE's own scatter (the earlier table, draft level 0.5: held-out 2.4e-3). Along the Knudsen
  axis the factor is smooth to 1e-8 (one mesh for every Kn), but along the three geometric axes
  the FE at 0.5 scattered by up to 9e-4 (rms 2e-4) about a smooth curve from one geometry's
  mesh to its neighbour's (unstructured meshes, not nested; two elements across the film); the
  tensor interpolant carries the scatter of its nodes, times its Lebesgue constants, into the
  held-out points, which scatter themselves. At level 0.35 the scatter is ≤ 1.7e-4 (rms 6e-5);
* then the hole-radius axis: with one segment of 7 nodes (6905 points, held-out 8.4e-4 at the
  refinement's probes, which sit on the first, middle and last nodes of the other axes) the
  table was up to 1.2e-3 off the FE at random designs (2 of 20 above 1e-3; the error did not
  move between neighbouring geometries and vanished where that coordinate was snapped to a
  node); with two segments ≤ 2e-4 along that axis (1-D checks).

The fast path uses the table within its measured error
(:data:`diagap.fastpath.film.CELL_TOL`). The table reproduces the Stokes FE of one accuracy
setting on its finest mesh level, the value the damping stage takes. The stage's coarser level
gives the FE's own Richardson estimate of Ẑ (4e-4 … 4e-3 at "draft", 2e-4 … 1e-3 at "normal");
the fast path does not report it, and the table no longer solves that level (it cost a fifth
of each point and its tabulated estimate never met the tolerance).

Validated range: :data:`CELL_RANGE`.
"""
from __future__ import annotations

import math
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable
from diagap.fastpath.store import module_hash

__all__ = ["CELL_RANGE", "CELL_RADIUS_OVER_PITCH", "cell_table", "scaled_cell", "scaled_cells",
           "closed_form_scaled", "cell_coordinates", "cell_resistance_scaled", "outside"]

#: The validated range of the cell table, (low, high) of each dimensionless group (R_c the
#: radius of the circle of the cell's area, 0.525 p hex, 0.564 p square):
#:
#: - ``hole_radius_over_cell_radius`` r/R_c: open area 1 % … 74 %, r/p 0.053 … 0.45 (hex,
#:   the electrostatic cell table's range), 0.056 … 0.485 (square), from sparse condenser
#:   backplates to open MEMS backplates near the r < p/2 limit of the schema;
#: - ``gap_over_cell_radius`` g/R_c: g/p 0.053 … 0.53 (hex): a 16 µm gap over 0.3 mm pitch
#:   to a 5 µm gap over 10 µm pitch (the demo: 0.38; measurement capsule 0.13);
#: - ``thickness_over_cell_radius`` t/R_c: t/p 0.05 … 2.1 (hex): thin MEMS backplates (1 µm
#:   over 20 µm) to thick condenser plates (the electret example: 1.9);
#: - ``knudsen`` λ/g: 25 µm gaps at sea level (2.6e-3) to 1 µm gaps at 65 kPa (0.1), the limit
#:   of the Stokes cell's first-order slip model (Kn ≲ 0.1, :mod:`diagap.fem.film.stokes`);
#:   beyond it the slip model is out of its range and the cell FE's mesh-to-mesh scatter at
#:   "draft" (≈5e-4 at Kn = 1) no longer allows a 1e-3 table.
CELL_RANGE = {
    "hole_radius_over_cell_radius": (0.1, 0.86),
    "gap_over_cell_radius": (0.1, 1.0),
    "thickness_over_cell_radius": (0.1, 4.0),
    "knudsen": (1.0e-3, 0.1),
}
#: R_c/p of the circle of equal area
CELL_RADIUS_OVER_PITCH = {"hex": math.sqrt(math.sqrt(3.0) / (2.0 * math.pi)),
                          "square": 1.0 / math.sqrt(math.pi)}
#: H/R_c of the tabulated cells (the hexagonal lattice's exit chamber H = p)
_EXIT_OVER_CELL = 1.0 / CELL_RADIUS_OVER_PITCH["hex"]
#: (segments, Chebyshev nodes per segment) of each axis at the start of the refinement
_START = ((2, 7), (3, 5), (1, 6), (1, 7))


def _table_x(x) -> tuple:
    """Table coordinates (r/(R_c − r), g/R_c, t/R_c, Kn) of the groups of CELL_RANGE."""
    q, gc, tc, kn = (float(v) for v in x)
    return (q / (1.0 - q), gc, tc, kn)


def _groups(y) -> tuple:
    lg, gc, tc, kn = (float(v) for v in y)
    return (lg / (1.0 + lg), gc, tc, kn)


def closed_form_scaled(x) -> float:
    """Ẑ₀ of the module docstring (scaled: μ = 1, g = 1) at the groups x of CELL_RANGE."""
    q, gc, tc, kn = (float(v) for v in x)
    r, t = q / gc, tc / gc
    a = q * q
    film = 3.0 / (2.0 * math.pi) * (4 * a - a * a - 2 * math.log(a) - 3) / (1 + 6 * kn)
    return film + 8.0 * t / (math.pi * r**4 * (1.0 + 4.0 * kn / r)) + 3.0 / r**3


def scaled_cell(accuracy: str, y) -> dict:
    """The Stokes FE of the cell at table coordinates y: the factor over Ẑ₀."""
    return scaled_cells(accuracy, tuple(y)[:3], (tuple(y)[3],))[0]


def scaled_cells(accuracy: str, head, knudsens) -> list[dict]:
    """:func:`scaled_cell` at the table coordinates (*head, Kn) for each Kn of ``knudsens``:
    one mesh and one assembly serve every Knudsen number of a geometry. Only the finest mesh
    level of the accuracy setting is solved: its value is what the damping stage takes, and
    the coarser level would only give the FE's own error estimate, which the fast path does
    not report."""
    from diagap.fem.film.stokes import ACCURACY_LEVELS, scaled_cell_resistances
    from diagap.meshes.flow_cell import FlowCellGeometry

    xs = [_groups((*head, kn)) for kn in knudsens]
    q, gc, tc, _ = xs[0]
    rc = 1.0 / gc
    geo = FlowCellGeometry(rc, q * rc, tc * rc, _EXIT_OVER_CELL * rc)
    res = scaled_cell_resistances(geo, [x[3] for x in xs], accuracy,
                                  levels=(ACCURACY_LEVELS[accuracy],))
    return [{"resistance_factor": r["resistance"] / closed_form_scaled(x)}
            for r, x in zip(res, xs)]


def _drives(name: str) -> bool:
    return name == "resistance_factor"


def cell_axes() -> list:
    lo = _table_x([v[0] for v in CELL_RANGE.values()])
    hi = _table_x([v[1] for v in CELL_RANGE.values()])
    axes = []
    for name, a, b, (segments, n) in zip(("hole_radius_over_film_width", *list(CELL_RANGE)[1:]),
                                         lo, hi, _START):
        breaks = tuple(np.linspace(math.log(a), math.log(b), segments + 1))
        axes.append(Axis(name, True, breaks, n))
    return axes


def cell_table(accuracy: str = "normal", *, tol: float = 1e-3, mapper=None,
               validate: int = 8, max_splits: int = 1) -> tuple[TensorTable, dict]:
    """The scaled cell table of an accuracy setting (cached on disk, built on demand).

    Parameters
    ----------
    accuracy : {"draft", "normal", "fine"}
        The Stokes cell's mesh levels the table reproduces.
    tol : float
        Allowed relative error of the resistance against the Stokes FE at held-out points.
    mapper : callable, optional
        :func:`diagap.fastpath.refine.mapper_for` (default: local processes on every core).
    validate : int
        Random held-out points checked after the refinement.
    max_splits : int
        How often a segment may be halved.
    """
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table

    def build():
        return build_table(partial(scaled_cell, accuracy), cell_axes(), tol=tol,
                           mapper=mapper or mapper_for(), validate=validate,
                           max_splits=max_splits, drive=_drives,
                           along_last=partial(scaled_cells, accuracy))

    params = {"accuracy": accuracy, "tol": tol, "validate": validate, "max_splits": max_splits,
              "range": {k: list(v) for k, v in CELL_RANGE.items()}, "start": _START,
              "code": module_hash(__file__)}
    return held_table("fastpath-flowcell", params, build)


def cell_coordinates(lattice: str, hole_radius_m: float, hole_pitch_m: float,
                     backplate_thickness_m: float, gap_m: float,
                     mean_free_path_m: float) -> tuple:
    """The groups (r/R_c, g/R_c, t/R_c, λ/g) of :data:`CELL_RANGE` of a backplate."""
    rc = CELL_RADIUS_OVER_PITCH[lattice] * float(hole_pitch_m)
    return (hole_radius_m / rc, gap_m / rc, backplate_thickness_m / rc, mean_free_path_m / gap_m)


def outside(x) -> str | None:
    """A one-line note on the first group of x outside :data:`CELL_RANGE`, else None."""
    for (name, (lo, hi)), v in zip(CELL_RANGE.items(), x):
        if not (np.isfinite(v) and lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9)):
            return f"{name} = {v:.6g} outside the cell table's range [{lo:g}, {hi:g}]"
    return None


def cell_resistance_scaled(table: TensorTable, x) -> tuple[float, float]:
    """Ẑ from the table at the groups x (scaled: R_cell = μ Ẑ / g³)."""
    factor = float(table(_table_x(x))[list(table.names).index("resistance_factor")])
    return factor * closed_form_scaled(x)
