"""Capacitance at the terminals versus bias, C_t(V), from the coupled FE solve — built for fitting.

Physics
-------
At bias V the diaphragm takes the static equilibrium w(x, y; V) of the linear plate under the
electrostatic pressure (:mod:`diagap.fem.coupling.branch`: K u = V² f(u), traced in the centre
deflection w0 through the fold). The capacitance seen at the terminals is

    C_t(V) = Σ_q W_q c(g − w_q(V)) + C_rim(g − w_rim(V)) + C_p            (F)

with c(ĝ) the unit-cell capacitance density of the perforated backplate at the local gap ĝ
(F/m², :mod:`diagap.fem.field.cell_table`), W_q the electrode quadrature weights (m²) of the FE
mesh (which embeds the electrode edge), C_rim the rim fringing capacitance at the local gap at
the electrode edge (mean deflection of 8 rim points; :mod:`diagap.fem.field.rim`) and C_p the
parasitic capacitance in parallel. C_t is even in V. One branch trace gives the whole curve:
λ = V² and C_t are smooth functions of w0 along the stable branch, interpolated by cubic splines
through the traced points (12 uniform steps in w0 plus the fold; against 24 steps the
curve changes by 4e-7 relative on the demo design); for each measured V the
equilibrium w0 solves λ(w0) = V² on the stable part (Brent). Beyond pull-in the curve is held at
its value at the fold, so that a fit exploring such parameters sees a continuous misfit.

What is reused between evaluations (exactly, no linearisation): the plate is assembled once on
the mesh of the accuracy level; its stiffness is K = (D/L²)(K_lap − (1 − ν)K_gauss) + T K_tension
with dimensionless parts, so a new residual stress σ (T = σh), thickness h (D = Eh³/12(1 − ν²))
or Young's modulus only recombines them; c(ĝ) depends on the local gap alone (for the hole
pattern), so one table over the local gaps of the whole gap range serves every rest gap; the rim
model is likewise one function of the local rim gap. A changed gap or stress thus costs one
branch trace (sparse LU solves) instead of new meshes and cell solves.

Error estimate: the same curve on the next coarser mesh level gives the discretisation error
(:meth:`CVModel.discretisation_error`, the largest relative difference over the curve), to which
the capacitance table's own error is added.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np

from diagap.design import DesignError

__all__ = ["CVModel", "FREE_PATHS", "GAP_RANGE"]

#: design values the C–V model can vary cheaply
FREE_PATHS = ("diaphragm.residual_stress", "backplate.gap", "diaphragm.thickness",
              "diaphragm.youngs_modulus", "electrical.parasitic_capacitance")
#: rest gaps the model covers, relative to the design's gap
GAP_RANGE = (0.75, 1.25)
_STEPS = 12
_RIM_POINTS = 8


class _Level:
    """One mesh level: the plate parts, electrode quadrature and rim functional."""

    def __init__(self, plate, shape: str, electrode_m: float):
        from diagap.fem.coupling.plate import coupling_system

        self.plate = plate
        cs = coupling_system(plate, shape, electrode_m)
        self.B, self.weights, self.center = cs.B, cs.weights, cs.center
        th = 2 * np.pi * (np.arange(_RIM_POINTS) + 0.5) / _RIM_POINTS
        r = electrode_m if shape == "circle" else 0.5 * electrode_m
        xs, ys = (r * np.cos(th), r * np.sin(th)) if shape == "circle" else \
            (np.array([r, 0, -r, 0, r, -r, r, -r]) * [1, 1, 1, 1, 1, 1, 1, 1],
             np.array([0, r, 0, -r, 0.5 * r, 0.5 * r, -0.5 * r, -0.5 * r]))
        self.rim = np.mean([plate.point_functional(x, y) for x, y in zip(xs, ys)], axis=0)

    def system(self, bending_nm: float, tension_n_per_m: float, density_kg_m2: float):
        from diagap.fem.coupling.branch import CouplingSystem

        p = dataclasses.replace(self.plate, bending_stiffness_nm=bending_nm,
                                tension_n_per_m=tension_n_per_m,
                                areal_density_kg_m2=density_kg_m2, _cache={})
        return CouplingSystem(K=p.K, B=self.B, weights=self.weights, center=self.center)


class CVModel:
    """C_t(V) of ``design`` for changed free values (module docstring).

    Parameters
    ----------
    design : Design
        The nominal design; its accuracy chooses the mesh (the coupled solve's family).
    mesh : {"fine", "coarse"}
        The finer of the family's two finest levels (as the coupled stage reports), or the
        coarser one (about half the cost; its error estimate then compares with nothing
        coarser and is None).
    """

    def __init__(self, design, mesh: str = "fine"):
        from diagap.extract import plate_problem
        from diagap.fem.coupling.plate import COUPLING_MESHES, plate_levels
        from diagap.fem.field.cell_table import capacitance_density_table
        from diagap.fem.field.rim import rim_fringing
        from diagap.stages import GAP_TABLE

        d, b = design.diaphragm, design.backplate
        if b.hole_lattice == "none":
            raise DesignError("fit: the C–V model needs a perforated backplate "
                              "(backplate.hole_lattice hex or square)")
        self.design = design
        acc = design.analysis.accuracy
        plates, _ = plate_levels(plate_problem(design), COUPLING_MESHES.get(acc, acc),
                                 b.electrode_size_m)
        if mesh not in ("fine", "coarse"):
            raise ValueError(f"mesh = {mesh!r}: must be fine or coarse")
        self.mesh = mesh
        chosen = plates[-2:] if mesh == "fine" else plates[-2:-1]
        self.levels = [_Level(p, d.shape, b.electrode_size_m) for p in chosen]
        g = b.gap_m
        self.density = capacitance_density_table(
            GAP_TABLE[0] * GAP_RANGE[0] * g, GAP_TABLE[1] * GAP_RANGE[1] * g, b.hole_radius_m,
            b.hole_pitch_m, b.hole_lattice, b.thickness_m, acc)
        half = d.shape == "square"
        self.rim = rim_fringing((0.5 if half else 1.0) * b.electrode_size_m,
                                (0.5 if half else 1.0) * d.size_m, g, b.thickness_m,
                                shape=d.shape, accuracy=acc, gap_span=0.6)

    def nominal(self) -> dict:
        """The free values of the design (SI)."""
        d, e = self.design.diaphragm, self.design.electrical
        return {"diaphragm.residual_stress": d.residual_stress_pa,
                "backplate.gap": self.design.backplate.gap_m,
                "diaphragm.thickness": d.thickness_m,
                "diaphragm.youngs_modulus": d.youngs_modulus_pa,
                "electrical.parasitic_capacitance": 0.0 if e is None else
                e.parasitic_capacitance_f}

    def gap_bounds(self) -> tuple[float, float]:
        g = self.design.backplate.gap_m
        return GAP_RANGE[0] * g, GAP_RANGE[1] * g

    def _branch_curve(self, level: _Level, values: dict):
        from diagap.fem.coupling.branch import trace_branch
        from diagap.fem.coupling.plate import load_from_density

        d = self.design.diaphragm
        h, E = values["diaphragm.thickness"], values["diaphragm.youngs_modulus"]
        D = E * h**3 / (12 * (1 - d.poisson_ratio**2))
        g = values["backplate.gap"]
        cs = level.system(D, values["diaphragm.residual_stress"] * h, d.density_kg_m3 * h)
        br = trace_branch(cs, load_from_density(self.density, g), g, steps=_STEPS)
        pts = [p for p in br.points if p.center_deflection_m <= br.pull_in_center_deflection_m]
        w0 = np.array([p.center_deflection_m for p in pts])
        lam = np.array([p.voltage_v**2 for p in pts])
        cap = np.array([float(np.sum(level.weights * self.density(g - level.B @ p.u)))
                        + float(self.rim(g - level.rim @ p.u)) for p in pts])
        return w0, lam, cap

    def curve(self, values: dict, biases_v, level: int = -1) -> np.ndarray:
        """C_t (F) at the biases ``biases_v`` (V) for the free ``values`` (path → SI; missing
        paths take the design's values)."""
        return self.curve_and_pull_in(values, biases_v, level)[0]

    def curve_and_pull_in(self, values: dict, biases_v, level: int = -1):
        """(C_t (F) at ``biases_v`` as :meth:`curve`, the pull-in voltage (V) of the same
        branch): one trace gives both."""
        from scipy.interpolate import CubicSpline
        from scipy.optimize import brentq

        vals = {**self.nominal(), **values}
        lo, hi = self.gap_bounds()
        if not lo * (1 - 1e-9) <= vals["backplate.gap"] <= hi * (1 + 1e-9):
            raise DesignError(f"backplate.gap = {vals['backplate.gap']:g} m: outside the C–V "
                              f"model's range [{lo:g}, {hi:g}] m")
        w0, lam, cap = self._branch_curve(self.levels[level], vals)
        lam_of, cap_of = CubicSpline(w0, lam), CubicSpline(w0, cap)
        out = []
        for v in np.abs(np.asarray(biases_v, float)):
            target = v * v
            if target <= 0:
                out.append(cap[0])
            elif target >= lam[-1]:
                out.append(cap[-1])
            else:
                w = brentq(lambda x: lam_of(x) - target, w0[0], w0[-1], xtol=1e-14 * w0[-1])
                out.append(float(cap_of(w)))
        return np.array(out) + vals["electrical.parasitic_capacitance"], math.sqrt(lam[-1])

    def discretisation_error(self, values: dict, biases_v) -> float | None:
        """Largest relative difference of the curve between the two mesh levels, plus the
        capacitance table's error (None with a single level)."""
        if len(self.levels) < 2:
            return None
        fine = self.curve(values, biases_v, -1)
        coarse = self.curve(values, biases_v, 0)
        table = float(getattr(self.density, "rel_error", 0.0)) + float(
            getattr(self.density, "fit_error", 0.0))
        return float(np.max(np.abs(fine - coarse) / np.abs(fine))) + table

    def pull_in_voltage_v(self, values: dict) -> float:
        """Pull-in voltage (V) of the model for ``values``."""
        _, lam, _ = self._branch_curve(self.levels[-1], {**self.nominal(), **values})
        return math.sqrt(lam[-1])
