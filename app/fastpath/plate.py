r"""The diaphragm in scaled form: one table in the tension ratio serves every clamped disk.

Kirchhoff plate with tension, D∇⁴w − T∇²w = p and D∇⁴w − T∇²w = ρ_s ω² w on a disk of radius a
with w = ∂w/∂n = 0 at r = a (:mod:`diagap.fem.plate.solver`). With ρ = r/a, ŵ = wD/(pa⁴) and
ω̂ = ω√(ρ_s a⁴/D) the problem becomes ∇̂⁴ŵ − τ∇̂²ŵ = 1, ∇̂⁴φ − τ∇̂²φ = ω̂²φ on the unit disk:
the only parameter left is τ = T a²/D (Poisson's ratio ν drops out of the clamped problem, since
the ν-term of the bending energy is a null Lagrangian that vanishes with w = ∂w/∂n = 0). The FE
meshes are made in the same scaled coordinates and depend on τ alone (through the tension layer
width 1/√τ), so the solver's answer for any design is the scaled answer times powers of
(a, D, ρ_s):

=================================  ==================  =========================
quantity                           scaled value        SI factor
=================================  ==================  =========================
centre compliance c0               ĉ(τ)                a⁴/D
volume compliance                  v̂(τ)                a⁶/D
mode-1 / static-shape mass         m̂(τ)                ρ_s a²
mode-1 / static-shape stiffness    k̂(τ)                D/a²
mode-1 / static-shape area         Â(τ)                a²
natural frequency i                f̂_i(τ)              √(D/(ρ_s a⁴))
=================================  ==================  =========================

The table axis is τ + τ_b on a log scale, τ_b = j₁,₁² ≈ 14.68 the buckling value of the clamped
disk (Timoshenko & Gere, Theory of Elastic Stability, 2nd ed. 1961, §9.2 [from memory]): near
buckling ĉ ∝ 1/(τ + τ_b), which is linear in these coordinates. Covered: −0.9 τ_b ≤ τ ≤
``MEMBRANE_TAU`` (the plate model of the solver); the segment ends include τ = 0 and the
tension at which the solver's edge mesh starts to follow the boundary layer.
"""
from __future__ import annotations

import math
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["PlateScaling", "plate_table", "plate_summary", "scaled_plate", "TAU_BUCKLING",
           "TAU_MIN", "TAU_MAX", "SCALE_EXPONENTS"]

#: j₁,₁²: the buckling tension ratio of a clamped disk (τ = −TAU_BUCKLING)
TAU_BUCKLING = 14.681970642123893
TAU_MIN = -0.9 * TAU_BUCKLING
TAU_MAX = 1.0e4  # the solver's MEMBRANE_TAU: above, the membrane model is used

#: exponents (a, D, ρ_s) of the SI factor of each scaled output
SCALE_EXPONENTS = {
    "center_compliance_m_per_pa": (4, -1, 0), "volume_compliance_m3_per_pa": (6, -1, 0),
    "effective_mass_kg": (2, 0, 1), "effective_stiffness_n_per_m": (-2, 1, 0),
    "effective_area_m2": (2, 0, 0), "static_shape_mass_kg": (2, 0, 1),
    "static_shape_stiffness_n_per_m": (-2, 1, 0), "static_shape_area_m2": (2, 0, 0),
}
FREQUENCY_EXPONENTS = (-2, 0.5, -0.5)
N_MODES = 6


def scaled_plate(accuracy: str, x) -> dict:
    """The solver's result for the unit clamped disk (a = 1 m, D = 1 N·m, ρ_s = 1 kg/m²) at
    τ = x[0] − τ_b: every output of the table, in the scaled units of the module docstring."""
    from diagap.fem.plate.solver import PlateProblem, solve_plate

    tau = float(x[0]) - TAU_BUCKLING
    h, nu = 0.01, 0.3
    e = 12.0 * (1.0 - nu * nu) / h**3
    problem = PlateProblem("circle", 1.0, e, nu, h, 1.0 / h, tau / h, "clamped")
    res = solve_plate(problem, accuracy, N_MODES)
    out = {k: float(getattr(res, k)) for k in SCALE_EXPONENTS}
    for i, f in enumerate(res.natural_frequencies_hz, start=1):
        out[f"natural_frequencies_hz_{i}"] = float(f)
    return out


