"""The lumped (one-degree-of-freedom) model of a capacitive capsule, and builders for it.

Every quantity is SI and referred to the diaphragm centre displacement ``x`` (positive towards the
backplate, measured from the undeflected diaphragm; the bias point is ``x = bias_displacement_m``).
The mode-shape reduction with φ(centre) = 1 gives the effective mass m = ∫ρhφ² dA, stiffness
k = ω₁²m and area A = ∫φ dA; A is both the force area (F = A·Δp) and the volume area
(displaced volume = A·x), so the acoustic and mechanical sides couple through one number.

Electrostatics at the bias point (capsule voltage V_b, capacitance C(x)):

* co-energy W' = ½C(x)v², force F_e = ½v²·dC/dx (towards the backplate);
* linearised about (x_b, V_b): δF = Γ·δv + k_e·δx with the transduction factor Γ = V_b·C'(x_b)
  (N/V = C/m) and the constant-voltage electrostatic stiffness k_e = ½V_b²·C''(x_b) (softening);
* δq = C0·δv + Γ·δx (the charge of the capsule changes with motion at fixed voltage).

The constant-charge stiffness k_e − Γ²/C_node (C_node = C0 + C_p + C_in) follows from these two
lines when the node charge is held; it is zero for a parallel-plate capacitor with no parasitic
capacitance (Senturia, *Microsystem Design*, 2001, ch. 6 [from memory]).  Which regime applies is
decided by the bias circuit; see :mod:`diagap.lumped.circuit`.

:class:`CapacitanceCurve` turns the sampled C(x) into a smooth function for the nonlinear model:
it interpolates the elastance 1/C(x) with a cubic spline, which is exact for a parallel-plate
capacitor (1/C = (g − x)/(ε0A) is linear in x).
"""
from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, replace
from typing import Callable

import numpy as np
from scipy.interpolate import CubicSpline
from scipy.optimize import brentq

from diagap.fem.constants import EPSILON_0_F_PER_M, ROOM_TEMPERATURE_K, STANDARD_PRESSURE_PA

__all__ = [
    "LumpedModelError",
    "LumpedModel",
    "CapacitanceCurve",
    "FilmTable",
    "parallel_plate_piston",
    "from_capacitance_curve",
]


class LumpedModelError(ValueError):
    """A lumped-model parameter is missing, out of range or inconsistent."""


def _need(cond: bool, name: str, value, allowed: str) -> None:
    if not cond:
        raise LumpedModelError(f"{name} = {value!r}: must be {allowed}")


@dataclass(frozen=True)
class FilmTable:
    """Squeeze-film damping b(f) and stiffness k_film(f) sampled in frequency.

    Callable as ``table(f_hz) -> (b_n_s_per_m, k_film_n_per_m)``; linear interpolation in
    log-frequency, held constant outside the sampled range.

    Parameters
    ----------
    frequency_hz : array, strictly increasing, > 0
    damping_n_s_per_m, stiffness_n_per_m : arrays of the same length
    """

    frequency_hz: tuple
    damping_n_s_per_m: tuple
    stiffness_n_per_m: tuple

    def __post_init__(self):
        f = np.asarray(self.frequency_hz, float)
        b = np.asarray(self.damping_n_s_per_m, float)
        k = np.asarray(self.stiffness_n_per_m, float)
        _need(f.ndim == 1 and f.size >= 2, "frequency_hz", f.size, "at least 2 samples")
        _need(b.shape == f.shape and k.shape == f.shape, "damping_n_s_per_m",
              b.shape, f"the shape of frequency_hz {f.shape}")
        _need(bool(np.all(f > 0) and np.all(np.diff(f) > 0)), "frequency_hz", f.tolist()[:4],
              "positive and strictly increasing")
        _need(bool(np.all(b >= 0)), "damping_n_s_per_m", float(b.min()), ">= 0")
        for name, arr in (("frequency_hz", f), ("damping_n_s_per_m", b), ("stiffness_n_per_m", k)):
            object.__setattr__(self, name, tuple(arr.tolist()))

    def __call__(self, f_hz):
        lf = np.log(np.asarray(f_hz, float))
        lx = np.log(self.frequency_hz)
        return (np.interp(lf, lx, self.damping_n_s_per_m),
                np.interp(lf, lx, self.stiffness_n_per_m))


