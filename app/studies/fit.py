"""Design values from a measured capacitance-versus-bias curve: nonlinear least squares.

Model and data: measured terminal capacitances C_j at biases V_j, j = 1..m, against the FE model
C_t(V; θ) (:class:`diagap.studies.cvmodel.CVModel`) with the free design values θ (default the
residual stress and the gap). The fit minimises Σ r_j², r_j = C_t(V_j; θ) − C_j, with
:func:`scipy.optimize.least_squares` (trust region reflective, inside bounds that keep the model
in its range) on scaled parameters p_i = θ_i / s_i. The Jacobian is taken by central
differences, ∂r/∂p_i ≈ (r(p + h_i e_i) − r(p − h_i e_i)) / 2h_i with h_i = STEP·max(|p_i|, 1)
(one-sided at a bound): error O(h²) against O(h) of forward differences. The model evaluations
of a step — the start with its 2n neighbours, a Jacobian's 2n neighbours, a trial point — form one
batch, computed in parallel on local processes or a Dask cluster and stored, so that a fit run
again after an interruption replays them (:mod:`diagap.studies.fitrun`).

Starts: the local fit runs from the best few of a coarse space-filling set of starts inside the
bounds, evaluated as one batch, those whose model collapses within the data's bias range
discarded (:mod:`diagap.studies.fitstart`); the end point of lowest misfit is the result and
fit.json names the start it came from (``start_search``).

Confidence intervals (asymptotic, Jacobian-based; Seber & Wild, Nonlinear Regression, 1989,
sec. 5.1; Bates & Watts 1988, sec. 2.3): with J = ∂r/∂p at the optimum, s² = Σ r_j²/(m − n) and
cov(p) = s² (JᵀJ)⁻¹, the 95 % interval of θ_i is θ_i ± t_{0.975, m−n} s_i √cov_ii (Student's t).
Identifiability: when JᵀJ is (nearly) singular — the condition number of the column-scaled J
above 1e8, or a correlation |ρ_ik| above 0.99 — the data cannot tell those parameters apart; the
fit reports this as a warning and the intervals of the parameters concerned are unbounded.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from diagap.design import DesignError

__all__ = ["fit_cv", "FitResult", "DEFAULT_FREE", "confidence_intervals"]

DEFAULT_FREE = ("diaphragm.residual_stress", "backplate.gap")
_UNITS = {"diaphragm.residual_stress": "Pa", "backplate.gap": "m", "diaphragm.thickness": "m",
          "diaphragm.youngs_modulus": "Pa", "electrical.parasitic_capacitance": "F"}
MAX_CONDITION = 1e8
MAX_CORRELATION = 0.99
#: central-difference step in the scaled parameters, relative to max(|p_i|, 1): the truncation
#: error (∝ h²) and the model's round-off (∝ 1/h, the branch solve and the spline inversion are
#: accurate to ~1e-12 relative) balance near 1e-4
STEP = 1e-4


@dataclass(frozen=True)
class FitResult:
    """Fitted values (SI), their 95 % intervals and the residuals (F)."""

    paths: tuple
    values: tuple
    ci95: tuple                      # ((lo, hi), ...), None bounds where not identifiable
    biases_v: np.ndarray
    measured_f: np.ndarray
    fitted_f: np.ndarray
    correlation: np.ndarray
    condition: float
    warnings: tuple = ()
    model_rel_error: float | None = None
    evaluations: int = 0
    extra: dict = field(default_factory=dict)
    computed: int = 0                # evaluations computed now (the others were replayed)

    @property
    def residuals_f(self) -> np.ndarray:
        return self.measured_f - self.fitted_f

    @property
    def rms_residual(self) -> float:
        return float(np.sqrt(np.mean(self.residuals_f**2)))

    def to_json(self) -> dict:
        params = {}
        for p, v, ci in zip(self.paths, self.values, self.ci95):
            params[p] = {"value": v, "unit": _UNITS.get(p, ""),
                         "ci95": [None if ci[0] is None else ci[0],
                                  None if ci[1] is None else ci[1]]}
        return {"parameters": params, "rms_residual": self.rms_residual,
                "evaluator": "exact (coupled FE branch, cell table and rim model)",
                "rms_residual_unit": "F", "points": int(self.biases_v.size),
                "correlation": self.correlation.tolist(), "condition_number": self.condition,
                "warnings": list(self.warnings), "model_rel_error": self.model_rel_error,
                "evaluations": self.evaluations, "computed_now": self.computed, **self.extra}


def confidence_intervals(J: np.ndarray, residuals: np.ndarray, values, scales):
    """95 % intervals, correlation matrix, condition number and warnings (module docstring)."""
    from scipy.stats import t as student

    m, n = J.shape
    dof = m - n
    s2 = float(residuals @ residuals) / dof
    norms = np.linalg.norm(J, axis=0)
    norms[norms == 0] = 1.0
    sv = np.linalg.svd(J / norms, compute_uv=False)
    cond = float(sv[0] / sv[-1]) if sv[-1] > 0 else math.inf
    warnings = []
    JtJ = J.T @ J
    try:
        cov = s2 * np.linalg.inv(JtJ) if cond < MAX_CONDITION else None
    except np.linalg.LinAlgError:
        cov = None
    tq = float(student.ppf(0.975, dof))
    ci, corr = [], np.full((n, n), np.nan)
    bad = set()
    if cov is None:
        warnings.append(f"the data cannot identify the free values together (condition number "
                        f"{cond:.3g} of the scaled Jacobian); fix some of them")
        bad = set(range(n))
    else:
        sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
        corr = cov / np.outer(sd, sd)
        for i in range(n):
            for k in range(i + 1, n):
                if abs(corr[i, k]) > MAX_CORRELATION:
                    bad |= {i, k}
                    warnings.append(f"parameters {i + 1} and {k + 1} are correlated "
                                    f"(ρ = {corr[i, k]:+.4f}): the data hardly tell them apart")
    for i, (v, s) in enumerate(zip(values, scales)):
        if i in bad or cov is None:
            ci.append((None, None))
        else:
            half = tq * s * math.sqrt(max(cov[i, i], 0.0))
            ci.append((v - half, v + half))
    return tuple(ci), corr, cond, warnings


def _scales(model, paths) -> np.ndarray:
    nom = model.nominal()
    out = []
    for p in paths:
        x = abs(nom[p])
        if p == "diaphragm.residual_stress":
            x = max(x, 1e6)
        elif p == "electrical.parasitic_capacitance":
            x = max(x, 0.1e-12)
        out.append(x)
    return np.array(out)


#: the fit's compressive stress stays above this fraction of the buckling stress (the design
#: schema refuses a diaphragm at or beyond it)
BUCKLING_MARGIN = 0.95


def _buckling_stress_pa(model) -> float:
    """Critical compressive stress of the nominal diaphragm (Pa, positive)."""
    from diagap.lumped.buckling import critical_tension_n_per_m

    d = model.design.diaphragm
    return critical_tension_n_per_m(d.shape, d.edge, d.size_m, d.bending_stiffness_n_m,
                                    d.poisson_ratio) / d.thickness_m


def _bounds(model, paths, scales):
    nom = model.nominal()
    lo, hi = [], []
    for p, s in zip(paths, scales):
        if p == "backplate.gap":
            a, b = model.gap_bounds()
        elif p == "diaphragm.residual_stress":  # compression stays short of buckling
            a, b = max(nom[p] - 5 * s, -BUCKLING_MARGIN * _buckling_stress_pa(model)), \
                nom[p] + 5 * s
        elif p == "electrical.parasitic_capacitance":
            a, b = 0.0, nom[p] + 10 * s
        else:
            a, b = 0.5 * nom[p], 2.0 * nom[p]
        lo.append(a / s)
        hi.append(b / s)
    return np.array(lo), np.array(hi)


class _Residuals:
    """Residual vectors at scaled parameters p (memoised, each batch evaluated together) and
    their central-difference Jacobians."""

    def __init__(self, evals, scales, lo, hi, stage: str, display=None):
        self.evals, self.scales, self.lo, self.hi = evals, scales, lo, hi
        self.stage, self.display = stage, display
        self.vector = None          # f(curve, level) -> residual vector
        self.describe = None        # f(residual vector) -> text of the best so far
        self.raw: dict = {}
        self.best = math.inf
        self.trials = self.jacobians = 0

    def values(self, xs) -> list:
        """Outputs at the scaled points ``xs``; points whose SI values agree to 12 significant
        digits are one evaluation, as in the study's log (:func:`diagap.studies.fitrun.set_key`)."""
        from diagap.studies.fitrun import set_key

        sets = [np.asarray(x, float) * self.scales for x in xs]
        keys = [set_key(vs) for vs in sets]
        new: dict = {}
        for k, vs in zip(keys, sets):
            if k not in self.raw:
                new.setdefault(k, vs)
        if new:
            for k, out in zip(new, self.evals.run(list(new.values()))):
                self.raw[k] = out
                self._note(out)
        return [self.raw[k] for k in keys]

    def _note(self, out) -> None:
        if self.vector is None or self.describe is None:
            return
        r = self.vector(*out)
        ss = float(r @ r)
        if ss < self.best:
            self.best = ss
            if hasattr(self.display, "best"):
                self.display.best = self.describe(r)

    def _where(self, text: str) -> None:
        if hasattr(self.display, "where"):
            self.display.where = f"{self.stage}, {text}"

    def _stencil(self, x):
        pts, pairs = [], []
        for i in range(x.size):
            h = STEP * max(abs(x[i]), 1.0)
            up, down = x.copy(), x.copy()
            up[i], down[i] = min(x[i] + h, self.hi[i]), max(x[i] - h, self.lo[i])
            pairs.append((len(pts), len(pts) + 1, up[i] - down[i]))
            pts += [up, down]
        return pts, pairs

    def start(self, *xs) -> None:
        """Evaluate the starts and their Jacobians' neighbours in one batch."""
        self._where("start")
        pts = []
        for x in xs:
            x = np.asarray(x, float)
            pts += [x, *self._stencil(x)[0]]
        self.values(pts)

    def search(self, points) -> list:
        """Φ (sum of squared residuals; inf where the model failed) at ``points``, one batch."""
        self._where("start search")
        out = self.values(points)
        return [math.inf if o[0] is None else float(self.vector(*o) @ self.vector(*o))
                for o in out]

    def fun(self, x) -> np.ndarray:
        self.trials += 1
        self._where(f"trial point {self.trials}")
        return self.vector(*self.values([x])[0]).copy()

    def jac(self, x) -> np.ndarray:
        self.jacobians += 1
        self._where(f"Jacobian {self.jacobians}")
        x = np.asarray(x, float)
        pts, pairs = self._stencil(x)
        r = [self.vector(*v) for v in self.values(pts)]
        return np.column_stack([(r[a] - r[b]) / w for a, b, w in pairs])


