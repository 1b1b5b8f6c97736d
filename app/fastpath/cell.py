r"""The perforation cell in scaled form: one table per lattice serves every hole of the range.

The Stokes cell (:mod:`diagap.fem.film.stokes`) is solved in lengths of the gap g, velocities
of the diaphragm speed v and pressures of μv/g, so that its flow resistance is

    R_cell = (μ / g³) · Ẑ(R_c/g, r/g, t/g, H/g, ℓ_s/g)                         (Pa·s/m³)

with r the hole radius, t the backplate thickness, R_c the radius of the circle of the cell's
area (√(√3/2π)·p for the hexagonal lattice of pitch p, p/√π for the square one), H = p the
exit chamber and ℓ_s = λ the Maxwell slip length (accommodation 1, as in the damping stage).
For one lattice R_c/p and H/p are fixed numbers, so Ẑ is a function of four dimensionless
groups,

    x = (r/p, g/p, t/p, Kn = λ/g).

The table holds Ẑ as a smooth factor F = Ẑ / Ẑ₀ over a closed form with first-order slip
(scaled units: μ = 1, g = 1, lengths in gaps):

    Ẑ₀ = (3/(2π)) (4A − A² − 2 ln A − 3)/(1 + 6 Kn)            film of the cell (Škvor 1969;
                                                                Bao et al. 2003; Maxwell slip
                                                                between plates: flow × (1 + 6 Kn))
       + 8t / (π r⁴ (1 + 4 Kn/r))                               Hagen–Poiseuille with slip
       + 3 / r³                                                 Sampson's orifice (1891),

A = r²/R_c². Ẑ₀ carries the power laws over the decades of the range, so F stays within a
factor of a few and is nearly polynomial on log axes. F is interpolated as its logarithm on
Chebyshev segments in ln x (:mod:`diagap.fastpath.grid`), refined until held-out midpoints and
random points agree with the Stokes FE within 1e-3 relative (:mod:`diagap.fastpath.refine`).
The table reproduces the Stokes FE of one accuracy setting (its mesh levels); the FE's own
Richardson estimate of Ẑ (``rel_error``) is tabulated beside it.

Validated range: :data:`CELL_RANGE`.
"""
from __future__ import annotations

import math
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["CELL_RANGE", "CELL_RADIUS_OVER_PITCH", "cell_table", "scaled_cell",
           "closed_form_scaled", "cell_coordinates", "cell_resistance_scaled"]

#: The validated range of the cell table, (low, high) of each dimensionless group:
#:
#: - ``hole_radius_over_pitch`` r/p: open area 0.9 % … 58 % (hex), from sparse condenser
#:   backplates to MEMS backplates close to the r < p/2 limit of the schema;
#: - ``gap_over_pitch`` g/p: a 25 µm gap over 0.8 mm holes to a 6 µm gap over 10 µm holes
#:   (the demo: 0.2; measurement capsule 0.067);
#: - ``thickness_over_pitch`` t/p: thin MEMS backplates (1 µm over 30 µm) to thick condenser
#:   plates (the electret example: 1.0);
#: - ``knudsen`` λ/g: 25 µm gaps at sea level (2.6e-3) to 1 µm gaps at 65 kPa (0.1), the limit
#:   of the Stokes cell's first-order slip model (Kn ≲ 0.1, :mod:`diagap.fem.film.stokes`);
#:   beyond it the slip model is out of its range and the cell FE's mesh-to-mesh scatter at
#:   "draft" (≈5e-4 at Kn = 1) no longer allows a 1e-3 table.
CELL_RANGE = {
    "hole_radius_over_pitch": (0.05, 0.4),
    "gap_over_pitch": (0.03, 0.6),
    "thickness_over_pitch": (0.03, 3.0),
    "knudsen": (1.0e-3, 0.1),
}
#: R_c/p of the circle of equal area
CELL_RADIUS_OVER_PITCH = {"hex": math.sqrt(math.sqrt(3.0) / (2.0 * math.pi)),
                          "square": 1.0 / math.sqrt(math.pi)}
