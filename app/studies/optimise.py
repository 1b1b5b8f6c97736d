"""Constrained design optimisation: the best objective inside limits on other outputs.

Problem: with the varied design values x_i ∈ [lo_i, hi_i], scaled to z_i = (x_i − lo_i)/(hi_i −
lo_i) ∈ [0, 1],

    maximise (or minimise) Y_0(x)   subject to   low_k ≤ Y_k(x) ≤ high_k,

Y the summary quantities (:mod:`diagap.evaluate`). Solved by SLSQP (sequential least squares
programming, Kraft 1988; :func:`scipy.optimize.minimize`) from several starts: the design's own
values (clipped into the bounds) and a Latin hypercube of further points; the best feasible end
point wins. Objective and constraints are scaled by their value at the first start (objective)
or by the size of the limit (constraints), and the limits are tightened by ``BACK_OFF`` of that
scale so that the converged point lies inside them; gradients are central differences in z with
step ``h`` (one-sided at a bound; forward differences left SLSQP stalling just outside a curved
limit), each gradient one batch of 2n + 1 designs evaluated together
(in parallel with workers or a Dask scheduler) and stored, so a resumed optimisation replays
its finished evaluations. A design the pipeline cannot evaluate (NaN, e.g. collapsed) counts as
violating every limit.

Evaluations: unless every point is to run the full FE (``exact``), the certified table over the
variables' bounds is built once before the search (:mod:`diagap.studies.tables`) and the
search reads it; outputs it does not certify run the full FE.

Verification: the optimum is evaluated again with the full FE pipeline (``exact``), and every
limit is checked on those values; a limit is reported active when its margin is below
``active_tol`` of its scale.

Section::

    [optimise]
    maximise = "response.snr_db"          # or minimise = "..."
    constraints = ["coupled.bias_margin <= 0.5", "coupled.resonance_at_bias_hz >= 20 kHz"]
    starts = 4
    [optimise.variables]
    "backplate.hole_radius" = "2 um .. 6 um"
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from diagap.design import DesignError
from diagap.quantities import _bounds, quantity_text
from diagap.studies.spec import input_field, parse_limit

__all__ = ["OptimiseSpec", "parse_optimise", "run_optimise", "OptimiseResult"]

#: SLSQP sees every limit tightened by this fraction of its scale: it converges onto the limit
#: only to the accuracy of the finite-difference gradients (a few 1e-5 of the scale), so the
#: end point then lies inside the true limit (and is still reported active)
BACK_OFF = 1e-4
#: SLSQP stops when the scaled objective changes by less than this: far below the FE error of
#: the quantities (~1e-4), and each further iteration costs n + 1 evaluations
FTOL = 1e-6
_KEYS = {"maximise", "minimise", "maximize", "minimize", "constraints", "variables", "starts",
         "seed", "step"}


@dataclass(frozen=True)
class OptimiseSpec:
    objective: str
    sense: float                       # +1 maximise, −1 minimise
    variables: tuple                   # ((path, lo, hi), ...) SI
    constraints: tuple                 # Limit, ...
    starts: int = 4
    seed: int = 0
    step: float = 1e-3

    @property
    def keys(self) -> tuple:
        return tuple(dict.fromkeys([self.objective, *(c.path for c in self.constraints)]))


def parse_optimise(table: dict, design=None) -> OptimiseSpec:
    """Parse an [optimise] table (module docstring); one-line errors."""
    from diagap.evaluate import check_keys

    unknown = set(table) - _KEYS
    if unknown:
        raise DesignError(f"optimise.{sorted(unknown)[0]}: unknown key (known: "
                          f"{', '.join(sorted(_KEYS))})")
    goals = [(k, table[k]) for k in ("maximise", "maximize", "minimise", "minimize") if k in table]
    if len(goals) != 1:
        raise DesignError("optimise: give exactly one of maximise = \"PATH\" or minimise = "
                          "\"PATH\"")
    key, objective = goals[0]
    check_keys([objective], f"optimise.{key}: summary path")
    sense = 1.0 if key.startswith("max") else -1.0
    variables = table.get("variables")
    if not isinstance(variables, dict) or not variables:
        raise DesignError("optimise.variables: expected a table of design keys with bounds, "
                          "e.g. \"backplate.hole_radius\" = \"2 um .. 6 um\"")
    out = []
    for path, text in variables.items():
        where = f"optimise.variables.{path}"
        f = input_field(path, where)
        if not isinstance(text, str) or ".." not in text:
            raise DesignError(f"{where} = {text!r}: expected bounds \"LOW .. HIGH\"")
        lo_t, hi_t = text.split("..", 1)
        lo, hi = quantity_text(where, lo_t.strip(), f), quantity_text(where, hi_t.strip(), f)
        if not hi > lo:
            raise DesignError(f"{where} = {text!r}: LOW must be below HIGH")
        for end, x in (("LOW", lo), ("HIGH", hi)):  # both bounds inside the key's range
            _bounds(f"{where} = {text!r}: {end}", x, x, f)
        out.append((path, lo, hi))
    cons = table.get("constraints", [])
    if not isinstance(cons, list):
        raise DesignError("optimise.constraints: expected a list of limits")
    limits = tuple(parse_limit(t, f"optimise.constraints[{i}]") for i, t in enumerate(cons))
    starts, seed = table.get("starts", 4), table.get("seed", 0)
    for name, v in (("starts", starts), ("seed", seed)):
        if isinstance(v, bool) or not isinstance(v, int) or v < (1 if name == "starts" else 0):
            raise DesignError(f"optimise.{name} = {v!r}: must be a whole number >= "
                              f"{1 if name == 'starts' else 0}")
    step = table.get("step", 1e-3)
    if isinstance(step, bool) or not isinstance(step, (int, float)) or not 0 < step < 0.1:
        raise DesignError(f"optimise.step = {step!r}: must be in (0, 0.1) (scaled variables)")
    return OptimiseSpec(objective, sense, tuple(out), limits, starts, seed, float(step))


@dataclass(frozen=True)
class OptimiseResult:
    """The outcome of :func:`run_optimise` (SI)."""

    spec: OptimiseSpec
    optimum: dict                      # path -> SI value of the variables
    values: dict                       # summary path -> value at the optimum (verification)
    feasible: bool                     # every limit met in the verification
    active: tuple                      # texts of the active limits
    history: list = field(default_factory=list)   # (z, values) of every evaluated point
    starts: list = field(default_factory=list)    # per start: dict with end point and status
    verified_exact: bool = True
    evaluations: int = 0
    evaluator: str = "exact"           # the search's evaluations: "fast", "exact" or "mixed"
    tables: dict = field(default_factory=dict)   # the study table: used, seconds, reason

    def to_json(self) -> dict:
        s = self.spec
        return {"objective": {"path": s.objective,
                              "sense": "maximise" if s.sense > 0 else "minimise",
                              "value": self.values.get(s.objective)},
                "optimum": self.optimum, "values": self.values, "feasible": self.feasible,
                "constraints": [{**c.to_dict(), "value": self.values.get(c.path),
                                 "met": c.met(self.values.get(c.path, math.nan)),
                                 "active": c.text in self.active} for c in s.constraints],
                "active_constraints": list(self.active), "starts": self.starts,
                "verified_with_full_fe": self.verified_exact, "evaluations": self.evaluations,
                "evaluator": self.evaluator, "study_table": self.tables}


class _Problem:
    """Memoised values and central-difference gradients at scaled points z."""

    def __init__(self, spec: OptimiseSpec, runner):
        self.spec, self.runner = spec, runner
        self.lo = np.array([v[1] for v in spec.variables])
        self.hi = np.array([v[2] for v in spec.variables])
        self.memo: dict = {}
        self.history: list = []
        self.paths: set = set()  # which evaluation paths answered
        self.obj_scale = 1.0
        self.best = math.nan      # best feasible objective among the visited points
        self.progress = getattr(runner, "progress", None)

    def x(self, z) -> np.ndarray:
        return self.lo + np.clip(z, 0.0, 1.0) * (self.hi - self.lo)

    def _point(self, z):
        return tuple((p, float(v)) for (p, _, _), v in zip(self.spec.variables, self.x(z)))

    def values_and_gradients(self, z):
        z = np.asarray(z, float)
        key = tuple(np.round(z, 12))
        if key not in self.memo:
            h = self.spec.step
            steps, pairs = [z.copy()], []
            for i in range(z.size):  # central differences, one-sided at a bound
                up, down = z.copy(), z.copy()
                up[i], down[i] = min(z[i] + h, 1.0), max(z[i] - h, 0.0)
                pairs.append((len(steps), len(steps) + 1, up[i] - down[i]))
                steps += [up, down]
            recs = self.runner.run([self._point(s) for s in steps])
            vals = [self._values(r) for r in recs]
            for s, v in zip(steps, vals):
                self.history.append((s, v))
            grads = {k: np.array([(vals[a][k] - vals[b][k]) / width for a, b, width in pairs])
                     for k in self.spec.keys}
            self.memo[key] = (vals[0], grads)
            self._note_best(vals[0])
        return self.memo[key]

    def _note_best(self, v: dict) -> None:
        y = v[self.spec.objective]
        if not (math.isfinite(y) and _feasible(self.spec, v)):
            return
        if not math.isfinite(self.best) or self.spec.sense * (y - self.best) > 0:
            self.best = y
            if hasattr(self.progress, "best"):
                self.progress.best = f"best feasible {self.spec.objective} = {y:.6g}"

    def _values(self, rec) -> dict:
        from diagap.evaluate import PATH_KEY

        o = rec.get("outputs", {}) if rec.get("status") == "ok" else {}
        if PATH_KEY in o:
            self.paths.add("exact" if o[PATH_KEY] else "fast")
        out = {}
        for k in self.spec.keys:
            v = o.get(k)
            out[k] = float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) \
                else math.nan
        return out

    def objective(self, z):
        v, _ = self.values_and_gradients(z)
        y = v[self.spec.objective]
        return -self.spec.sense * y / self.obj_scale if math.isfinite(y) else 1e6

    def objective_grad(self, z):
        _, g = self.values_and_gradients(z)
        d = g[self.spec.objective]
        return np.where(np.isfinite(d), -self.spec.sense * d / self.obj_scale, 0.0)

    def _scale(self, c) -> float:
        ends = [abs(b) for b in (c.low, c.high) if math.isfinite(b)]
        width = c.high - c.low if math.isfinite(c.high - c.low) else 0.0
        return max(max(ends, default=1.0), width, 1e-300)

    def constraints(self):
        out = []
        for c in self.spec.constraints:
            for side in ("low", "high"):
                bound = getattr(c, side)
                if not math.isfinite(bound):
                    continue
                sign = 1.0 if side == "low" else -1.0
                s = self._scale(c)

                def fun(z, c=c, bound=bound, sign=sign, s=s):
                    y = self.values_and_gradients(z)[0][c.path]
                    return sign * (y - bound) / s - BACK_OFF if math.isfinite(y) else -1.0

                def jac(z, c=c, sign=sign, s=s):
                    d = self.values_and_gradients(z)[1][c.path]
                    return np.where(np.isfinite(d), sign * d / s, 0.0)

                out.append({"type": "ineq", "fun": fun, "jac": jac})
        return out


def _feasible(spec, values) -> bool:
    return all(c.met(values.get(c.path, math.nan)) for c in spec.constraints)


def _display(progress):
    """The progress sink of the search: True → a :class:`StudyProgress` on stderr."""
    if progress is True:
        from diagap.studies.progress import StudyProgress

        return StudyProgress("optimise")
    return progress or None


def _where(display, text: str) -> None:
    if hasattr(display, "where"):
        display.where = text


def _note(display, text: str) -> None:
    if hasattr(display, "note"):
        display.note(text)


def run_optimise(design, spec: OptimiseSpec, out_dir, *, evaluate=None, verify=None,
                 exact: bool = False, workers: int | None = 1, scheduler=None,
                 progress=False, active_tol: float = 1e-3,
                 table_options: dict | None = None) -> OptimiseResult:
    """Solve the problem of ``spec`` for ``design`` (module docstring).

    ``evaluate`` / ``verify``: ``f(design) -> {path: value}`` replacing the default evaluators
    (the fast tables unless ``exact``, and the full FE pipeline for the verification).

    Unless ``exact`` (or an ``evaluate`` is given), the fast-path table over the variables'
    bounds is built first, once, with the same ``workers`` or ``scheduler``
    (:mod:`diagap.studies.tables`; ``table_options`` as in :func:`diagap.fastpath.study_table`);
    the search reads it and the verification of the optimum stays a full FE run.

    ``progress``: True draws the search's progress on stderr (start, iteration, evaluations
    computed and replayed, best feasible objective so far;
    :class:`diagap.studies.progress.StudyProgress`, which may also be given), False draws
    nothing; a callable ``f(done, total, record)`` is called for every evaluated point.
    """
    from scipy.optimize import minimize

    from diagap.evaluate import KeyEvaluator
    from diagap.studies.runner import StudyRunner, evaluator_tag
    from diagap.studies.sampling import unit_samples
    from diagap.studies.spec import design_value
    from diagap.studies.tables import prepare_tables

    own = evaluate is None
    evaluate = evaluate or KeyEvaluator(spec.keys, exact)
    full_fe_check = verify is None
    verify = verify or KeyEvaluator(spec.keys, True)
    display = _display(progress)
    with StudyRunner(design, evaluate, out_dir, tag=evaluator_tag(evaluate), workers=workers,
                     scheduler=scheduler, progress=display, label="optimise") as runner:
        tables: dict = {}
        if own and not exact:
            _note(display, "building the fast table over the variables' bounds")
            evaluate, built = prepare_tables(design, spec.keys, spec.variables,
                                             workers=runner.workers, client=runner.client,
                                             table_options=table_options,
                                             build_global=True)
            runner.evaluate, runner.tag = evaluate, evaluator_tag(evaluate)
            tables = built.to_dict()
        prob = _Problem(spec, runner)
        z0 = []
        for path, lo, hi in spec.variables:
            try:
                z0.append(min(max((design_value(design, path) - lo) / (hi - lo), 0.0), 1.0))
            except DesignError:
                z0.append(0.5)
        starts = [np.array(z0)]
        if spec.starts > 1:
            starts += list(unit_samples(max(spec.starts - 1, 2), len(z0), "lhs",
                                        spec.seed))[:spec.starts - 1]
        _where(display, f"start 1/{len(starts)}, iteration 1")
        y0 = prob.values_and_gradients(starts[0])[0][spec.objective]
        prob.obj_scale = max(abs(y0), 1e-300) if math.isfinite(y0) else 1.0
        ends = []
        for i, s in enumerate(starts):
            iteration = [0]

            def advance(*_, i=i, iteration=iteration):
                iteration[0] += 1
                _where(display, f"start {i + 1}/{len(starts)}, iteration {iteration[0] + 1}")

            _where(display, f"start {i + 1}/{len(starts)}, iteration 1")
            res = minimize(prob.objective, s, jac=prob.objective_grad, method="SLSQP",
                           bounds=[(0.0, 1.0)] * len(s), constraints=prob.constraints(),
                           options={"maxiter": 40, "ftol": FTOL}, callback=advance)
            z = np.clip(res.x, 0, 1)
            vals = prob.values_and_gradients(z)[0]
            ends.append({"start": prob._point(s), "end": prob._point(z), "z": z,
                         "objective": vals[spec.objective], "feasible": _feasible(spec, vals),
                         "success": bool(res.success), "message": str(res.message)})
        computed = runner.computed
    ok = [e for e in ends if e["feasible"] and math.isfinite(e["objective"])] or ends
    best = max(ok, key=lambda e: spec.sense * (e["objective"] if math.isfinite(e["objective"])
                                               else -spec.sense * math.inf))
    point = dict(best["end"])
    from diagap.sweep.point import apply_overrides

    _note(display, "checking the optimum with the full FE pipeline")
    final = verify(apply_overrides(design, tuple(point.items())))
    if hasattr(display, "close"):
        display.close()
    values = {k: float(final.get(k, math.nan)) for k in spec.keys}
    active = tuple(c.text for c in spec.constraints
                   if math.isfinite(values[c.path]) and abs(c.margin(values[c.path]))
                   <= active_tol * prob._scale(c))
    for e in ends:
        e.pop("z", None)
        e["start"], e["end"] = dict(e["start"]), dict(e["end"])
    evaluator = "mixed" if len(prob.paths) > 1 else next(iter(prob.paths), "injected")
    return OptimiseResult(spec, point, values, _feasible(spec, values), active, prob.history,
                          ends, full_fe_check, computed, evaluator, tables)
