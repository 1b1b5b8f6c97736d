"""The Argyris triangle (C¹ quintic) with its basis built in element-local coordinates.

The element is the one of :class:`skfem.ElementTriArgyris`: 21 degrees of freedom per triangle,
at each vertex u, u_x, u_y, u_xx, u_xy, u_yy (global Cartesian derivatives) and at each edge
midpoint the normal derivative u_n. The basis is the dual basis of these functionals in the
space P5. Upstream scikit-fem inverts the 21×21 Vandermonde matrix of the monomials x^a y^b in
*global* coordinates, which becomes ill-conditioned (condition ~1e13 measured on rim-graded
meshes) for small elements away from the origin. Here the monomials are ξ^a η^b with
ξ = (x − x_c)/s, η = (y − y_c)/s (x_c the centroid, s the longest edge of the element), so the
matrix to invert has condition O(1) up to the diagonal scaling s^(derivative order), which is
applied analytically.

Edge-midpoint normals point along rot(p_hi − p_lo), p_lo and p_hi the edge's vertices with the
lower and higher global index, so that both triangles sharing an edge use the same normal and the
global basis is C¹ whatever the vertex order of the mesh.

The basis is evaluated with vectorised numpy (all 21 functions at once, cached per call site),
which is also several times faster than the upstream per-monomial Python loop.
"""
from __future__ import annotations

import numpy as np
from skfem import ElementTriArgyris
from skfem.element import DiscreteField
import scipy.sparse as sp

from diagap.fem.locate import TriangleLocator

__all__ = [
    "ElementTriArgyrisLocal", "ArgyrisEvaluator", "MONOMIAL_POWERS", "monomials",
    "local_coefficients",
]

#: exponents (a, b) of the 21 monomials ξ^a η^b of degree ≤ 5
MONOMIAL_POWERS = np.array([(a, b) for a in range(6) for b in range(6) if a + b <= 5])

_EDGES = ((0, 1), (1, 2), (0, 2))  # local vertex pairs of skfem's RefTri edges


def _powers(x: np.ndarray) -> np.ndarray:
    """Stack of x**0 … x**5 and a final zero slice (index −1 → 0 for derivatives of constants)."""
    out = np.empty((7,) + np.shape(x))
    out[0] = 1.0
    for k in range(1, 6):
        out[k] = out[k - 1] * x
    out[6] = 0.0
    return out


def monomials(xi: np.ndarray, eta: np.ndarray, order: int = 2) -> dict:
    """The 21 monomials ξ^a η^b and their derivatives up to ``order`` (0, 1 or 2).

    Returns a dict with keys ``""``, ``"x"``, ``"y"``, ``"xx"``, ``"xy"``, ``"yy"`` (as far as
    ``order`` reaches), each an array of shape ``(21,) + xi.shape``; derivatives are with
    respect to the local coordinates ξ, η.
    """
    a, b = MONOMIAL_POWERS[:, 0], MONOMIAL_POWERS[:, 1]
    px, py = _powers(xi), _powers(eta)
    shape = (21,) + (1,) * np.ndim(xi)
    ca, cb = a.reshape(shape).astype(float), b.reshape(shape).astype(float)

    def term(da, db):
        return px[np.where(a - da >= 0, a - da, 6)] * py[np.where(b - db >= 0, b - db, 6)]

    out = {"": term(0, 0)}
    if order >= 1:
        out["x"] = ca * term(1, 0)
        out["y"] = cb * term(0, 1)
    if order >= 2:
        out["xx"] = ca * (ca - 1) * term(2, 0)
        out["xy"] = ca * cb * term(1, 1)
        out["yy"] = cb * (cb - 1) * term(0, 2)
    return out


def _frames(p: np.ndarray, t: np.ndarray):
    """Centroids (2, nel), length scales (nel,), local vertex coordinates (3, 2, nel)."""
    v = p[:, t]  # (2, 3, nel)
    centre = v.mean(axis=1)
    lengths = [np.linalg.norm(v[:, j] - v[:, i], axis=0) for i, j in _EDGES]
    scale = np.max(lengths, axis=0)
    local = np.transpose((v - centre[:, None, :]) / scale, (1, 0, 2))
    return centre, scale, local


def local_coefficients(p: np.ndarray, t: np.ndarray):
    """Monomial coefficients of the Argyris basis on every triangle.

    Parameters
    ----------
    p : (2, N) array, vertex coordinates
    t : (3, nel) array, vertex indices of each triangle

    Returns
    -------
    centre : (2, nel) centroids
    scale : (nel,) longest edge of each triangle
    coef : (nel, 21, 21) array, ``coef[e, k, i]`` is the coefficient of monomial k in basis
        function i of triangle e (local coordinates of that triangle)
    """
    centre, scale, loc = _frames(p, t)
    nel = t.shape[1]
    rows = np.zeros((nel, 21, 21))
    order = np.zeros(21)  # derivative order of each functional
    for k in range(3):
        m = monomials(loc[k, 0], loc[k, 1])
        for j, key in enumerate(("", "x", "y", "xx", "xy", "yy")):
            rows[:, 6 * k + j, :] = m[key].T
            order[6 * k + j] = len(key)
    for k, (i, j) in enumerate(_EDGES):
        lo = np.where(t[i] < t[j], i, j)
        hi = np.where(t[i] < t[j], j, i)
        idx = np.arange(nel)
        d = loc[hi, :, idx] - loc[lo, :, idx]  # (nel, 2) local edge vectors
        normal = np.stack([d[:, 1], -d[:, 0]], axis=1)
        normal /= np.linalg.norm(normal, axis=1, keepdims=True)
        mid = 0.5 * (loc[i] + loc[j])
        m = monomials(mid[0], mid[1], order=1)
        rows[:, 18 + k, :] = (normal[:, 0] * m["x"] + normal[:, 1] * m["y"]).T
        order[18 + k] = 1
    coef = np.linalg.inv(rows)
    coef *= scale[:, None, None] ** order[None, None, :]
    return centre, scale, coef