class CapacitanceCurve:
    """Smooth C(x) and its derivatives from samples, by a cubic spline of the elastance 1/C.

    Parameters
    ----------
    x_m, capacitance_f : arrays of at least 4 samples, x strictly increasing, C > 0.
    """

    def __init__(self, x_m, capacitance_f):
        x = np.asarray(x_m, float)
        c = np.asarray(capacitance_f, float)
        _need(x.ndim == 1 and x.size >= 4 and c.shape == x.shape, "capacitance_curve",
              f"{x.size} samples", "at least 4 (x, C) pairs")
        _need(bool(np.all(np.diff(x) > 0)), "capacitance_curve x", x.tolist()[:4],
              "strictly increasing")
        _need(bool(np.all(c > 0)), "capacitance_curve C", float(c.min()), "> 0 everywhere")
        self.x_min_m = float(x[0])
        self.x_max_m = float(x[-1])
        self._s = CubicSpline(x, 1.0 / c)
        self._bp = x.tolist()
        self._coef = [tuple(col) for col in self._s.c.T.tolist()]

    def _parts(self, x):
        s, s1, s2 = self._s(x), self._s(x, 1), self._s(x, 2)
        return s, s1, s2

    def capacitance(self, x_m):
        """C(x) in F."""
        return 1.0 / self._s(x_m)

    def slope(self, x_m):
        """dC/dx in F/m."""
        s, s1, _ = self._parts(x_m)
        return -s1 / s**2

    def curvature(self, x_m):
        """d²C/dx² in F/m²."""
        s, s1, s2 = self._parts(x_m)
        return 2.0 * s1**2 / s**3 - s2 / s**2

    def scalar(self, x_m: float) -> tuple[float, float, float]:
        """(C, dC/dx, d²C/dx²) at one point, plain floats (fast path for time integration)."""
        bp = self._bp
        i = min(max(bisect.bisect_right(bp, x_m) - 1, 0), len(bp) - 2)
        c3, c2, c1, c0 = self._coef[i]
        d = x_m - bp[i]
        s = ((c3 * d + c2) * d + c1) * d + c0
        s1 = (3.0 * c3 * d + 2.0 * c2) * d + c1
        s2 = 6.0 * c3 * d + 2.0 * c2
        return 1.0 / s, -s1 / s**2, 2.0 * s1**2 / s**3 - s2 / s**2

    def contains(self, x_m) -> bool:
        x = np.asarray(x_m, float)
        return bool(np.all((x >= self.x_min_m) & (x <= self.x_max_m)))


