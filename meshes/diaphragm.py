"""Diaphragm meshes: a unit disk and a square, graded towards the edge.

Coordinates are scaled: the disk has radius 1, the square is [-1, 1]² (lengths in units of the
half-side). The element size grows from ``h_edge`` at the edge to ``h_center`` inside with the
linear law h(d) = min(h_center, h_edge + grading·d), d being the distance to the edge; gmsh
evaluates it as a ``MathEval`` size field (``Mesh.Algorithm = 5``, Delaunay, avoids slivers).
Meshes are cached on disk by :mod:`meshes.cache`.
"""
from __future__ import annotations

import numpy as np
from skfem import MeshTri

from ._gmsh import gmsh_session, triangles
from .cache import cached_arrays

__all__ = ["disk_mesh", "square_mesh"]


def _size_field(gmsh, distance_expr: str, h_center: float, h_edge: float, grading: float) -> None:
    expr = f"Min({h_center}, {h_edge} + {grading}*({distance_expr}))"
    fid = gmsh.model.mesh.field.add("MathEval")
    gmsh.model.mesh.field.setString(fid, "F", expr)
    gmsh.model.mesh.field.setAsBackgroundMesh(fid)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.Algorithm", 5)


def _check(h_center: float, h_edge: float, grading: float) -> None:
    if not (0 < h_edge <= h_center <= 1.0) or grading <= 0:
        raise ValueError(
            f"mesh sizes must satisfy 0 < h_edge <= h_center <= 1 and grading > 0, got "
            f"h_edge={h_edge}, h_center={h_center}, grading={grading}"
        )


def _build_disk(h_center: float, h_edge: float, grading: float) -> dict:
    with gmsh_session("disk") as gmsh:
        gmsh.model.occ.addDisk(0, 0, 0, 1.0, 1.0)
        gmsh.model.occ.synchronize()
        _size_field(gmsh, "1 - Sqrt(x*x + y*y)", h_center, h_edge, grading)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def _build_square(h_center: float, h_edge: float, grading: float) -> dict:
    with gmsh_session("square") as gmsh:
        gmsh.model.occ.addRectangle(-1.0, -1.0, 0, 2.0, 2.0)
        gmsh.model.occ.synchronize()
        _size_field(gmsh, "1 - Max(Abs(x), Abs(y))", h_center, h_edge, grading)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def disk_mesh(h_center: float = 0.1, h_edge: float = 0.02, grading: float = 0.3) -> MeshTri:
    """Triangular mesh of the unit disk, graded to the rim (cached)."""
    _check(h_center, h_edge, grading)
    params = {"h_center": h_center, "h_edge": h_edge, "grading": grading}
    arr = cached_arrays("disk", params, lambda: _build_disk(h_center, h_edge, grading))
    return MeshTri(np.ascontiguousarray(arr["p"]), np.ascontiguousarray(arr["t"]))


def square_mesh(h_center: float = 0.1, h_edge: float = 0.02, grading: float = 0.3) -> MeshTri:
    """Triangular mesh of the square [-1, 1]², graded to the edges (cached)."""
    _check(h_center, h_edge, grading)
    params = {"h_center": h_center, "h_edge": h_edge, "grading": grading}
    arr = cached_arrays("square", params, lambda: _build_square(h_center, h_edge, grading))
    return MeshTri(np.ascontiguousarray(arr["p"]), np.ascontiguousarray(arr["t"]))
