r"""The perforated-backplate cell in scaled form: one table per lattice for every hole pattern.

Physics (:mod:`diagap.fem.field.cell`): Laplace's equation ∇·(ε0∇u) = 0 in the air of one
lattice cell, u = 0 on the diaphragm (z = 0), u = 1 V on the backplate (bottom face, hole wall,
top face), ∂u/∂n = 0 on the symmetry walls of the cell and on the top of the air layer (height
H = p above the backplate). The stage solves the circle-of-equal-area r–z cell: cell radius
R = p·√(κ/π) with κ = √3/2 (hex) or 1 (square), hole radius a, thickness t, gap g, air height
H = p. Every length divided by the pitch p, the boundary-value problem has the parameters

    a/p,  t/p,  g/p  and the lattice (through κ),

and its capacitance density c [F/m²] has the form

.. math:: c = \frac{\varepsilon_0}{g}\,P\!\left(\frac ap, \frac tp, \frac gp; \text{lattice}\right),
          \qquad \text{equivalently}\quad \frac{c\,p}{\varepsilon_0} = \frac{P}{g/p},

P the perforation factor (1 for a solid plate; 1 − open-area fraction plus the fringing of the
hole rims for small g/p). The solver already meshes the cell in units of the gap, so the FE
value P is the same function of the three ratios for every absolute size: one table of P per
lattice and accuracy setting serves every design. The table interpolates P (not c), which stays
between about 0.2 and 1 across the range, on logarithmic axes of 1/2 − a/p (the half-width of
the web between holes: P changes fastest as it narrows), t/p and g/p (g/p spans 2.5 decades).
``lattice = "none"`` is the solid plate, P ≡ 1 (no table).

Validated range: :data:`CELL_RANGE` (the design values); the g/p axis of the table reaches
from ``GAP_TABLE[0]`` times its lower to ``GAP_TABLE[1]`` times its upper end, because the
stage samples c(g) over local gaps [0.25 g, 1.45 g] (:data:`diagap.stages.GAP_TABLE`).
"""
from __future__ import annotations

import math
from functools import partial

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["CELL_RANGE", "CELL_LATTICES", "scaled_cell", "cell_axes", "cell_table",
           "table_gap_range", "table_point"]

#: The validated box of the scaled cell: design values of hole radius / pitch, backplate
#: thickness / pitch and gap / pitch, lower and upper bound. It holds the invented demo
#: capsules (MEMS: a/p = 0.2, t/p = 0.1, g/p = 0.2; measurement capsule: 0.13, 0.17, 0.067;
#: electret capsule: 0.17, 1.0, 0.083) and the usual span of MEMS backplates (pitch 8–30 µm,
#: holes 1.5–6 µm, thickness 0.5–5 µm, gaps 1–10 µm) and condenser capsules (pitch 0.2–1.5 mm,
#: holes 0.03–0.4 mm, plates 0.05–2 mm thick, gaps 10–60 µm); common practice, not a survey.
#: Beyond a/p = 0.45 the holes almost touch (the schema refuses a/p ≥ 0.5).
CELL_RANGE = {
    "hole_radius_over_pitch": (0.05, 0.45),
    "thickness_over_pitch": (0.05, 3.0),
    "gap_over_pitch": (0.02, 1.0),
}
#: changes with the table's reference function or axes (a new cache entry); the solver's code
#: is in the key through :func:`diagap.fastpath.store.source_hash`
TABLE_VERSION = 2
#: Chebyshev nodes on the half-web axis. The c(g) samples of one design lie on a line of g/p at
#: fixed a/p and t/p, so an interpolation error that varies along a/p is common to all of them,
#: but its part that changes with g/p bends C(x), and the distortion (THD ∝ the curvature of
#: 1/C, a small difference) amplifies it. Measured on the one-dimensional cuts at "normal"
#: (t/p, g/p) = (0.12, 0.04), (0.12, 0.24), (0.05, 0.02), (1, 0.5), (3, 0.005), largest
#: relative error of P at 12 points between the nodes: 7 nodes 0.7 … 1.8e-4, 9 nodes
#: 0.6 … 5.3e-5, 11 nodes 0.2 … 1.3e-5. With 7 nodes, one random design of fifty had its
#: c(g) samples 1.3 … 2.7e-4 off the FE (the a/p interpolation alone: snapping a/p to a node
#: left ≤ 1.4e-6) and its 1 % THD level 0.012 dB off the pipeline's; with 9 nodes 3.9e-5 and
#: 0.004 dB. The tables grew from 869 to 1069 FE points (at "normal" 74 s and 64 s on two
#: cores for the two lattices).
WEB_NODES = 9
#: lattices with a table (``"none"``, the solid plate, needs none: P = 1)
CELL_LATTICES = ("hex", "square")