@dataclass(frozen=True)
class LumpedModel:
    """One-degree-of-freedom capsule model, SI, referred to the diaphragm centre displacement.

    Construct with keywords.  Values "at the bias point" are evaluated at the static equilibrium
    ``x = bias_displacement_m`` with the bias voltage applied.

    Parameters
    ----------
    stiffness_n_per_m : mechanical k_eff of mode 1, no bias (N/m), > 0.
    electrostatic_stiffness_n_per_m : k_e = ½V_b²C''(x_b), constant-voltage, subtracted (N/m).
    mass_kg : m_eff (kg).
    area_m2 : A_eff = ∫φ dA (m²).
    damping_n_s_per_m : b at low frequency, film + holes (N·s/m).
    back_volume_m3 : closed volume behind the backplate (m³), finite.
    vent_resistance_pa_s_per_m3 : static-pressure equalisation path, front to back volume
        (Pa·s/m³), finite.
    rest_capacitance_f : C0 at the bias point (F).
    capacitance_slope_f_per_m : dC/dx at the bias point (F/m).
    bias_resistance_ohm : R_bias (Ω).
    bias_voltage_v : V_b (V), either sign.
    gap_m : diaphragm-to-backplate distance at rest, no bias (m).
    parasitic_capacitance_f, preamp_input_capacitance_f : C_p, C_in in parallel with C0 (F).
    capacitance_curve : samples ((x_m, C_f), ...) with x from the undeflected position, or a
        callable C(x) (sampled on [−g/3, g/3]); needed only by the nonlinear model.
    film_damping : optional callable ``f_hz -> (b, k_film)`` (e.g. :class:`FilmTable`); when
        given it replaces ``damping_n_s_per_m`` at every frequency and adds the film stiffness.
    bias_displacement_m : static centre deflection under bias (m).
    air_density_kg_m3, sound_speed_m_s : air properties; ρc² must agree with γ·p0 within 5 %.
    static_pressure_pa, gamma : p0 and the ratio of specific heats; the back volume's adiabatic
        compliance is V/(γ p0) (Beranek, *Acoustics*, 1954, ch. 5 [from memory]).
    temperature_k : temperature for thermal noise (K).
    radiation_radius_m : radius a of the baffled piston whose radiation impedance loads the
        front of the diaphragm (Rayleigh; acoustic mass 8ρ/(3π²a) at ka ≪ 1); 0: no load.
    package : optional :class:`diagap.lumped.package.PackageAcoustics` (sound port and front
        chamber — which then replace the diaphragm's radiation load —, lossy back volume, vent
        channel); None: the capsule alone, as above.
    """

    stiffness_n_per_m: float
    electrostatic_stiffness_n_per_m: float
    mass_kg: float
    area_m2: float
    damping_n_s_per_m: float
    back_volume_m3: float
    vent_resistance_pa_s_per_m3: float
    rest_capacitance_f: float
    capacitance_slope_f_per_m: float
    bias_resistance_ohm: float
    bias_voltage_v: float
    gap_m: float
    parasitic_capacitance_f: float = 0.0
    preamp_input_capacitance_f: float = 0.0
    capacitance_curve: tuple | Callable | None = None
    film_damping: Callable | None = None
    bias_displacement_m: float = 0.0
    air_density_kg_m3: float = 1.204
    sound_speed_m_s: float = 343.2
    static_pressure_pa: float = STANDARD_PRESSURE_PA
    gamma: float = 1.4
    temperature_k: float = ROOM_TEMPERATURE_K
    radiation_radius_m: float = 0.0
    package: object | None = None

    def __post_init__(self):
        pos = ("stiffness_n_per_m", "mass_kg", "area_m2", "back_volume_m3",
               "vent_resistance_pa_s_per_m3", "rest_capacitance_f", "bias_resistance_ohm",
               "gap_m", "air_density_kg_m3", "sound_speed_m_s", "static_pressure_pa", "gamma",
               "temperature_k")
        for name in pos:
            v = getattr(self, name)
            _need(isinstance(v, (int, float)) and math.isfinite(v) and v > 0, name, v,
                  "a finite number > 0")
        for name in ("damping_n_s_per_m", "parasitic_capacitance_f",
                     "preamp_input_capacitance_f", "radiation_radius_m"):
            v = getattr(self, name)
            _need(isinstance(v, (int, float)) and math.isfinite(v) and v >= 0, name, v,
                  "a finite number >= 0")
        for name in ("electrostatic_stiffness_n_per_m", "capacitance_slope_f_per_m",
                     "bias_voltage_v", "bias_displacement_m"):
            v = getattr(self, name)
            _need(isinstance(v, (int, float)) and math.isfinite(v), name, v, "a finite number")
        _need(self.electrostatic_stiffness_n_per_m < self.stiffness_n_per_m,
              "electrostatic_stiffness_n_per_m", self.electrostatic_stiffness_n_per_m,
              f"< stiffness_n_per_m = {self.stiffness_n_per_m!r} (beyond pull-in otherwise)")
        _need(self.gamma > 1.0, "gamma", self.gamma, "> 1")
        rc2 = self.air_density_kg_m3 * self.sound_speed_m_s**2
        gp0 = self.gamma * self.static_pressure_pa
        _need(abs(rc2 / gp0 - 1.0) < 0.05, "air_density_kg_m3*sound_speed_m_s**2", rc2,
              f"within 5 % of gamma*static_pressure_pa = {gp0:.6g}")
        _need(self.film_damping is None or callable(self.film_damping), "film_damping",
              self.film_damping, "None or a callable f_hz -> (b, k_film)")
        curve = self.capacitance_curve
        if curve is not None and not callable(curve):
            try:
                pairs = tuple((float(x), float(c)) for x, c in curve)
            except (TypeError, ValueError) as exc:
                raise LumpedModelError(f"capacitance_curve: must be (x_m, C_f) pairs ({exc})") \
                    from None
            object.__setattr__(self, "capacitance_curve", pairs)

    # ---- derived quantities -------------------------------------------------------------
    @property
    def net_stiffness_n_per_m(self) -> float:
        """k − k_e, the constant-voltage small-signal stiffness (N/m)."""
        return self.stiffness_n_per_m - self.electrostatic_stiffness_n_per_m

    @property
    def node_capacitance_f(self) -> float:
        """C0 + C_p + C_in, the capacitance of the output node (F)."""
        return self.rest_capacitance_f + self.parasitic_capacitance_f + \
            self.preamp_input_capacitance_f

    @property
    def transduction_n_per_v(self) -> float:
        """Γ = V_b·dC/dx (N/V, equal to C/m)."""
        return self.bias_voltage_v * self.capacitance_slope_f_per_m

    @property
    def back_volume_compliance_m3_per_pa(self) -> float:
        """Adiabatic compliance V/(γ p0) (m³/Pa)."""
        return self.back_volume_m3 / (self.gamma * self.static_pressure_pa)

    @property
    def electrical_time_constant_s(self) -> float:
        """τ = R_bias·(C0 + C_p + C_in) (s)."""
        return self.bias_resistance_ohm * self.node_capacitance_f

    def radiation_impedance(self, f_hz) -> np.ndarray:
        """Front radiation impedance (Pa·s/m³) of the baffled piston of radius
        ``radiation_radius_m`` (zeros without one)."""
        f = np.asarray(f_hz, float)
        if self.radiation_radius_m == 0.0:
            return np.zeros(f.shape, complex)
        from diagap.fem.response.coupled import piston_radiation

        return piston_radiation(2.0 * np.pi * f, self.radiation_radius_m, self.air_density_kg_m3,
                                self.sound_speed_m_s)

    def film(self, f_hz):
        """(b(f), k_film(f)) as arrays: the film table, or (damping_n_s_per_m, 0)."""
        f = np.asarray(f_hz, float)
        if self.film_damping is None:
            return np.full(f.shape, self.damping_n_s_per_m), np.zeros(f.shape)
        b, k = self.film_damping(f)
        return np.broadcast_to(np.asarray(b, float), f.shape), \
            np.broadcast_to(np.asarray(k, float), f.shape)

    def curve(self) -> CapacitanceCurve:
        """The capacitance curve as a :class:`CapacitanceCurve`."""
        c = self.capacitance_curve
        if c is None:
            raise LumpedModelError("capacitance_curve = None: must be samples ((x_m, C_f), ...) "
                                   "or a callable C(x) for the nonlinear model")
        if callable(c):
            x = np.linspace(-self.gap_m / 3.0, self.gap_m / 3.0, 201)
            return CapacitanceCurve(x, np.asarray(c(x), float))
        arr = np.asarray(c, float)
        return CapacitanceCurve(arr[:, 0], arr[:, 1])

    def replace(self, **changes) -> "LumpedModel":
        """A copy with some fields changed (validated again)."""
        return replace(self, **changes)


