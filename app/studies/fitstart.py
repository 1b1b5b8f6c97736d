"""Starts of a C–V fit: a coarse space-filling search ahead of the local least-squares fit.

Why: the least-squares fit of :mod:`diagap.studies.fit` is local (trust region reflective from
one start). Its misfit Φ(θ) = Σ_j r_j(θ)², r_j = C_t(V_j; θ) − C_j, is not convex in the free
values θ: where the model's pull-in voltage V_PI(θ) lies inside the measured bias range, the
model curve is held at its fold value for |V_j| ≥ V_PI (:class:`diagap.studies.cvmodel.CVModel`),
so Φ has plateaus and kinks there, and a start in that region — e.g. a slack nominal diaphragm
(residual stress 0), whose model collapses at a few volts while the measured curve stays below
pull-in — can lead the steps into a wrong local minimum.

Method (a multistart: coarse global sampling, then local refinement of the best samples; e.g.
Rinnooy Kan & Timmer, "Stochastic global optimization methods part I", Math. Programming 39,
1987 [from memory]):

1. Starts: the given start (the design's values, or the caller's) and N = ``points`` points of a
   Latin hypercube (McKay, Beckman & Conover, Technometrics 21, 1979; :mod:`scipy.stats.qmc`)
   in the box of the scaled free values p = θ/s (the fit's bounds, each side pulled in by
   2 % of its width so that a start's difference stencil stays inside). The seed is fixed: a fit
   run again replays the same evaluations.
2. One batch: the model curve at every start, evaluated together like every batch of the fit
   (in this process, on the study's worker processes or a Dask cluster; stored and replayed).
3. Starts whose model collapses within the data's bias range (V_PI(θ) ≤ max_j |V_j|) or cannot
   be evaluated are discarded; if none is left, every start is kept (the fit then says so).
4. The local fit runs from the ``keep`` remaining starts of lowest Φ; the end point of lowest Φ
   is the result.

Cost: N + 1 curves (one branch trace each, no new meshes or cell solves) and ``keep`` local fits.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["StartCandidate", "start_points", "choose_starts", "local_fits_from_starts",
           "POINTS_PER_VALUE", "LOCAL_FITS"]

#: space-filling starts per free value
POINTS_PER_VALUE = 4
#: local fits run from the best starts
LOCAL_FITS = 2
_INSET = 0.02
_SEED = 20261202


@dataclass(frozen=True)
class StartCandidate:
    """One start: scaled values ``x``, where it came from, its misfit Φ (fit units) and the
    model's pull-in voltage there (V; None when unknown)."""

    x: np.ndarray
    origin: str              # "given" or "space-filling"
    cost: float
    pull_in_v: float | None
    status: str              # "usable", "collapses" (V_PI within the data) or "failed"


def start_points(x0, lo, hi, points: int) -> list[tuple[np.ndarray, str]]:
    """The given start ``x0`` and ``points`` Latin-hypercube points in the box [lo, hi] (scaled,
    each side pulled in by 2 % of its width): ``[(x, origin), ...]``."""
    from scipy.stats import qmc

    x0, lo, hi = (np.asarray(a, float) for a in (x0, lo, hi))
    out = [(x0.copy(), "given")]
    if points <= 0:
        return out
    a, b = lo + _INSET * (hi - lo), hi - _INSET * (hi - lo)
    u = qmc.LatinHypercube(x0.size, seed=_SEED).random(points)
    out += [(a + (b - a) * row, "space-filling") for row in u]
    return out


