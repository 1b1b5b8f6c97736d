"""Quadratic (six-node) diaphragm meshes whose edge nodes lie on the true boundary.

``curved_disk_mesh`` takes the graded linear mesh of the unit disk from :mod:`diagap.meshes.diaphragm`
and moves the midpoint nodes of the boundary edges radially onto the unit circle, so that an
isoparametric P2 discretisation sees the circle to O(h³) instead of the O(h²) of the polygon.
``quadratic_square_mesh`` is the straight-sided quadratic mesh of [−1, 1]². Scaled coordinates.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
from skfem import MeshTri2

from diagap.meshes.diaphragm import disk_mesh, square_mesh

__all__ = ["curved_disk_mesh", "quadratic_square_mesh"]


def curved_disk_mesh(h_center: float = 0.1, h_edge: float = 0.02,
                     grading: float = 0.3) -> MeshTri2:
    """Quadratic mesh of the unit disk with its boundary nodes on the circle."""
    mesh = MeshTri2.from_mesh(disk_mesh(h_center, h_edge, grading))
    nodes = mesh.dofs.get_facet_dofs(mesh.boundary_facets()).flatten()
    doflocs = mesh.doflocs.copy()
    doflocs[:, nodes] /= np.linalg.norm(doflocs[:, nodes], axis=0)
    return replace(mesh, doflocs=doflocs)


def quadratic_square_mesh(h_center: float = 0.1, h_edge: float = 0.02,
                          grading: float = 0.3) -> MeshTri2:
    """Straight-sided quadratic mesh of the square [−1, 1]²."""
    return MeshTri2.from_mesh(square_mesh(h_center, h_edge, grading))