class ElementTriArgyrisLocal(ElementTriArgyris):
    """Argyris triangle whose basis is assembled in element-local scaled coordinates.

    Same degrees of freedom and global numbering as :class:`skfem.ElementTriArgyris`; only the
    construction of the basis differs (see the module docstring). The per-mesh coefficients are
    cached on the element together with a reference to the mesh, and rebuilt if the element is
    used with another mesh.
    """

    def __init__(self):
        super().__init__()
        self._mesh = None
        self._data = None
        self._last = None

    def coefficients(self, mesh):
        """(centre, scale, coef) of :func:`local_coefficients` for ``mesh`` (cached)."""
        if self._mesh is not mesh:
            self._data = local_coefficients(np.asarray(mesh.p), np.asarray(mesh.t))
            self._mesh = mesh
            self._last = None
        return self._data

    def _all_fields(self, mapping, X, tind):
        centre, scale, coef = self.coefficients(mapping.mesh)
        if tind is None:
            tind = np.arange(mapping.mesh.t.shape[1])
        x = mapping.F(X, tind=tind)  # (2, nel, nq)
        s = scale[tind][:, None]
        xi = (x[0] - centre[0, tind][:, None]) / s
        eta = (x[1] - centre[1, tind][:, None]) / s
        m = monomials(xi, eta)
        c = coef[tind]  # (nel, 21, 21)
        nel, nq = xi.shape
        grad = np.empty((2, 21, nel, nq))
        hess = np.empty((2, 2, 21, nel, nq))
        value = np.empty((21, nel, nq))
        targets = (("", 0, value), ("x", 1, grad[0]), ("y", 1, grad[1]),
                   ("xx", 2, hess[0, 0]), ("xy", 2, hess[0, 1]), ("yy", 2, hess[1, 1]))
        for key, power, out in targets:
            cp = c / scale[tind][:, None, None] ** power if power else c
            out[...] = np.einsum("keq,eki->ieq", m[key], cp, optimize=True)
        hess[1, 0] = hess[0, 1]
        return value, grad, hess

    def fields(self, mapping, X, tind=None):
        """All 21 basis functions at once: value (21, nel, nq), grad (2, 21, …), hess (2, 2, 21, …).

        The result of the last call is cached (keyed on the identity of the arguments), so the
        21 calls of :meth:`gbasis` made by a basis cost one evaluation.
        """
        last = self._last
        if last is None or last[0] is not mapping or last[1] is not X or last[2] is not tind:
            self._last = (mapping, X, tind, self._all_fields(mapping, X, tind))
        return self._last[3]

    def gbasis(self, mapping, X, i, tind=None):
        value, grad, hess = self.fields(mapping, X, tind)
        return (DiscreteField(value=value[i], grad=grad[:, i], hess=hess[:, :, i]),)


class ArgyrisEvaluator:
    """Fast evaluation of Argyris fields at arbitrary points of a mesh.

    Parameters
    ----------
    mesh : skfem.MeshTri
    element : ElementTriArgyrisLocal used for the field
    element_dofs : (21, nel) global DOF numbers per triangle (``basis.element_dofs``)

    Points outside the mesh polygon use the polynomial of the nearest triangle (see
    :mod:`diagap.fem.locate`); coordinates are those of the mesh.
    """

    def __init__(self, mesh, element: ElementTriArgyrisLocal, element_dofs: np.ndarray):
        self.centre, self.scale, self.coef = element.coefficients(mesh)
        self.element_dofs = np.asarray(element_dofs)
        self.n_dofs = int(self.element_dofs.max()) + 1
        self.locator = TriangleLocator(mesh.p, mesh.t)

    def _local(self, x, y):
        e = self.locator.find(x, y)
        s = self.scale[e]
        xi = (np.ravel(x) - self.centre[0, e]) / s
        eta = (np.ravel(y) - self.centre[1, e]) / s
        return e, monomials(xi, eta, order=0)[""].T

    def values(self, u: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Field with global DOF vector ``u`` at the points (shape of ``x``)."""
        poly = np.einsum("eki,ie->ek", self.coef, u[self.element_dofs], optimize=True)
        e, m = self._local(x, y)
        return np.einsum("nk,nk->n", m, poly[e]).reshape(np.shape(x))

    def matrix(self, x: np.ndarray, y: np.ndarray) -> sp.csr_matrix:
        """Sparse (npts × n_dofs) matrix mapping a DOF vector to the values at the points."""
        e, m = self._local(x, y)
        phi = np.einsum("nk,nki->ni", m, self.coef[e])
        rows = np.repeat(np.arange(e.size), 21)
        cols = self.element_dofs[:, e].T.ravel()
        return sp.csr_matrix((phi.ravel(), (rows, cols)), shape=(e.size, self.n_dofs))
