r"""The rim fringing of the electrode pair in scaled form: one table for every large capsule.

Physics (:mod:`diagap.fem.field.rim`): Laplace's equation in the open space around a thin
diaphragm disk (radius R_d, u = 0) and the backplate electrode (radius R_e ≤ R_d, thickness t,
at height g, u = 1 V), far boundary at 50 times the pair size with ∂u/∂n = 0; the rim fringing
is C_rim = C_pair − ε0πR_e²/g. With every length divided by g the problem depends on
(R_e/g, R_d/g, t/g) and C_rim = ε0·g·Ĉ(R_e/g, R_d/g, t/g): the FE value is homogeneous of degree
one in the lengths.

Large pairs. When the larger radius R_d exceeds 100 gaps (``MAX_SIZE_RATIO`` times the smallest
sampled gap g(1 − ``RIM_SPAN``)), the solver models a pair of 100 gaps — the overhang of the
diaphragm beyond the electrode kept, k = min((R_d − R_e)/g, 30), the electrode radius
(100 − k)·g — and extends the per-length edge capacitance by the size law of thin plates,
ΔC/ℓ = (ε0/2π)·ln(1/f), f = (100 − k)g/R_e (the ln term of Kirchhoff's disk formula,
Kirchhoff 1877). The modelled small pair then depends on two ratios only,

    k = min((R_d − R_e)/g, 30)  and  t/g,

so one table of its five scaled samples Ĉ_j = C_rim,j/(ε0 g) at the local gaps
g·(1 − RIM_SPAN … 1 + RIM_SPAN) (uniform, as the solver samples them) serves every design in
this regime; the stage's fit C_rim(ĝ) = α + β ln ĝ + γ ĝ and the size-law extension are then
redone from the samples exactly as the solver does (:func:`rim_from_samples`). Axes: ln(1 + k)
(the field changes fastest while the overhang is a few gaps) and ln(t/g).

Validated range: :data:`RIM_RANGE`. Smaller pairs (R_d ≤ 100 g) are solved directly by the
solver at their own three ratios and are not tabulated.
"""
from __future__ import annotations

import math
from functools import partial

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["RIM_RANGE", "MODEL_GAPS", "OVERHANG_CAP", "scaled_rim", "rim_axes", "rim_table",
           "rim_from_samples", "SAMPLE_NAMES"]

#: the solver's modelled pair radius in gaps, MAX_SIZE_RATIO·(1 − RIM_SPAN) = 200·0.5, and its
#: overhang cap in gaps, 0.3 of it (:func:`diagap.fem.field.rim.rim_fringing`; a test checks both)
MODEL_GAPS = 100.0
OVERHANG_CAP = 30.0

#: Validated range of the rim table: the diaphragm radius over the gap (strictly above the
#: solver's large-pair threshold MODEL_GAPS; no upper limit, the size law is analytic) and the
#: backplate electrode thickness over the gap (thin MEMS electrodes, t/g ≈ 0.2, to thick
#: condenser plates, t/g = 100; the stage itself now solves pairs up to t/g = 1000, the table
#: stops at 100). The overhang ratio k is covered whole (0 to OVERHANG_CAP).
RIM_RANGE = {
    "diaphragm_radius_over_gap": (MODEL_GAPS, math.inf),
    "thickness_over_gap": (0.05, 100.0),
}
#: changes with the table's reference function or axes (a new cache entry)
TABLE_VERSION = 1
SAMPLE_NAMES = tuple(f"rim_sample_{j}" for j in range(1, 6))


def scaled_rim(accuracy: str, x) -> dict:
    """The solver's small pair at g = 1 m: x = (1 + k, t/g) → five scaled samples C_rim,j/ε0."""
    from diagap.fem.constants import EPSILON_0_F_PER_M
    from diagap.fem.field.rim import rim_fringing_direct
    from diagap.stages import RIM_SPAN

    k, t = float(x[0]) - 1.0, float(x[1])
    res = rim_fringing_direct(MODEL_GAPS - k, MODEL_GAPS, 1.0, t, shape="circle",
                              accuracy=accuracy, gap_span=RIM_SPAN)
    return {n: float(s) / EPSILON_0_F_PER_M for n, s in zip(SAMPLE_NAMES, res.samples_f)}