_NODES = 5


def closed_form_scaled(lattice: str, x) -> float:
    """Ẑ₀ of the module docstring (scaled: μ = 1, g = 1)."""
    rp, gp, tp, kn = (float(v) for v in x)
    rc = CELL_RADIUS_OVER_PITCH[lattice] / gp
    r, t = rp / gp, tp / gp
    a = (r / rc) ** 2
    film = 3.0 / (2.0 * math.pi) * (4 * a - a * a - 2 * math.log(a) - 3) / (1 + 6 * kn)
    return film + 8.0 * t / (math.pi * r**4 * (1.0 + 4.0 * kn / r)) + 3.0 / r**3


def scaled_cell(lattice: str, accuracy: str, x) -> dict:
    """The Stokes FE of the cell at x = (r/p, g/p, t/p, Kn): the factor over Ẑ₀ and the FE's
    error estimate."""
    from diagap.fem.film.stokes import scaled_cell_resistance
    from diagap.meshes.flow_cell import FlowCellGeometry

    rp, gp, tp, kn = (float(v) for v in x)
    p = 1.0 / gp
    geo = FlowCellGeometry(CELL_RADIUS_OVER_PITCH[lattice] * p, rp * p, tp * p, p)
    res = scaled_cell_resistance(geo, kn, accuracy)
    return {"resistance_factor": res["resistance"] / closed_form_scaled(lattice, x),
            "rel_error": float(res["rel_error"])}


def _drives(name: str) -> bool:
    return name == "resistance_factor"


def module_hash(path: str) -> str:
    """SHA-256 of a module's source: a table key changes with the code that defines it."""
    import hashlib
    from pathlib import Path

    return hashlib.sha256(Path(path).read_bytes()).hexdigest()[:16]


def cell_axes() -> list:
    return [Axis(name, True, (math.log(lo), math.log(hi)), _NODES)
            for name, (lo, hi) in CELL_RANGE.items()]


def cell_table(lattice: str, accuracy: str = "normal", *, tol: float = 1e-3, mapper=None,
               validate: int = 8, max_splits: int = 2) -> tuple[TensorTable, dict]:
    """The scaled cell table of a lattice and accuracy setting (cached on disk).

    Parameters
    ----------
    lattice : {"hex", "square"}
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
        return build_table(partial(scaled_cell, lattice, accuracy), cell_axes(), tol=tol,
                           mapper=mapper or mapper_for(), validate=validate,
                           max_splits=max_splits, drive=_drives)

    params = {"lattice": lattice, "accuracy": accuracy, "tol": tol, "validate": validate,
              "max_splits": max_splits,
              "range": {k: list(v) for k, v in CELL_RANGE.items()}, "nodes": _NODES,
              "code": module_hash(__file__)}
    return held_table("fastpath-cell", params, build)


def cell_coordinates(hole_radius_m: float, hole_pitch_m: float, backplate_thickness_m: float,
                     gap_m: float, mean_free_path_m: float) -> tuple:
    """x = (r/p, g/p, t/p, λ/g) of a backplate."""
    p = float(hole_pitch_m)
    return (hole_radius_m / p, gap_m / p, backplate_thickness_m / p, mean_free_path_m / gap_m)


def outside(x) -> str | None:
    """A one-line note on the first group of x outside :data:`CELL_RANGE`, else None."""
    for (name, (lo, hi)), v in zip(CELL_RANGE.items(), x):
        if not (np.isfinite(v) and lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9)):
            return f"{name} = {v:.6g} outside the cell table's range [{lo:g}, {hi:g}]"
    return None


def cell_resistance_scaled(table: TensorTable, lattice: str, x) -> tuple[float, float]:
    """(Ẑ, FE error estimate) from the table at x (scaled: R_cell = μ Ẑ / g³)."""
    names = list(table.names)
    vals = table(x)
    factor = float(vals[names.index("resistance_factor")])
    err = float(vals[names.index("rel_error")]) if "rel_error" in names else float("nan")
    return factor * closed_form_scaled(lattice, x), err
