"""Edge conditions of the Argyris plate as a sparse constrained basis.

The Argyris vertex degrees of freedom are g = (u, u_x, u_y, u_xx, u_xy, u_yy). At an edge vertex
with outward unit normal n and tangent t = (−n_y, n_x) they are rewritten in the local frame
l = (u, u_n, u_t, u_nn, u_nt, u_tt) through g = G l, with ∇u = [n t]·(u_n, u_t) and
H = [n t] H_l [n t]ᵀ. The edge conditions are linear constraints on l; the free combinations of
l are the columns of a matrix P, and the constrained basis is the sparse matrix B (global DOFs
× free DOFs) holding G P at edge vertices and the identity elsewhere. A system K u = f becomes
(Bᵀ K B) q = Bᵀ f with u = B q.

Along an edge of curvature κ (κ = 1/R > 0 for a disk of radius R with the outward normal),
w = 0 on the curve implies w_t = 0 and w_tt − κ w_n = 0.

clamped (w = 0, w_n = 0 on the curve)
    u = u_t = u_n = u_tt = u_nt = 0 (from d/ds of w_n = 0: w_nt + κ w_t = 0); u_nn is free,
    so the edge moment is not forced to zero. Edge-midpoint normal derivatives are zero.
simply supported (w = 0, zero edge moment as the natural condition)
    u = u_t = 0 and u_tt = κ u_n; u_n, u_nt, u_nn free; edge-midpoint normal derivatives free.
    Imposing w_tt = 0 instead on the polygonal approximation of a curved edge converges to the
    wrong limit (Babuška's paradox); the κ term removes that.

Corners of the square (normals of both edges known): clamped fixes all six vertex DOFs;
simply supported fixes u, u_x, u_y, u_xx, u_yy and leaves u_xy free.
Coordinates are scaled: the disk is the unit disk (κ = 1), the square is [−1, 1]² (κ = 0).
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from diagap.fem.validate import Checks

__all__ = ["EdgeError", "constrained_basis", "edge_frames", "EDGES", "SHAPES"]

EDGES = ("clamped", "simply-supported")
SHAPES = ("circle", "square")
_TOL = 1e-9


class EdgeError(ValueError):
    """An unknown edge condition or shape."""


def edge_frames(p: np.ndarray, nodes: np.ndarray, shape: str):
    """Outward normals (2, n), curvatures (n,) and corner flags (n,) at edge vertices."""
    x = p[:, nodes]
    if shape == "circle":
        r = np.linalg.norm(x, axis=0)
        return x / r, 1.0 / r, np.zeros(nodes.size, dtype=bool)
    if shape != "square":
        Checks(EdgeError).choice("shape", shape, SHAPES)
    on_x = np.abs(np.abs(x[0]) - 1.0) < _TOL
    on_y = np.abs(np.abs(x[1]) - 1.0) < _TOL
    normal = np.where(on_x, [np.sign(x[0]), 0 * x[0]], [0 * x[1], np.sign(x[1])])
    return normal, np.zeros(nodes.size), on_x & on_y


def _local_to_global(n: np.ndarray) -> np.ndarray:
    """The 6×6 matrix G with g = G l at a vertex with outward normal n."""
    nx, ny = n
    tx, ty = -ny, nx
    return np.array([
        [1, 0, 0, 0, 0, 0],
        [0, nx, tx, 0, 0, 0],
        [0, ny, ty, 0, 0, 0],
        [0, 0, 0, nx * nx, 2 * nx * tx, tx * tx],
        [0, 0, 0, nx * ny, nx * ty + ny * tx, tx * ty],
        [0, 0, 0, ny * ny, 2 * ny * ty, ty * ty],
    ], dtype=float)


def _free_local(edge: str, kappa: float) -> np.ndarray:
    """Columns: free combinations of l = (u, u_n, u_t, u_nn, u_nt, u_tt)."""
    if edge == "clamped":
        return np.array([[0, 0, 0, 1, 0, 0]], dtype=float).T
    return np.array([[0, 1, 0, 0, 0, kappa], [0, 0, 0, 0, 1, 0], [0, 0, 0, 1, 0, 0]]).T


def _corner_free(edge: str) -> np.ndarray:
    """Free global vertex combinations at a corner of the square."""
    if edge == "clamped":
        return np.zeros((6, 0))
    return np.array([[0, 0, 0, 0, 1, 0]], dtype=float).T


def constrained_basis(mesh, nodal_dofs: np.ndarray, facet_dofs: np.ndarray, n_dofs: int,
                      shape: str, edge: str) -> sp.csr_matrix:
    """Sparse B (n_dofs × n_free) with u = B q spanning the functions that meet the edge condition.

    Parameters
    ----------
    mesh : skfem.MeshTri, scaled coordinates (unit disk or [−1, 1]²)
    nodal_dofs : (6, n_vertices) int array, Argyris vertex DOF numbers (``basis.nodal_dofs``)
    facet_dofs : (1, n_facets) int array, edge-midpoint DOF numbers (``basis.facet_dofs``)
    n_dofs : total number of global DOFs
    shape : "circle" or "square"
    edge : "clamped" or "simply-supported"
    """
    Checks(EdgeError).choice("edge", edge, EDGES)
    nodes = mesh.boundary_nodes()
    normals, kappa, corner = edge_frames(np.asarray(mesh.p), nodes, shape)
    blocks = {}  # vertex DOF block -> (6 × k) combinations
    for j, v in enumerate(nodes):
        if corner[j]:
            blocks[v] = _corner_free(edge)
        else:
            blocks[v] = _local_to_global(normals[:, j]) @ _free_local(edge, kappa[j])
    fixed = np.zeros(n_dofs, dtype=bool)
    fixed[nodal_dofs[:, nodes].ravel()] = True
    if edge == "clamped":
        fixed[facet_dofs[:, mesh.boundary_facets()].ravel()] = True
    keep = np.flatnonzero(~fixed)
    rows, cols, vals = [keep], [np.arange(keep.size)], [np.ones(keep.size)]
    col = keep.size
    for v, comb in blocks.items():
        dofs = nodal_dofs[:, v]
        for c in comb.T:
            nz = np.flatnonzero(np.abs(c) > 1e-15)
            rows.append(dofs[nz])
            cols.append(np.full(nz.size, col))
            vals.append(c[nz])
            col += 1
    B = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                      shape=(n_dofs, col))
    return B.tocsr()