def rim_axes(n: int = 5) -> list:
    t0, t1 = RIM_RANGE["thickness_over_gap"]
    return [Axis("one_plus_overhang_over_gap", True, (0.0, math.log(1.0 + OVERHANG_CAP)), n),
            Axis("thickness_over_gap", True, (math.log(t0), math.log(t1)), n)]


def rim_table(accuracy: str = "normal", *, tol: float = 1e-3, mapper=None, validate: int = 8,
              max_splits: int = 4) -> tuple[TensorTable, dict]:
    """The scaled rim table of the large-pair regime (cached on disk, built on demand).

    Parameters as for :func:`diagap.fastpath.cells.cell_table`. Outputs: the five scaled
    samples ``rim_sample_1`` … ``rim_sample_5`` (C_rim/(ε0 g) at the sampled local gaps).
    """
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table

    def build():
        return build_table(partial(scaled_rim, accuracy), rim_axes(), tol=tol,
                           max_splits=max_splits, mapper=mapper or mapper_for(),
                           validate=validate, seed=2)

    params = {"accuracy": accuracy, "tol": tol, "validate": validate, "max_splits": max_splits,
              "range": {"t": RIM_RANGE["thickness_over_gap"], "model": MODEL_GAPS},
              "version": TABLE_VERSION}
    return held_table("fastpath-rim", params, build)


def rim_from_samples(samples_scaled, electrode_radius_m: float, diaphragm_radius_m: float,
                     gap_m: float):
    """The solver's :class:`~diagap.fem.field.rim.RimResult` of a large pair from the scaled
    samples of its small model: the fit α + β ln ĝ + γ ĝ and the size-law extension.

    Error fields (``abs_error_f``, ``fit_error``) are those of the fit alone; the FE error
    estimates of the solver are not reproduced.
    """
    from diagap.fem.constants import EPSILON_0_F_PER_M
    from diagap.fem.field.rim import RimResult
    from diagap.stages import RIM_SPAN

    g = float(gap_m)
    k = min(diaphragm_radius_m - electrode_radius_m, OVERHANG_CAP * g)
    re_s = MODEL_GAPS * g - k
    f = re_s / electrode_radius_m
    gaps = g * np.linspace(1 - RIM_SPAN, 1 + RIM_SPAN, len(SAMPLE_NAMES))
    small = EPSILON_0_F_PER_M * g * np.asarray(samples_scaled, dtype=float)
    gh = gaps / g
    M = np.column_stack([np.ones_like(gh), np.log(gh), gh])
    coef, *_ = np.linalg.lstsq(M, small, rcond=None)
    fit_abs = float(np.max(np.abs(M @ coef - small)))
    c_small = float(small[len(small) // 2])
    perimeter = 2 * math.pi * electrode_radius_m
    extra = EPSILON_0_F_PER_M / (2 * math.pi) * math.log(1.0 / f) * perimeter
    coef = coef / f
    coef[0] += extra
    c_rest = c_small / f + extra
    parallel = EPSILON_0_F_PER_M * math.pi * electrode_radius_m**2 / g
    return RimResult(
        capacitance_f=c_rest, abs_error_f=fit_abs / f, pair_capacitance_f=parallel + c_rest,
        parallel_plate_capacitance_f=parallel, gap_m=g, gaps_m=gaps, samples_f=small / f + extra,
        coefficients=coef, fit_error=fit_abs / abs(c_small), shape="circle",
        perimeter_m=perimeter, per_length_f_per_m=c_rest / perimeter, dofs=0, runtime_s=0.0)