def _layer_tau(accuracy: str) -> float:
    """τ above which the solver's finest edge size follows the tension layer."""
    from diagap.fem.levels import _FINEST

    finest, _, cells = _FINEST["circle"][accuracy]
    return 1.0 / (cells * finest.h_edge) ** 2


def plate_axis(accuracy: str, n: int = 5) -> Axis:
    cuts = sorted({TAU_MIN, 0.0, min(_layer_tau(accuracy), 0.5 * TAU_MAX), TAU_MAX})
    return Axis("tension_ratio_plus_buckling", True,
                tuple(math.log(t + TAU_BUCKLING) for t in cuts), n)


def plate_table(accuracy: str = "normal", *, tol: float = 1e-3, mapper=None,
                validate: int = 4) -> tuple[TensorTable, dict]:
    """The scaled clamped-disk table of an accuracy setting (cached on disk, built on demand).

    Parameters
    ----------
    accuracy : {"draft", "normal", "fine"}
        The solver's accuracy setting the table reproduces.
    tol : float
        Allowed interpolation error against the solver (relative).
    mapper : callable, optional
        How reference points are computed (:func:`diagap.fastpath.refine.mapper_for`);
        default: local processes on every core.
    validate : int
        Random held-out points checked after the refinement.
    """
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table

    def build():
        return build_table(partial(scaled_plate, accuracy), [plate_axis(accuracy)], tol=tol,
                           mapper=mapper or mapper_for(), validate=validate)

    return held_table("fastpath-plate", {"accuracy": accuracy, "tol": tol,
                                           "validate": validate}, build)


class PlateScaling:
    """The SI factors of one diaphragm: length a, bending stiffness D, areal density ρ_s."""

    def __init__(self, radius_m: float, bending_stiffness_n_m: float, areal_density_kg_m2: float,
                 tension_n_per_m: float):
        self.a, self.d, self.rho = radius_m, bending_stiffness_n_m, areal_density_kg_m2
        self.tau = tension_n_per_m * radius_m**2 / bending_stiffness_n_m

    def factor(self, exponents) -> float:
        ea, ed, er = exponents
        return self.a**ea * self.d**ed * self.rho**er


def plate_summary(table: TensorTable, scaling: PlateScaling, uncertified=()) -> dict:
    """Flat ``mechanics.*`` outputs in SI from the scaled table (uncertified outputs left out)."""
    vals = table((scaling.tau + TAU_BUCKLING,))
    out = {}
    for name, v in zip(table.names, vals):
        if name in uncertified:
            continue
        exps = FREQUENCY_EXPONENTS if name.startswith("natural_frequencies_hz") \
            else SCALE_EXPONENTS[name]
        out[f"mechanics.{name}"] = float(v) * scaling.factor(exps)
    freqs = [out[k] for k in sorted(out, key=_mode_index) if "natural_frequencies" in k]
    distinct: list = []
    for f in freqs:
        if not distinct or f > distinct[-1] * (1 + 1e-4):
            distinct.append(f)
    for i, f in enumerate(distinct, start=1):
        out[f"mechanics.distinct_frequencies_hz_{i}"] = f
    return out


def _mode_index(key: str) -> int:
    tail = key.rsplit("_", 1)[-1]
    return int(tail) if tail.isdigit() else 0


def covers(scaling: PlateScaling) -> bool:
    return bool(TAU_MIN <= scaling.tau <= TAU_MAX and np.isfinite(scaling.tau))
