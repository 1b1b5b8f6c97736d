"""Meshes of perforated plates: the rectangular period cell of a hole lattice, and a disk
with an explicit hex array of holes, in scaled coordinates (lengths in units of the pitch).

* :func:`lattice_cell_mesh` — the period cell with two mirror lines of a square lattice
  (the unit square [−½, ½]², one hole at the centre) or of a hexagonal (triangular) lattice
  (the rectangle [−½, ½] × [−√3/2, √3/2], a hole at the centre and a quarter hole at each
  corner, i.e. two holes per cell). Hole radius ``r`` (0: no holes).
* :func:`perforated_strip_mesh` — a strip of n hex period cells side by side with every hole
  explicit (for checks of the homogenised plate).

Both are linear triangles (gmsh, OpenCASCADE booleans) with a uniform target size ``h`` and
``h_hole`` on the hole rims. Meshes are cached on disk (:mod:`diagap.meshes.cache`). This module
knows nothing of physics.
"""
from __future__ import annotations

import math

import numpy as np
from skfem import MeshTri

from diagap.meshes._gmsh import gmsh_session, triangles
from diagap.meshes.cache import cached_arrays

__all__ = ["LATTICES", "lattice_cell_mesh", "cell_half_sides", "perforated_strip_mesh"]

LATTICES = ("square", "hex")


def cell_half_sides(lattice: str) -> tuple[float, float]:
    """Half sides (X, Y) of the period cell in units of the pitch."""
    if lattice == "square":
        return 0.5, 0.5
    if lattice == "hex":
        return 0.5, 0.5 * math.sqrt(3.0)
    raise ValueError(f"lattice: got {lattice!r}, allowed {', '.join(LATTICES)}")


def _sizes(gmsh, h: float, h_hole: float, hole_curves) -> None:
    gmsh.option.setNumber("Mesh.MeshSizeMax", h)
    gmsh.option.setNumber("Mesh.MeshSizeMin", min(h, h_hole) * 0.5)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 1)
    if hole_curves:
        pts = gmsh.model.getBoundary([(1, c) for c in hole_curves], combined=False,
                                     recursive=True)
        gmsh.model.mesh.setSize([p for p in pts if p[0] == 0], h_hole)
        f = gmsh.model.mesh.field.add("Distance")
        gmsh.model.mesh.field.setNumbers(f, "CurvesList", list(hole_curves))
        gmsh.model.mesh.field.setNumber(f, "Sampling", 200)
        th = gmsh.model.mesh.field.add("Threshold")
        gmsh.model.mesh.field.setNumber(th, "InField", f)
        gmsh.model.mesh.field.setNumber(th, "SizeMin", h_hole)
        gmsh.model.mesh.field.setNumber(th, "SizeMax", h)
        gmsh.model.mesh.field.setNumber(th, "DistMin", 0.0)
        gmsh.model.mesh.field.setNumber(th, "DistMax", 4.0 * h)
        gmsh.model.mesh.field.setAsBackgroundMesh(th)


def _hole_curves(gmsh, centres, r: float, tol: float = 1e-6):
    """Curves of the meshed surface lying on one of the hole circles."""
    return [c for _, c in gmsh.model.getEntities(1)
            if any(_on_circle(gmsh, c, cx, cy, r, tol) for cx, cy in centres)]


def _on_circle(gmsh, curve, cx, cy, r, tol) -> bool:
    lo, hi = gmsh.model.getParametrizationBounds(1, curve)
    u = np.linspace(lo[0], hi[0], 5)
    xyz = np.asarray(gmsh.model.getValue(1, curve, u)).reshape(-1, 3)
    return bool(np.all(np.abs(np.hypot(xyz[:, 0] - cx, xyz[:, 1] - cy) - r) < tol))


def _cell_arrays(lattice: str, r: float, h: float, h_hole: float) -> dict:
    X, Y = cell_half_sides(lattice)
    with gmsh_session("lattice-cell") as gmsh:
        occ = gmsh.model.occ
        rect = occ.addRectangle(-X, -Y, 0.0, 2 * X, 2 * Y)
        centres = [(0.0, 0.0)]
        if lattice == "hex":
            centres += [(sx * X, sy * Y) for sx in (-1, 1) for sy in (-1, 1)]
        if r > 0:
            disks = [(2, occ.addDisk(cx, cy, 0.0, r, r)) for cx, cy in centres]
            occ.cut([(2, rect)], disks)
        occ.synchronize()
        curves = _hole_curves(gmsh, centres, r) if r > 0 else []
        _sizes(gmsh, h, h_hole, curves)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def lattice_cell_mesh(lattice: str, hole_radius: float, h: float,
                      h_hole: float | None = None) -> MeshTri:
    """The period cell of ``lattice`` ("square" | "hex"), pitch 1, hole radius ``hole_radius``
    (< ½; 0 for none), target element size ``h`` (``h_hole`` on the hole rims, default h/2)."""
    cell_half_sides(lattice)
    if not (0.0 <= hole_radius < 0.5):
        raise ValueError(f"hole_radius: got {hole_radius!r}, allowed 0 <= r < 0.5 (pitch 1)")
    h_hole = 0.5 * h if h_hole is None else h_hole
    key = {"lattice": lattice, "r": float(hole_radius), "h": float(h), "h_hole": float(h_hole)}
    arr = cached_arrays("lattice-cell", key, lambda: _cell_arrays(lattice, hole_radius, h, h_hole))
    return MeshTri(arr["p"], arr["t"])


def _strip_arrays(n_cells, r, h, h_hole):
    X, Y = cell_half_sides("hex")
    centres = [(i + 0.5, 0.0) for i in range(n_cells)] + \
        [(float(i), sy * Y) for i in range(n_cells + 1) for sy in (-1, 1)]
    with gmsh_session("perforated-strip") as gmsh:
        occ = gmsh.model.occ
        rect = occ.addRectangle(0.0, -Y, 0.0, float(n_cells), 2 * Y)
        holes = [(2, occ.addDisk(cx, cy, 0.0, r, r)) for cx, cy in centres]
        occ.cut([(2, rect)], holes)
        occ.synchronize()
        _sizes(gmsh, h, h_hole, _hole_curves(gmsh, centres, r))
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def perforated_strip_mesh(n_cells: int, hole_radius: float, h: float,
                          h_hole: float | None = None) -> MeshTri:
    """The strip [0, n] × [−√3/2, √3/2] of ``n_cells`` hex period cells (pitch 1) side by side
    along x, holes of radius ``hole_radius`` at the lattice points (x = i + ½ on the centre line,
    x = i on the long edges, cut there in half)."""
    h_hole = 0.5 * h if h_hole is None else h_hole
    key = {"n": int(n_cells), "r": float(hole_radius), "h": float(h), "h_hole": float(h_hole)}
    arr = cached_arrays("perforated-strip", key,
                        lambda: _strip_arrays(int(n_cells), hole_radius, h, h_hole))
    return MeshTri(arr["p"], arr["t"])