def choose_starts(points, costs, pull_ins, max_bias_v: float, keep: int):
    """The starts of the local fits and the list of all candidates.

    Parameters
    ----------
    points : list of (x, origin)
    costs : sequence of float
        Φ at each point (fit units; inf where the model failed).
    pull_ins : sequence of float or None
        The model's pull-in voltage at each point (V).
    max_bias_v : float
        Largest |V_j| of the data (V).
    keep : int
        Number of local fits.

    Returns
    -------
    chosen : list of StartCandidate (lowest Φ first)
    candidates : list of StartCandidate (all, in the order of ``points``)
    all_discarded : bool
        No start survived the collapse test; the chosen ones are then the lowest Φ of all.
    """
    cands = []
    for (x, origin), cost, vpi in zip(points, costs, pull_ins):
        if not math.isfinite(cost):
            status = "failed"
        elif vpi is not None and vpi <= max_bias_v:
            status = "collapses"
        else:
            status = "usable"
        cands.append(StartCandidate(np.asarray(x, float), origin, float(cost), vpi, status))
    usable = [c for c in cands if c.status == "usable"]
    all_discarded = not usable
    pool = usable or [c for c in cands if math.isfinite(c.cost)] or cands
    chosen = sorted(pool, key=lambda c: (c.cost, c.origin != "given"))[:max(keep, 1)]
    return chosen, cands, all_discarded


def local_fits_from_starts(cv, evals, x0, box, V, starts, local_fits, opts, units):
    """The start search and the local fits from its best starts (module docstring).

    Parameters
    ----------
    cv : diagap.studies.fit._Residuals
        The fit's memoised residuals (scaled parameters).
    evals : diagap.studies.fitrun.FitEvaluations
        Its evaluations (pull-in voltages of the parameter sets evaluated).
    x0 : ndarray
        The given start (scaled).
    box : (lo, hi)
        The scaled bounds.
    V : ndarray
        The measured biases (V).
    starts, local_fits : int or None
        Space-filling starts (None: ``POINTS_PER_VALUE`` per free value) and local fits (None:
        ``LOCAL_FITS``).
    opts : dict
        Options of :func:`scipy.optimize.least_squares`.
    units : (paths, scales, c_unit)
        The free values, their scales and the residual unit (F).

    Returns
    -------
    (solution, facts)
        The local fit of lowest misfit, and the facts for fit.json (``start_search``).
    """
    from scipy.optimize import least_squares

    from diagap.studies.fitrun import set_key

    paths, scales, c_unit = units
    lo, hi = box
    n = len(paths)
    points = start_points(x0, lo, hi, POINTS_PER_VALUE * n if starts is None else starts)
    max_bias = float(np.max(np.abs(V)))
    if len(points) > 1:
        costs = cv.search([x for x, _ in points])
        pull = [evals.pull_in_v.get(set_key(x * scales)) for x, _ in points]
    else:
        costs, pull = [0.0], [None]
    keep = LOCAL_FITS if local_fits is None else local_fits
    chosen, cands, none_left = choose_starts(points, costs, pull, max_bias,
                                             keep if len(points) > 1 else 1)
    cv.start(*(c.x for c in chosen))

    def si(x):
        return {p: float(v) for p, v in zip(paths, x * scales)}

    def rms(cost):
        return c_unit * math.sqrt(cost / V.size) if math.isfinite(cost) else None

    best, runs = None, []
    for i, c in enumerate(chosen):
        cv.stage = f"C–V fit {i + 1}/{len(chosen)}" if len(chosen) > 1 else "C–V fit"
        sol = least_squares(cv.fun, c.x, jac=cv.jac, **opts)
        runs.append({"origin": c.origin, "start": si(c.x),
                     "start_rms_residual": rms(c.cost) if len(points) > 1 else None,
                     "start_pull_in_v": c.pull_in_v, "end": si(sol.x),
                     "rms_residual": rms(2.0 * sol.cost)})
        if best is None or sol.cost < best[1].cost:
            best = (i, sol)
    cv.stage = "C–V fit"
    facts = {"space_filling_starts": len(points) - 1, "max_bias_v": max_bias,
             "collapsing_starts": sum(c.status == "collapses" for c in cands),
             "failed_starts": sum(c.status == "failed" for c in cands),
             "all_starts_collapse": bool(none_left and len(points) > 1),
             "local_fits": runs, "winner": best[0],
             "winning_start": runs[best[0]]["start"],
             "winning_origin": runs[best[0]]["origin"],
             "rms_residual_unit": "F"}
    return best[1], facts
