r"""The plate solver's static shape of a clamped disk, as a correction on τ to the closed form.

The damping stage integrates the film over the static shape φ of the plate FE
(:meth:`diagap.fem.plate.solver.PlateResult.static_shape`, normalised to 1 at the centre).
For a clamped disk φ depends on the tension ratio τ alone (:mod:`diagap.fastpath.plate`) and
has a closed form (:func:`diagap.fastpath.radial.static_shape`). The FE shape departs from it
by its discretisation error, mostly towards the clamped edge (≈ −3e-3 at u = r/a = 0.9 at
"draft", −7e-4 at "normal"), which moves the damping by ≈ 4e-4 and 1e-4. To reproduce the stage
rather than the exact shape, the ratios

    q_k(τ) = φ_FE(u_k; τ) / φ(u_k; τ),   u_k ∈ :data:`SHAPE_POINTS`,

are tabulated on the axis ln(τ + τ_b) (:func:`tau_axis`) (one plate solve of the unit disk per
node) and the film uses φ(u)·(1 + r(u)), r the monotone cubic (PCHIP) through
(0, 0), (u_k, q_k − 1) held constant beyond the last point. The correction is itself ~1e-3,
so its interpolation error enters the damping at the 1e-5 level.
"""
from __future__ import annotations

import math
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["SHAPE_POINTS", "shape_table", "shape_correction", "tau_axis"]

#: radii u = r/a where the FE shape is sampled
SHAPE_POINTS = (0.2, 0.4, 0.55, 0.7, 0.8, 0.87, 0.92, 0.96, 0.985)


def scaled_shape(accuracy: str, x) -> dict:
    """q_k of the unit clamped disk at τ = x[0] − τ_b (the plate table's coordinates)."""
    from diagap.fastpath.plate import TAU_BUCKLING
    from diagap.fastpath.radial import static_shape
    from diagap.fem.plate.solver import PlateProblem, solve_plate

    tau = float(x[0]) - TAU_BUCKLING
    h, nu = 0.01, 0.3
    e = 12.0 * (1.0 - nu * nu) / h**3
    res = solve_plate(PlateProblem("circle", 1.0, e, nu, h, 1.0 / h, tau / h, "clamped"),
                      accuracy, 1)
    u = np.array(SHAPE_POINTS)
    fe = res.static_shape(u, np.zeros_like(u))
    return {f"shape_ratio_{i}": float(v) for i, v in enumerate(fe / static_shape(u, tau))}


def tau_axis(accuracy: str, n: int = 5) -> Axis:
    """ln(τ + τ_b) over the plate model's range of the clamped disk, −0.9 τ_b ≤ τ ≤
    ``MEMBRANE_TAU``, with segment ends at τ = 0 and where the solver's edge mesh starts to
    follow the tension layer."""
    from diagap.fastpath.plate import TAU_BUCKLING, _layer_tau
    from diagap.fastpath.plate_range import COMPRESSION
    from diagap.fem.plate.solver import MEMBRANE_TAU

    cuts = sorted({-COMPRESSION * TAU_BUCKLING, 0.0,
                   min(_layer_tau("circle", accuracy), 0.5 * MEMBRANE_TAU), MEMBRANE_TAU})
    return Axis("tension_ratio_plus_buckling", True,
                tuple(math.log(t + TAU_BUCKLING) for t in cuts), n)


def shape_table(accuracy: str = "normal", *, tol: float = 1e-4, mapper=None
                ) -> tuple[TensorTable, dict]:
    """The table of q_k over :func:`tau_axis` (cached; built on demand)."""
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table, module_hash

    def build():
        return build_table(partial(scaled_shape, accuracy), [tau_axis(accuracy)], tol=tol,
                           mapper=mapper or mapper_for(), validate=4, max_splits=2)

    return held_table("fastpath-shape", {"accuracy": accuracy, "tol": tol,
                                          "code": module_hash(__file__)}, build)


def shape_correction(table: TensorTable, tau: float):
    """r(u) of the module docstring at τ: a callable of u in [0, 1]."""
    from scipy.interpolate import PchipInterpolator

    from diagap.fastpath.plate import TAU_BUCKLING

    q = table((tau + TAU_BUCKLING,))
    u = np.concatenate([[0.0], SHAPE_POINTS])
    r = np.concatenate([[0.0], np.asarray(q, float) - 1.0])
    spline = PchipInterpolator(u, r, extrapolate=False)
    last = float(r[-1])

    def corr(x):
        x = np.asarray(x, float)
        return np.where(x <= u[-1], np.nan_to_num(spline(np.clip(x, 0.0, u[-1]))), last)

    return corr
