"""Locating points in a triangle mesh (straight-sided triangles, vectorised).

Each point is assigned the triangle that contains it; a point outside the mesh (for instance in
the thin sliver between a polygonal mesh boundary and the true curved edge) gets the nearest
candidate triangle (the one it is least outside of), so that a field's polynomial on that
triangle is extrapolated over the sliver. The caller decides which points lie outside the
physical domain altogether.
"""
from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["TriangleLocator"]

#: smallest barycentric coordinate above which a point is taken as strictly inside a triangle
#: (well above the rounding of the coordinates, ~1e-16 for scaled meshes)
INSIDE = 1e-12


class TriangleLocator:
    """Find the triangle holding each point.

    Parameters
    ----------
    p : (2, N) vertex coordinates
    t : (3, nel) vertex indices (only the first three rows are used)
    candidates : number of nearest centroids tried per point
    """

    def __init__(self, p: np.ndarray, t: np.ndarray, candidates: int = 10):
        self.p = np.asarray(p, dtype=float)
        self.t = np.asarray(t[:3])
        centroids = self.p[:, self.t].mean(axis=1)
        self.tree = cKDTree(centroids.T)
        self.k = int(min(candidates, self.t.shape[1]))
        v0, v1, v2 = (self.p[:, self.t[i]] for i in range(3))
        jac = np.stack([v1 - v0, v2 - v0], axis=1)  # (2, 2, nel)
        self._inv = np.linalg.inv(np.transpose(jac, (2, 0, 1)))  # (nel, 2, 2)
        self._v0 = v0

    def barycentric(self, x: np.ndarray, y: np.ndarray, elements: np.ndarray) -> np.ndarray:
        """Barycentric coordinates (3, npts) of points in the given triangles."""
        d = np.stack([x - self._v0[0, elements], y - self._v0[1, elements]], axis=-1)
        lam = np.einsum("nij,nj->ni", self._inv[elements], d)
        return np.stack([1.0 - lam[:, 0] - lam[:, 1], lam[:, 0], lam[:, 1]])

    def find(self, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Triangle index for each point (flattened input).

        A point strictly inside the triangle of its nearest centroid (smallest barycentric
        coordinate above ``INSIDE``) has its answer at once (triangles do not overlap, so no
        other candidate can hold it better); the others try the ``candidates`` nearest.
        """
        x = np.ravel(x).astype(float)
        y = np.ravel(y).astype(float)
        _, first = self.tree.query(np.stack([x, y], axis=1), k=1)
        first = np.asarray(first, dtype=np.int64).reshape(x.size)
        inside = self.barycentric(x, y, first).min(axis=0) > INSIDE
        if inside.all():
            return first
        rest = ~inside
        first[rest] = self._search(x[rest], y[rest])
        return first

    def _search(self, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        _, cand = self.tree.query(np.stack([x, y], axis=1), k=self.k)
        cand = cand.reshape(x.size, self.k)
        best = np.full(x.size, -np.inf)
        found = np.zeros(x.size, dtype=np.int64)
        for j in range(self.k):
            lam_min = self.barycentric(x, y, cand[:, j]).min(axis=0)
            better = lam_min > best + 1e-14
            best = np.where(better, lam_min, best)
            found = np.where(better, cand[:, j], found)
        return found
