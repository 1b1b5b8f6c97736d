"""Richardson discretisation-error estimates from a sequence of mesh levels.

A quantity computed on meshes of sizes h and h/r converges as Q(h) = Q + C h^p + o(h^p), so the
error of the finer value is estimated by Richardson's formula (L. F. Richardson, Phil. Trans. R.
Soc. A 210 (1911); the same estimator as Roache's grid-convergence index without safety factor):

    e_fine ≈ |Q_fine − Q_coarse| / (r^p − 1).

With the order p known a priori (the solver's lowest rate: boundary approximation, corner
singularity) two levels suffice: :func:`richardson_error` (absolute) and
:func:`relative_error` (over |Q_fine|, plus an optional floor for mesh noise). With three
levels the order is observed, p = log(|Q₁ − Q₀| / |Q₂ − Q₁|) / log r, clamped to a trusted
interval: :func:`observed_estimate`. All functions work elementwise on arrays.
"""
from __future__ import annotations

import numpy as np

__all__ = ["richardson_error", "relative_error", "observed_estimate"]


def richardson_error(coarse, fine, order, ratio: float = 2.0):
    """Absolute error estimate |fine − coarse| / (ratio^order − 1) of the finer values.

    Parameters
    ----------
    coarse, fine : float or array_like
        The quantity on the coarser and the finer mesh (same units).
    order : float or array_like
        Convergence order p in the mesh size.
    ratio : float
        Mesh-size ratio r = h_coarse / h_fine (> 1).

    Returns
    -------
    float or ndarray
        Estimate in the units of the quantity (a float for scalar input).
    """
    est = np.abs(np.asarray(fine, dtype=float) - np.asarray(coarse, dtype=float))
    est = est / (ratio ** np.asarray(order, dtype=float) - 1.0)
    return float(est) if np.ndim(est) == 0 else est


def relative_error(coarse, fine, order, ratio: float = 2.0, floor: float = 0.0):
    """Relative error estimate of the finer values: :func:`richardson_error` / |fine| + floor.

    A quantity that is zero on both levels has relative error ``floor``; one that is zero on the
    finer level only has an infinite relative error.

    Parameters
    ----------
    coarse, fine, order, ratio
        As in :func:`richardson_error`.
    floor : float
        Added relative error (e.g. the noise between meshes of a family that are not nested).

    Returns
    -------
    float or ndarray (dimensionless)
    """
    est = np.asarray(richardson_error(coarse, fine, order, ratio))
    size = np.abs(np.asarray(fine, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = np.where(size > 0, est / np.where(size > 0, size, 1.0),
                       np.where(est > 0, np.inf, 0.0))
    rel = rel + floor
    return float(rel) if np.ndim(rel) == 0 else rel


def observed_estimate(values, ratio: float = 2.0, order_bounds=(1.0, 4.0),
                      floor: float = 1e-12):
    """Observed order and absolute error estimate of the finest of three levels.

    Parameters
    ----------
    values : array_like, shape (3, ...)
        The quantity on three nested levels, coarsest first (real or complex).
    ratio : float
        Mesh-size ratio between consecutive levels.
    order_bounds : (float, float)
        The observed order is clamped to this interval (and taken as the lower bound when the
        differences give no order, e.g. both zero).
    floor : float
        Smallest estimate, relative to |finest value| (round-off).

    Returns
    -------
    order, error : ndarray
        Observed order (elementwise) and the estimate |Q₂ − Q₁| / (r^p − 1), at least
        ``floor``·|Q₂|.
    """
    values = np.asarray(values)
    d01 = np.abs(values[1] - values[0])
    d12 = np.abs(values[2] - values[1])
    low, high = order_bounds
    with np.errstate(divide="ignore", invalid="ignore"):
        order = np.log2(np.where(d12 > 0, d01 / d12, ratio**high)) / np.log2(ratio)
    order = np.clip(np.nan_to_num(order, nan=low), low, high)
    return order, np.maximum(d12 / (ratio**order - 1.0), floor * np.abs(values[2]))