def table_gap_range() -> tuple[float, float]:
    """(lowest, highest) g/p of the table: the stage's c(g) samples of the extreme designs."""
    from diagap.stages import GAP_TABLE

    lo, hi = CELL_RANGE["gap_over_pitch"]
    return GAP_TABLE[0] * lo, GAP_TABLE[1] * hi


def table_point(hole_radius_m: float, pitch_m: float, thickness_m: float,
                gap_m: float) -> tuple:
    """The table coordinates (1/2 − a/p, t/p, g/p) of a hole pattern and a local gap."""
    return (0.5 - hole_radius_m / pitch_m, thickness_m / pitch_m, gap_m / pitch_m)


def scaled_cell(lattice: str, accuracy: str, x) -> dict:
    """The cell FE of the stage at pitch p = 1 m: x = (1/2 − a/p, t/p, g/p) →
    {"perforation_factor": P}."""
    from diagap.fem.field.cell import cell_capacitance

    s, t, g = (float(v) for v in x)
    res = cell_capacitance(g, 0.5 - s, 1.0, lattice, t, accuracy)
    return {"perforation_factor": float(res.perforation_factor)}


def cell_axes(n: int = 7, n_web: int = WEB_NODES) -> list:
    """Starting axes, all logarithmic: the half-width of the solid web between neighbouring
    holes, 1/2 − a/p (P changes fastest as the web narrows; ``n_web`` nodes), t/p and g/p (two
    segments)."""
    a0, a1 = CELL_RANGE["hole_radius_over_pitch"]
    t0, t1 = CELL_RANGE["thickness_over_pitch"]
    g0, g1 = table_gap_range()
    lg0, lg1 = math.log(g0), math.log(g1)
    return [Axis("half_web_over_pitch", True, (math.log(0.5 - a1), math.log(0.5 - a0)), n_web),
            Axis("thickness_over_pitch", True, (math.log(t0), math.log(t1)), n),
            Axis("gap_over_pitch", True, (lg0, 0.5 * (lg0 + lg1), lg1), n)]


def cell_table(lattice: str, accuracy: str = "normal", *, tol: float = 5e-4, mapper=None,
               validate: int = 16, max_splits: int = 4) -> tuple[TensorTable, dict]:
    """The scaled cell table P(a/p, t/p, g/p) of one lattice (cached on disk, built on demand).

    Parameters
    ----------
    lattice : {"hex", "square"}
    accuracy : {"draft", "normal", "fine"}
        The cell solver's accuracy setting the table reproduces.
    tol : float
        Allowed relative interpolation error against the cell FE at the held-out checks
        (half the fast path's 1e-3, so that points between the checks stay within 1e-3).
    mapper : callable, optional
        How reference points are computed (:func:`diagap.fastpath.refine.mapper_for`).
    validate : int
        Random held-out points checked after the refinement.
    max_splits : int
        How often a segment may be halved.

    Returns
    -------
    (TensorTable, dict)
        The table (one output, ``perforation_factor``) and its build facts.
    """
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table

    if lattice not in CELL_LATTICES:
        raise ValueError(f"lattice = {lattice!r}: tables exist for {CELL_LATTICES}")

    def build():
        return build_table(partial(scaled_cell, lattice, accuracy), cell_axes(), tol=tol,
                           max_splits=max_splits, mapper=mapper or mapper_for(),
                           validate=validate, seed=1)

    params = {"lattice": lattice, "accuracy": accuracy, "tol": tol, "validate": validate,
              "max_splits": max_splits, "range": CELL_RANGE, "version": TABLE_VERSION}
    return held_table("fastpath-cell", params, build)