def _bias_deflection(k: float, eps_area: float, gap: float, volts: float) -> float:
    """Stable root of k·x = ½V²ε0A/(g − x)², x in [0, g/3) (Nathanson et al., 1967)."""
    if volts == 0.0:
        return 0.0
    v_pi = math.sqrt(8.0 * k * gap**3 / (27.0 * eps_area))
    _need(abs(volts) < v_pi, "bias_voltage_v", volts, f"below the pull-in voltage {v_pi:.6g} V")
    f = lambda x: k * x - 0.5 * volts**2 * eps_area / (gap - x) ** 2  # noqa: E731
    return brentq(f, 0.0, gap / 3.0, xtol=1e-16 * gap, rtol=1e-15)


def parallel_plate_piston(*, area_m2: float, gap_m: float, mass_kg: float,
                          stiffness_n_per_m: float, damping_n_s_per_m: float,
                          bias_voltage_v: float, bias_resistance_ohm: float,
                          back_volume_m3: float, vent_resistance_pa_s_per_m3: float,
                          parasitic_capacitance_f: float = 0.0,
                          preamp_input_capacitance_f: float = 0.0,
                          include_bias_deflection: bool = True, **air) -> LumpedModel:
    """A rigid parallel-plate piston: the closed-form reference case.

    C(x) = ε0A/(g − x); at the bias point x_b (stable root of k x = ½V²ε0A/(g − x)², or 0 when
    ``include_bias_deflection`` is false) C0 = ε0A/(g − x_b), C' = ε0A/(g − x_b)²,
    k_e = V²ε0A/(g − x_b)³ (Senturia, *Microsystem Design*, 2001 [from memory]).  The curve is
    sampled on x ∈ [−g/3, g/3].  Remaining keywords (air properties, temperature) pass through.
    """
    eps_a = EPSILON_0_F_PER_M * area_m2
    xb = _bias_deflection(stiffness_n_per_m, eps_a, gap_m, bias_voltage_v) \
        if include_bias_deflection else 0.0
    d = gap_m - xb
    xs = np.linspace(-gap_m / 3.0, gap_m / 3.0, 41)
    return LumpedModel(
        stiffness_n_per_m=stiffness_n_per_m,
        electrostatic_stiffness_n_per_m=bias_voltage_v**2 * eps_a / d**3,
        mass_kg=mass_kg, area_m2=area_m2, damping_n_s_per_m=damping_n_s_per_m,
        back_volume_m3=back_volume_m3, vent_resistance_pa_s_per_m3=vent_resistance_pa_s_per_m3,
        rest_capacitance_f=eps_a / d, capacitance_slope_f_per_m=eps_a / d**2,
        capacitance_curve=tuple(zip(xs, eps_a / (gap_m - xs))),
        parasitic_capacitance_f=parasitic_capacitance_f,
        preamp_input_capacitance_f=preamp_input_capacitance_f,
        bias_resistance_ohm=bias_resistance_ohm, bias_voltage_v=bias_voltage_v, gap_m=gap_m,
        bias_displacement_m=xb, **air)