def _display(progress):
    if progress is True:
        from diagap.studies.progress import StudyProgress

        return StudyProgress("fit")
    return progress or None


def fit_cv(model, biases_v, capacitances_f, free=DEFAULT_FREE, *, start: dict | None = None,
           error_estimate: bool = True, response=None, response_model=None, out_dir=None,
           workers: int | None = 1, scheduler=None, progress=False, starts: int | None = None,
           local_fits: int | None = None) -> FitResult:
    """Fit the free design values ``free`` of ``model`` to a measured C–V curve (and optionally
    a measured frequency response).

    Parameters
    ----------
    model : CVModel
    biases_v, capacitances_f : array_like (m,)
        The measured curve (V, F): total capacitance at the terminals.
    free : sequence of str
        Free design values (:data:`diagap.studies.cvmodel.FREE_PATHS`).
    start : dict, optional
        Starting values (default: the design's), one of the candidate starts.
    starts : int, optional
        Space-filling starts searched besides ``start`` (:mod:`diagap.studies.fitstart`; default
        4 per free value; 0: the local fit runs from ``start`` alone).
    local_fits : int, optional
        Local fits run from the best starts (default 2); the lowest misfit wins.
    error_estimate : bool
        Also evaluate the model's discretisation error at the optimum (one coarser-mesh curve).
    response : (freqs_hz, level_db), optional
        A measured sensitivity level (dB re 1 V/Pa) at frequencies (Hz), fitted together with
        the C–V curve: each data set's residuals are divided by its own noise level, estimated
        from the C–V fit alone and the response misfit at that point (two-stage weighted least
        squares).
    response_model : callable, optional
        ``f(values, freqs_hz) -> level_db`` (default
        :class:`diagap.studies.response_model.PipelineResponse` of the design); picklable for
        worker processes.
    out_dir : path, optional
        Folder of ``evaluations.jsonl``: every model evaluation is stored there, and a fit run
        again into it replays them (None: nothing stored).
    workers, scheduler : optional
        Local worker processes, or a Dask scheduler address or client, for the batches of
        evaluations (with ``out_dir``).
    progress : bool or StudyProgress
        True: the fit's progress on stderr (stage, step, evaluations, best residual so far).
    """
    from scipy.optimize import least_squares

    from diagap.studies.cvmodel import FREE_PATHS
    from diagap.studies.fitrun import FitEvaluations
    from diagap.studies.fitstart import local_fits_from_starts

    paths = tuple(free)
    for p in paths:
        if p not in FREE_PATHS:
            raise DesignError(f"--free {p}: the C–V fit can vary {', '.join(FREE_PATHS)}")
    V = np.asarray(biases_v, float)
    C = np.asarray(capacitances_f, float)
    if V.size < len(paths) + 1:
        raise DesignError(f"the C–V data has {V.size} points; fitting {len(paths)} values "
                          f"needs at least {len(paths) + 1}")
    if response is not None and response_model is None:  # the sections it needs, or a
        from diagap.studies.response_model import PipelineResponse  # one-line error now

        PipelineResponse(model.design)
    scales = _scales(model, paths)
    lo, hi = _bounds(model, paths, scales)
    x0 = np.array([(start or model.nominal()).get(p, model.nominal()[p]) for p in paths]) / scales
    x0 = np.clip(x0, lo + 1e-6 * (hi - lo), hi - 1e-6 * (hi - lo))
    c_unit = 1e-4 * float(np.mean(np.abs(C)))  # residuals in this unit: O(1) numbers
    penalty = 10.0 * max(float(np.ptp(C)), 1e-3 * float(np.mean(np.abs(C)))) / c_unit
    display = _display(progress)
    opts = dict(bounds=(lo, hi), x_scale=1.0, xtol=1e-8, ftol=1e-10, gtol=1e-10)
    with FitEvaluations(model, V, paths, out_dir=out_dir, workers=workers, scheduler=scheduler,
                        progress=display) as evals:
        cv = _Residuals(evals, scales, lo, hi, "C–V fit", display)
        cv.vector = lambda c, _: (c - C) / c_unit if c is not None else np.full(C.size, penalty)
        cv.describe = lambda r: f"best rms residual {c_unit * math.sqrt(r @ r / r.size):.3g} F"
        sol, facts = local_fits_from_starts(cv, evals, x0, (lo, hi), V, starts, local_fits,
                                            opts, (paths, scales, c_unit))
        extra, cv_weight, count = {"start_search": facts}, c_unit, len(cv.raw)
        if response is not None:
            sol, cv_weight, extra, n = _joint(sol, cv.vector, c_unit, paths, evals, response,
                                              response_model, opts, (scales, lo, hi), display)
            count += n
        computed = evals.computed
    values = tuple(float(v) for v in sol.x * scales)
    ci, corr, cond, warns = confidence_intervals(sol.jac, sol.fun, values, scales)
    at_bound = [p for p, x, a, b in zip(paths, sol.x, lo, hi)
                if min(x - a, b - x) < 1e-6 * (b - a)]
    if at_bound:
        warns = [*warns, f"{', '.join(at_bound)} stopped at the bound of the model's range"]
    fitted = C + sol.fun[:C.size] * cv_weight
    if error_estimate and hasattr(display, "note"):
        display.note("estimating the model's discretisation error (coarser mesh)")
    err = model.discretisation_error(dict(zip(paths, values)), V) if error_estimate else None
    if hasattr(display, "close"):
        display.close()
    rms = float(np.sqrt(np.mean((fitted - C) ** 2)))
    if facts.get("all_starts_collapse"):
        warns = [*warns, f"the model collapses within the data's bias range (up to "
                 f"{facts['max_bias_v']:g} V) at every start searched: check the data and the "
                 f"bounds"]
    if err is not None and err * float(np.mean(np.abs(C))) > rms:
        warns = [*warns, f"the model's discretisation error ({err:.2g} relative) exceeds the "
                 f"rms residual: a finer --accuracy makes the fitted values more trustworthy"]
    return FitResult(paths, values, ci, V, C, fitted, corr, cond, tuple(warns), err, count,
                     extra, computed)


