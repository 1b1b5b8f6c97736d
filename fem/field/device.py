r"""Device capacitance C(x) of a deflected diaphragm over a perforated backplate.

Model
-----
With the diaphragm displaced by x·φ(r) towards the backplate (φ the deflection shape, 1 at the
centre, x the centre displacement [m], positive towards the backplate) every area element of the
electrode sees a locally uniform gap g − x·φ and contributes the lattice capacitance density
c(g − x·φ) of :mod:`diagap.fem.field.cell_table` (locally-parallel-plate approximation: the tilt of the
diaphragm is neglected, its slope ~ x/R_e ≪ 1). The rim fringing of :mod:`diagap.fem.field.rim` is
evaluated at the local gap under the electrode rim, g − x·φ_rim:

.. math:: C(x) = \sum_q w_q\, c(g - x\varphi_q) + C_\mathrm{rim}(g - x\varphi_\mathrm{rim}),

where (w_q, φ_q) are quadrature weights [m²] over the electrode area and the shape at those
points, supplied by the mechanics. dC/dx = −Σ w_q φ_q c'(g − xφ_q) − φ_rim C_rim'(g − xφ_rim).
For a rigid piston (φ ≡ 1) and an unperforated plate this is the parallel-plate-plus-rim model
ε0A/(g − x) + C_rim(g − x) of common practice.

Uncertainty: the relative error of the area part is taken as the largest sample error of c(g)
plus its fit error; the rim adds its own absolute estimate. The slope uncertainty adds the
difference between the fitted dc/dg and a spline through the samples. The quadrature error of
(w_q, φ_q) belongs to the mechanics and is not included.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.field.cell import ElectrostaticsInputError
from diagap.fem.validate import Checks

__all__ = ["DeviceCapacitance", "device_capacitance"]

_check = Checks(ElectrostaticsInputError)

_CURVE_POINTS = 41


@dataclass(frozen=True)
class DeviceCapacitance:
    """C(x) of the device and its summary numbers (SI units).

    Attributes
    ----------
    rest_capacitance_f : float
        C(0) [F] (active capacitance: electrode area plus rim fringing).
    capacitance_slope_f_per_m : float
        dC/dx at x = 0 [F/m].
    parallel_plate_capacitance_f : float
        ε0·A_el/g_e [F], A_el = Σ w_q, g_e the electrical gap (g without dielectric layers,
        g + Σ t/ε_r with them, :mod:`diagap.fem.field.layers`).
    rim_fringing_capacitance_f : float
        C_rim at the rest gap [F] (0 without a rim model).
    x_m, capacitance_f : ndarray
        The curve C(x) [m, F].
    rest_gap_m, electrode_area_m2, perforation_factor, open_area_fraction : float
    rel_error, slope_rel_error : float
        Uncertainty estimates of C(0) and dC/dx (relative).
    fit_error : float
        Fit error of c(g).
    """

    rest_capacitance_f: float
    capacitance_slope_f_per_m: float
    parallel_plate_capacitance_f: float
    rim_fringing_capacitance_f: float
    x_m: np.ndarray
    capacitance_f: np.ndarray
    rest_gap_m: float
    electrode_area_m2: float
    perforation_factor: float
    open_area_fraction: float
    rel_error: float
    slope_rel_error: float
    fit_error: float
    _model: tuple = field(default=None, repr=False, compare=False)

    @property
    def curve(self) -> list:
        """[(x_m, C_f), ...] over the sampled displacements."""
        return [(float(x), float(c)) for x, c in zip(self.x_m, self.capacitance_f)]

    def __call__(self, x_m):
        """C(x) [F] at centre displacement(s) x [m]."""
        return _evaluate(*self._model, np.asarray(x_m, dtype=float), slope=False)[0]

    def slope(self, x_m):
        """dC/dx [F/m] at centre displacement(s) x [m]."""
        return _evaluate(*self._model, np.asarray(x_m, dtype=float))[1]

    def to_summary(self) -> dict:
        """The ``electrostatics`` block of summary.json."""
        return {
            "rest_capacitance_f": self.rest_capacitance_f,
            "parallel_plate_capacitance_f": self.parallel_plate_capacitance_f,
            "capacitance_slope_f_per_m": self.capacitance_slope_f_per_m,
            "capacitance_curve": [[x, c] for x, c in self.curve],
            "perforation_factor": self.perforation_factor,
            "open_area_fraction": self.open_area_fraction,
            "rim_fringing_capacitance_f": self.rim_fringing_capacitance_f,
            "electrode_area_m2": self.electrode_area_m2,
            "rest_gap_m": self.rest_gap_m,
            "capacitance_fit_error": self.fit_error,
            "rest_capacitance_rel_error": self.rel_error,
            "capacitance_slope_rel_error": self.slope_rel_error,
        }


def _evaluate(w, phi, c_density, gap, rim, phi_rim, x, slope: bool = True):
    """C(x) and dC/dx for an array (or scalar) of displacements x (dC/dx None when not
    ``slope``)."""
    xs = np.atleast_1d(x).ravel()
    g_local = gap - np.outer(xs, phi)  # (nx, nq)
    C = c_density(g_local) @ w
    dC = -(c_density.derivative(g_local) * phi) @ w if slope else None
    if rim is not None:
        g_rim = gap - xs * phi_rim
        C = C + rim(g_rim)
        if slope:
            dC = dC - phi_rim * rim.derivative(g_rim)
    if not slope:
        return (float(C[0]) if np.ndim(x) == 0 else C.reshape(np.shape(x))), None
    if np.ndim(x) == 0:
        return float(C[0]), float(dC[0])
    return C.reshape(np.shape(x)), dC.reshape(np.shape(x))


def _check_inputs(w, phi, gap, c_density, x, phi_rim) -> None:
    if w.ndim != 1 or w.shape != phi.shape or w.size == 0:
        raise ElectrostaticsInputError(
            f"weights_m2 and phi must be 1-D arrays of equal length, got shapes {w.shape} and "
            f"{phi.shape}")
    if not (np.all(np.isfinite(w)) and np.all(w > 0)):
        raise ElectrostaticsInputError("weights_m2 must be finite and positive (m²)")
    if not np.all(np.isfinite(phi)):
        raise ElectrostaticsInputError("phi must be finite")
    _check.positive("rest_gap_m", gap)
    x_lim = gap / max(float(np.max(np.abs(phi))), abs(phi_rim), 1e-300)
    if not (np.all(np.isfinite(x)) and np.all(np.abs(x) < x_lim)):
        raise ElectrostaticsInputError(
            f"x_values_m must keep every local gap positive: |x| < {x_lim!r} m")
    if not (callable(c_density) and hasattr(c_density, "derivative")):
        raise ElectrostaticsInputError("c_density must provide c(g) and derivative(g)")


def device_capacitance(weights_m2, phi, c_density, rest_gap_m: float, rim=None,
                       x_values_m=None, phi_rim: float | None = None) -> DeviceCapacitance:
    """C(x) = Σ w_q c(g − xφ_q) + C_rim(g − xφ_rim) (see the module docstring).

    Parameters
    ----------
    weights_m2 : array_like (nq,)
        Quadrature weights over the electrode area [m²].
    phi : array_like (nq,)
        Deflection shape at the quadrature points, 1 at the centre.
    c_density : CapacitanceDensity
        c(g) [F/m²] with ``derivative``; its range must cover every local gap g − xφ_q.
    rest_gap_m : float
        Rest gap g [m].
    rim : RimResult, optional
        Rim fringing model; None leaves it out.
    x_values_m : array_like, optional
        Centre displacements of the curve [m]; default 41 points over [−g/3, g/3].
    phi_rim : float, optional
        Deflection shape at the electrode rim; default the smallest φ_q (the outermost
        quadrature points; exact for a piston).

    Returns
    -------
    DeviceCapacitance
    """
    w = np.asarray(weights_m2, dtype=float)
    ph = np.asarray(phi, dtype=float)
    gap = float(rest_gap_m)
    x = (np.linspace(-gap / 3, gap / 3, _CURVE_POINTS) if x_values_m is None
         else np.asarray(x_values_m, dtype=float).ravel())
    prim = float(np.min(ph)) if phi_rim is None else float(phi_rim)
    _check_inputs(w, ph, gap, c_density, x, prim)
    model = (w, ph, c_density, gap, rim, prim)
    C, dC = _evaluate(*model, x)
    C0, S0 = _evaluate(*model, 0.0)
    area = float(w.sum())
    g_e = gap + float(getattr(c_density, "electrical_offset_m", 0.0))  # electrical gap (layers)
    c_rel = float(getattr(c_density, "rel_error", 0.0)) + float(
        getattr(c_density, "fit_error", 0.0))
    rim_c = 0.0 if rim is None else float(rim(gap))
    rim_err = 0.0 if rim is None else float(rim.abs_error_f)
    area_part = C0 - rim_c
    spline_dev = 0.0
    if hasattr(c_density, "spline_derivative"):
        diff = c_density.spline_derivative(gap) - c_density.derivative(gap)
        spline_dev = abs(float(diff)) * float(np.sum(w * np.abs(ph)))
    rim_slope_err = 0.0 if rim is None else abs(prim) * rim.derivative_abs_error_f_per_m
    slope_err = c_rel * abs(S0) + spline_dev + rim_slope_err
    return DeviceCapacitance(
        rest_capacitance_f=C0, capacitance_slope_f_per_m=S0,
        parallel_plate_capacitance_f=EPSILON_0_F_PER_M * area / g_e, rim_fringing_capacitance_f=rim_c,
        x_m=x, capacitance_f=np.asarray(C), rest_gap_m=gap, electrode_area_m2=area,
        perforation_factor=float(c_density(gap) * g_e / EPSILON_0_F_PER_M),
        open_area_fraction=float(getattr(c_density, "open_area_fraction", 0.0)),
        rel_error=(c_rel * area_part + rim_err) / C0, slope_rel_error=slope_err / abs(S0),
        fit_error=float(getattr(c_density, "fit_error", 0.0)), _model=model)