def from_capacitance_curve(curve, *, bias_voltage_v: float, bias_displacement_m: float = 0.0,
                           **fields) -> LumpedModel:
    """A model whose C0, dC/dx and k_e are taken from the curve at the bias point.

    C0 = C(x_b), dC/dx = C'(x_b), k_e = ½V_b²C''(x_b), from the elastance spline of
    :class:`CapacitanceCurve`, so the linear and nonlinear models agree exactly.  ``curve`` is
    samples ((x_m, C_f), ...); the other fields of :class:`LumpedModel` pass as keywords.
    """
    pairs = tuple((float(x), float(c)) for x, c in curve)
    arr = np.asarray(pairs)
    cc = CapacitanceCurve(arr[:, 0], arr[:, 1])
    _need(cc.contains(bias_displacement_m), "bias_displacement_m", bias_displacement_m,
          f"inside the curve's range [{cc.x_min_m:.4g}, {cc.x_max_m:.4g}] m")
    xb = bias_displacement_m
    return LumpedModel(
        rest_capacitance_f=float(cc.capacitance(xb)),
        capacitance_slope_f_per_m=float(cc.slope(xb)),
        electrostatic_stiffness_n_per_m=float(0.5 * bias_voltage_v**2 * cc.curvature(xb)),
        capacitance_curve=pairs, bias_voltage_v=bias_voltage_v,
        bias_displacement_m=xb, **fields)