def _joint(sol, cv_vector, c_unit, paths, evals, response, response_model, opts, box,
           display):
    """The second stage: C–V and response residuals, each over its own noise level."""
    from scipy.optimize import least_squares

    scales, lo, hi = box
    freqs, level = (np.asarray(a, float) for a in response)
    evals.with_response(freqs, response_model)
    n = len(paths)
    m_cv = sol.fun.size
    sigma_cv = c_unit * max(math.sqrt(float(sol.fun @ sol.fun) / max(m_cv - n, 1)), 1e-6)
    joint = _Residuals(evals, scales, lo, hi, "joint fit", display)
    _, resp0 = joint.values([sol.x])[0]
    if resp0 is None:
        raise DesignError("--response: the response cannot be evaluated at the C–V fit's "
                          f"values {dict(zip(paths, sol.x * scales))}")
    r0 = resp0 - level
    sigma_db = max(math.sqrt(float(np.mean(r0**2))), 1e-3)
    bad = 10.0 * max(float(np.ptp(level)), 1.0) / sigma_db

    def vector(c, db):
        cv = cv_vector(c, None) * (c_unit / sigma_cv)
        resp = (db - level) / sigma_db if db is not None else np.full(freqs.size, bad)
        return np.concatenate([cv, resp])

    joint.vector = vector
    joint.describe = lambda r: f"best weighted rms residual {math.sqrt(r @ r / r.size):.3g}"
    joint.start(sol.x)
    sol = least_squares(joint.fun, sol.x, jac=joint.jac, **opts)
    resp = sol.fun[m_cv:] * sigma_db
    extra = {"response": {"points": int(freqs.size),
                          "rms_residual_db": float(np.sqrt(np.mean(resp**2))),
                          "noise_db": sigma_db, "cv_noise_f": sigma_cv,
                          "frequencies_hz": freqs.tolist(),
                          "fitted_db": (level + resp).tolist()}}
    return sol, sigma_cv, extra, len(joint.raw)
