"""Weak forms shared by the fem solvers (scaled coordinates; physical factors applied outside).

Each form integrates over the cells of a scikit-fem basis Ω̂ (dimensionless coordinates ξ):

    laplace(u, v)               = ∫ ∇u·∇v dξ               (``skfem.models.poisson.laplace``)
    mass(u, v)                  = ∫ u v dξ                  (``skfem.models.poisson.mass``)
    laplace_axisymmetric(u, v)  = ∫ ∇u·∇v 2πr dr dz         (x = r, y = z on the r-z half-plane)
    weighted_mass(u, v)         = ∫ c u v dξ                (c = ``w["c"]`` at quadrature points)
    source(v)                   = ∫ f v dξ                  (f = ``w["f"]`` at quadrature points)
    squared(f)                  = ∫ f² dξ                   (f = ``w["f"]``)

The solvers multiply them by their SI coefficients: tension T or permittivity ε0 for the
Laplacian, areal density ρh or the gas capacity g/p0 for the mass, the length scale L² for loads.
No units inside; the plate's bending forms (∫ ∇²u ∇²v and the Gauss-curvature part) live with the
plate in :mod:`diagap.fem.plate.system`.
"""
from __future__ import annotations

import numpy as np
from skfem import BilinearForm, Functional, LinearForm
from skfem.helpers import dot, grad
from skfem.models.poisson import laplace, mass

__all__ = ["laplace", "mass", "laplace_axisymmetric", "weighted_mass", "source", "squared"]


@BilinearForm
def laplace_axisymmetric(u, v, w):
    """∫ ∇u·∇v 2πr dr dz (x = r, y = z)."""
    return dot(grad(u), grad(v)) * (2.0 * np.pi) * w.x[0]


@BilinearForm
def weighted_mass(u, v, w):
    """∫ c u v with c given at the quadrature points (``c=``)."""
    return w["c"] * u * v


@LinearForm
def source(v, w):
    """∫ f v with f given at the quadrature points (``f=``)."""
    return w["f"] * v


@Functional
def squared(w):
    """∫ f² with f given at the quadrature points (``f=``)."""
    return w["f"] ** 2
