"""Diaphragm meshes: a unit disk and a square, graded towards the edge.

Coordinates are scaled: the disk has radius 1, the square is [-1, 1]² (lengths in units of the
half-side). The element size grows from ``h_edge`` at the edge to ``h_center`` inside with the
linear law h(d) = min(h_center, h_edge + grading·d), d being the distance to the edge; gmsh
evaluates it as a ``MathEval`` size field (``Mesh.Algorithm = 5``, Delaunay, avoids slivers).
Meshes are cached on disk by :mod:`diagap.meshes.cache`.
"""
from __future__ import annotations

import numpy as np
from skfem import MeshTri

from diagap.meshes._gmsh import gmsh_session, triangles
from diagap.meshes.cache import cached_arrays

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


def _embed(gmsh, outer: int, inner_curve) -> None:
    """Split the surface ``outer`` along the curve(s) ``inner_curve`` (a conforming interface)."""
    if inner_curve is not None:
        gmsh.model.occ.fragment([(2, outer)], inner_curve)


def _build_disk(h_center: float, h_edge: float, grading: float, inner: float | None = None) -> dict:
    with gmsh_session("disk") as gmsh:
        disk = gmsh.model.occ.addDisk(0, 0, 0, 1.0, 1.0)
        if inner is not None:
            _embed(gmsh, disk, [(1, gmsh.model.occ.addCircle(0, 0, 0, inner))])
        gmsh.model.occ.synchronize()
        _size_field(gmsh, "1 - Sqrt(x*x + y*y)", h_center, h_edge, grading)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def _build_square(h_center: float, h_edge: float, grading: float,
                  inner: float | None = None) -> dict:
    with gmsh_session("square") as gmsh:
        sq = gmsh.model.occ.addRectangle(-1.0, -1.0, 0, 2.0, 2.0)
        if inner is not None:
            r = gmsh.model.occ.addRectangle(-inner, -inner, 0, 2 * inner, 2 * inner)
            _embed(gmsh, sq, [(2, r)])
        gmsh.model.occ.synchronize()
        _size_field(gmsh, "1 - Max(Abs(x), Abs(y))", h_center, h_edge, grading)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t}


def _check_inner(inner):
    if inner is not None and not (0.0 < inner < 1.0):
        raise ValueError(f"inner = {inner}: the embedded electrode edge must lie in (0, 1)")
    return None if inner is None else float(inner)


def disk_mesh(h_center: float = 0.1, h_edge: float = 0.02, grading: float = 0.3,
              inner: float | None = None) -> MeshTri:
    """Triangular mesh of the unit disk, graded to the rim (cached).

    ``inner`` (0 < inner < 1) embeds the circle r = inner as element edges, so that a load on an
    electrode of that radius is integrated exactly (no element straddles the electrode edge).
    """
    _check(h_center, h_edge, grading)
    inner = _check_inner(inner)
    params = {"h_center": h_center, "h_edge": h_edge, "grading": grading, "inner": inner}
    arr = cached_arrays("disk", params, lambda: _build_disk(h_center, h_edge, grading, inner))
    return MeshTri(np.ascontiguousarray(arr["p"]), np.ascontiguousarray(arr["t"]))


def square_mesh(h_center: float = 0.1, h_edge: float = 0.02, grading: float = 0.3,
                inner: float | None = None) -> MeshTri:
    """Triangular mesh of the square [-1, 1]², graded to the edges (cached).

    ``inner`` embeds the concentric square [-inner, inner]² (an electrode) as element edges.
    """
    _check(h_center, h_edge, grading)
    inner = _check_inner(inner)
    params = {"h_center": h_center, "h_edge": h_edge, "grading": grading, "inner": inner}
    arr = cached_arrays("square", params, lambda: _build_square(h_center, h_edge, grading, inner))
    return MeshTri(np.ascontiguousarray(arr["p"]), np.ascontiguousarray(arr["t"]))
