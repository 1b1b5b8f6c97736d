r"""Capacitance density c(g) of the hole lattice over a range of gaps, and a smooth fit.

The unit-cell capacitance density c(g) [F/m²] (:func:`diagap.fem.field.cell.cell_capacitance`) is
sampled at Chebyshev points of [g_min, g_max] and fitted by the four-term model

.. math:: c(g) = \frac{\varepsilon_0}{g}\left[A + C_f\,\hat g + k_1 \hat g\ln\hat g
          + k_2 \hat g^2\right], \qquad \hat g = g / g_\mathrm{mid},

i.e. c = ε0[A/g + (C_f + k1 ln ĝ + k2 ĝ)/g_mid]. The perforation factor P(g) = c·g/ε0 is
linear in the coefficients (least squares on P, relative weights 1/P). A/g is the parallel-plate part of the
backplate's effective area, C_f the gap-independent fringing of the hole rims and the last two
terms absorb the slow change of the fringing field with g. The fit error is the largest relative
residual at the samples (more samples than coefficients, so the residual is a genuine check of
the model). A cubic spline of P(g) through the same samples is kept as a second interpolant:
the difference of the two slopes estimates the uncertainty of dc/dg.

With dielectric layers on the electrodes (:mod:`diagap.fem.field.layers`) g stays the air gap
but the fit is made in the electrical gap g_e = g + t_e (t_e = Σ t/ε_r of the layers): the
factor P = c·g_e/ε0 and ĝ = g_e/g_mid, g_mid the geometric mean of the range in g_e, so that the
layered flat plate, c = ε0/g_e, is P ≡ 1 and is fitted exactly. ``electrical_offset_m`` = t_e
(0 without layers, which is the model above).
"""
from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import CubicSpline

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.field.cell import ElectrostaticsInputError, cell_capacitance, check_cell_inputs

__all__ = ["CapacitanceDensity", "capacitance_density_table"]

_SAMPLES = {"draft": 6, "normal": 7, "fine": 9}
_RANGE_TOL = 1e-9  # relative slack at the ends of the valid range


def _basis(gh: np.ndarray) -> np.ndarray:
    """Columns of P(ĝ)/(units): 1, ĝ, ĝ ln ĝ, ĝ² (ĝ = g / g_mid)."""
    return np.column_stack([np.ones_like(gh), gh, gh * np.log(gh), gh**2])


@dataclass(frozen=True)
class CapacitanceDensity:
    """c(g) of one hole lattice: callable, with derivative, range and error measures.

    Attributes
    ----------
    gap_min_m, gap_max_m : float
        Valid gap range [m].
    gaps_m, density_f_per_m2, sample_rel_errors : ndarray
        The FE samples: gap, c(g) and each sample's discretisation-error estimate.
    coefficients : ndarray
        (A, C_f, k1, k2) of P(ĝ) = A + C_f ĝ + k1 ĝ ln ĝ + k2 ĝ² with ĝ = g/g_mid.
    gap_mid_m : float
        g_mid [m].
    fit_error : float
        Largest relative residual of the fit at the samples.
    rel_error : float
        Largest sample discretisation-error estimate.
    open_area_fraction : float
    lattice : str
    runtime_s : float
    electrical_offset_m : float
        t_e [m]: the fit variable is g + t_e (0 without dielectric layers).
    """

    gap_min_m: float
    gap_max_m: float
    gaps_m: np.ndarray
    density_f_per_m2: np.ndarray
    sample_rel_errors: np.ndarray
    coefficients: np.ndarray
    gap_mid_m: float
    fit_error: float
    rel_error: float
    open_area_fraction: float
    lattice: str
    runtime_s: float
    electrical_offset_m: float = 0.0

    def _check(self, g: np.ndarray) -> None:
        lo, hi = self.gap_min_m * (1 - _RANGE_TOL), self.gap_max_m * (1 + _RANGE_TOL)
        if np.any(g < lo) or np.any(g > hi) or not np.all(np.isfinite(g)):
            bad = g[(g < lo) | (g > hi) | ~np.isfinite(g)].ravel()[0]
            raise ElectrostaticsInputError(
                f"gap_m = {bad!r} is outside the capacitance table range "
                f"[{self.gap_min_m!r}, {self.gap_max_m!r}] m")

    def perforation_factor(self, gap_m):
        """P(g) = c(g)·(g + t_e)/ε0 from the fit (dimensionless; scalar or array of gaps [m])."""
        g = np.asarray(gap_m, dtype=float)
        self._check(g)
        gh = (np.atleast_1d(g).ravel() + self.electrical_offset_m) / self.gap_mid_m
        a, c_f, k1, k2 = self.coefficients  # _basis(gh) @ coefficients, without the matrix
        out = a + gh * (c_f + k1 * np.log(gh) + k2 * gh)
        return out.reshape(g.shape) if g.ndim else float(out[0])

    def __call__(self, gap_m):
        """c(g) [F/m²] (scalar or array of gaps [m])."""
        g = np.asarray(gap_m, dtype=float)
        return EPSILON_0_F_PER_M * self.perforation_factor(g) / (g + self.electrical_offset_m)

    def _scaled(self, gap_m):
        g = np.asarray(gap_m, dtype=float)
        self._check(g)
        return g, (np.atleast_1d(g).ravel() + self.electrical_offset_m) / self.gap_mid_m

    @staticmethod
    def _shape(values, g):
        return values.reshape(g.shape) if g.ndim else float(values[0])

    def derivative(self, gap_m):
        """dc/dg [F/m³] (scalar or array of gaps [m]).

        With c = (ε0/g_mid)(A/ĝ + C_f + k1 ln ĝ + k2 ĝ): dc/dg = (ε0/g_mid²)(−A/ĝ² + k1/ĝ + k2)
        (dĝ/dg = 1/g_mid also with layers).
        """
        g, gh = self._scaled(gap_m)
        A, _, k1, k2 = self.coefficients
        return self._shape(EPSILON_0_F_PER_M / self.gap_mid_m**2 * (-A / gh**2 + k1 / gh + k2), g)

    def slope(self, gap_m):
        """dc/dg [F/m³]; same as :meth:`derivative`."""
        return self.derivative(gap_m)

    def curvature(self, gap_m):
        """d²c/dg² [F/m⁴] = (ε0/g_mid³)(2A/ĝ³ − k1/ĝ²)."""
        g, gh = self._scaled(gap_m)
        A, _, k1, _ = self.coefficients
        return self._shape(EPSILON_0_F_PER_M / self.gap_mid_m**3 * (2 * A / gh**3 - k1 / gh**2), g)

    def spline_derivative(self, gap_m):
        """dc/dg [F/m³] from a cubic spline of P(g) through the samples (cross-check)."""
        g = np.asarray(gap_m, dtype=float)
        self._check(g)
        ge, ge_s = g + self.electrical_offset_m, self.gaps_m + self.electrical_offset_m
        P = self.density_f_per_m2 * ge_s / EPSILON_0_F_PER_M
        sp = CubicSpline(self.gaps_m, P)
        return EPSILON_0_F_PER_M * (sp(g, 1) / ge - sp(g) / ge**2)


def _chebyshev_gaps(g0: float, g1: float, n: int) -> np.ndarray:
    """n Chebyshev–Lobatto points of [g0, g1] (both ends included), ascending."""
    k = np.arange(n)
    return 0.5 * (g0 + g1) - 0.5 * (g1 - g0) * np.cos(np.pi * k / (n - 1))


def _samples(gaps, hole_radius_m, pitch_m, lattice, t_m, accuracy, air_height_m, layers=None):
    """Cell capacitance densities and their error estimates at ``gaps``, cached on disk (keyed
    by the inputs and a hash of the solver source; the solutions are reused across the points
    of a sweep that keeps the hole pattern)."""
    from diagap.meshes.cache import cached_arrays

    def build():
        cells = [cell_capacitance(g, hole_radius_m, pitch_m, lattice, t_m, accuracy,
                                  air_height_m=air_height_m, layers=layers) for g in gaps]
        return {"c": np.array([r.capacitance_density_f_per_m2 for r in cells]),
                "err": np.array([r.rel_error for r in cells]),
                "open": np.array([cells[0].open_area_fraction])}

    params = {"gaps": [float(g) for g in gaps], "r": hole_radius_m, "p": pitch_m,
              "lattice": lattice, "t": t_m, "acc": accuracy, "H": air_height_m}
    if layers is not None and layers.present:
        params["layers"] = layers.to_summary()
    arr = cached_arrays("cell-table-solution", params, build)
    return arr["c"], arr["err"], float(arr["open"][0])


def capacitance_density_table(gap_min_m: float, gap_max_m: float, hole_radius_m: float,
                              pitch_m: float, lattice: str, backplate_thickness_m: float,
                              accuracy: str = "normal",
                              air_height_m: float | None = None,
                              layers=None) -> CapacitanceDensity:
    """Sample c(g) with the axisymmetric cell and fit the smooth model (module docstring).

    Parameters
    ----------
    gap_min_m, gap_max_m : float
        Gap range [m], 0 < gap_min_m < gap_max_m.
    hole_radius_m, pitch_m, lattice, backplate_thickness_m, accuracy, air_height_m
        As for :func:`diagap.fem.field.cell.cell_capacitance`.
    layers : GapLayers, optional
        Dielectric layers (:mod:`diagap.fem.field.layers`); the gaps are air gaps.

    Returns
    -------
    CapacitanceDensity
    """
    check_cell_inputs(gap_min_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m,
                      accuracy)
    if not gap_max_m > gap_min_m:
        raise ElectrostaticsInputError(
            f"gap_max_m = {gap_max_m!r} must exceed gap_min_m = {gap_min_m!r}")
    start = time.perf_counter()
    gaps = _chebyshev_gaps(gap_min_m, gap_max_m, _SAMPLES[accuracy])
    c, errs, open_area = _samples(gaps, hole_radius_m, pitch_m, lattice, backplate_thickness_m,
                                  accuracy, air_height_m, layers)
    offset = layers.electrical_thickness_m if layers is not None else 0.0
    P = c * (gaps + offset) / EPSILON_0_F_PER_M
    g_mid = float(np.sqrt((gap_min_m + offset) * (gap_max_m + offset)))
    M = _basis((gaps + offset) / g_mid)
    coef, *_ = np.linalg.lstsq(M / P[:, None], np.ones_like(P), rcond=None)
    fit_error = float(np.max(np.abs(M @ coef - P) / P))
    return CapacitanceDensity(
        gap_min_m=float(gap_min_m), gap_max_m=float(gap_max_m), gaps_m=gaps,
        density_f_per_m2=c, sample_rel_errors=errs,
        coefficients=coef, gap_mid_m=g_mid, fit_error=fit_error,
        rel_error=float(np.max(errs)),
        open_area_fraction=open_area, lattice=lattice,
        runtime_s=time.perf_counter() - start, electrical_offset_m=float(offset))
