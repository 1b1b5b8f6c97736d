"""Tolerance studies: the spread of a design's outputs under process variation, and its yield.

Varied design values X (distributions and correlations, :mod:`diagap.studies.sampling`) are
sampled N times; each sample is a design evaluated for the output paths Y_k (the fast tables or
the full FE, :mod:`diagap.evaluate`). Unless every point is to run the full FE, the certified
table over the box of the varied values (uniform: its bounds; normal: mean ± 4σ clipped to the
schema's range) is built once before the samples, and samples outside it run the full FE
(:mod:`diagap.studies.tables`). Reported per output: mean, standard deviation (ddof = 1)
and the 5, 50 and 95 % percentiles (linear interpolation between order statistics); the yield is
the fraction of the N samples whose outputs all meet the spec limits
(:class:`diagap.studies.spec.Limit`); a sample that cannot be evaluated (e.g. an invalid
combination of values) counts as failing. Which inputs drive each output's spread: variance-based
indices (:mod:`diagap.studies.indices`) — first order from the N samples (given data), or first
and total order with the Saltelli scheme (N (d + 2) evaluations) — for independent inputs only.

Section::

    [tolerances]
    samples = 256                   # N (the -n option overrides)
    method = "lhs"                  # or "sobol"
    seed = 1
    indices = "given-data"          # or "saltelli" (adds total indices) or "none"
    outputs = ["response.snr_db"]   # reported besides the paths of the spec
    spec = ["response.sensitivity_db_v_per_pa = -46 +- 1", "coupled.bias_margin <= 0.5",
            "coupled.resonance_at_bias_hz >= 20 kHz"]
    [tolerances.inputs] ...         # see diagap.studies.sampling
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from diagap.design import DesignError
from diagap.studies.sampling import (METHODS, joint_samples, parse_correlations,
                                     parse_inputs, unit_samples)
from diagap.studies.spec import parse_limit

__all__ = ["ToleranceSpec", "parse_tolerances", "run_tolerance", "ToleranceResult",
           "output_statistics", "INDEX_METHODS"]

INDEX_METHODS = ("given-data", "saltelli", "none")
_KEYS = {"samples", "method", "seed", "indices", "outputs", "spec", "inputs", "correlations"}


@dataclass(frozen=True)
class ToleranceSpec:
    """A parsed [tolerances] section."""

    inputs: tuple
    limits: tuple
    outputs: tuple
    correlation: np.ndarray | None = None
    samples: int = 256
    method: str = "lhs"
    seed: int = 0
    indices: str = "given-data"


def _int(table, key, default, low):
    v = table.get(key, default)
    if isinstance(v, bool) or not isinstance(v, int) or v < low:
        raise DesignError(f"tolerances.{key} = {v!r}: must be a whole number >= {low}")
    return v


def parse_tolerances(table: dict, design) -> ToleranceSpec:
    """Parse a [tolerances] table (module docstring) against ``design``; one-line errors."""
    from diagap.evaluate import check_keys

    unknown = set(table) - _KEYS
    if unknown:
        raise DesignError(f"tolerances.{sorted(unknown)[0]}: unknown key (known: "
                          f"{', '.join(sorted(_KEYS))})")
    inputs = parse_inputs(table.get("inputs"), design)
    spec = table.get("spec", [])
    if not isinstance(spec, list):
        raise DesignError("tolerances.spec: expected a list of limits, e.g. "
                          "[\"coupled.bias_margin <= 0.5\"]")
    limits = tuple(parse_limit(t, f"tolerances.spec[{i}]") for i, t in enumerate(spec))
    extra = table.get("outputs", [])
    if not isinstance(extra, list):
        raise DesignError("tolerances.outputs: expected a list of summary paths")
    outputs = check_keys([*(lim.path for lim in limits), *extra], "tolerances output")
    method = table.get("method", "lhs")
    if method not in METHODS:
        raise DesignError(f"tolerances.method = {method!r}: must be one of {', '.join(METHODS)}")
    indices = table.get("indices", "given-data")
    if indices not in INDEX_METHODS:
        raise DesignError(f"tolerances.indices = {indices!r}: must be one of "
                          f"{', '.join(INDEX_METHODS)}")
    return ToleranceSpec(inputs, limits, outputs, parse_correlations(table.get("correlations"),
                                                                     inputs),
                         _int(table, "samples", 256, 2), method, _int(table, "seed", 0, 0),
                         indices)


def output_statistics(values) -> dict:
    """mean, std, p05, p50, p95 of the finite ``values`` (None when there are none)."""
    y = np.asarray(values, float)
    y = y[np.isfinite(y)]
    if y.size == 0:
        return {"mean": None, "std": None, "p05": None, "p50": None, "p95": None, "count": 0}
    p = np.percentile(y, [5, 50, 95])
    return {"mean": float(y.mean()), "std": float(y.std(ddof=1)) if y.size > 1 else 0.0,
            "p05": float(p[0]), "p50": float(p[1]), "p95": float(p[2]), "count": int(y.size)}


@dataclass(frozen=True)
class ToleranceResult:
    """The outcome of :func:`run_tolerance` (SI)."""

    spec: ToleranceSpec
    inputs: np.ndarray                 # (N, d) sampled values
    outputs: dict                      # path -> (N,) values (NaN where not evaluated)
    passed: np.ndarray                 # (N,) bool: every limit met
    failed: int                        # samples that could not be evaluated
    indices: dict = field(default_factory=dict)
    evaluator: str = "exact"           # "fast", "exact" or "mixed"
    evaluations: int = 0
    computed: int = 0
    tables: dict = field(default_factory=dict)   # the study table: used, seconds, reason

    @property
    def yield_fraction(self) -> float:
        return float(np.mean(self.passed))

    def to_json(self) -> dict:
        n = len(self.passed)
        lim = {lim.text or lim.path: float(np.mean([lim.met(v) for v in self.outputs[lim.path]]))
               for lim in self.spec.limits}
        return {"samples": n,
                "outputs": {k: output_statistics(v) for k, v in self.outputs.items()},
                "yield": self.yield_fraction,
                "indices": self.indices,
                "limits": [lim.to_dict() for lim in self.spec.limits],
                "limit_yield": lim,
                "inputs": [v.to_dict() for v in self.spec.inputs],
                "method": self.spec.method, "seed": self.spec.seed,
                "failed_samples": self.failed, "evaluator": self.evaluator,
                "evaluations": self.evaluations, "computed_now": self.computed,
                "study_table": self.tables}


def _overrides(inputs, X: np.ndarray) -> list:
    return [tuple((v.path, float(x)) for v, x in zip(inputs, row)) for row in X]


def _values(records, keys) -> tuple[dict, int, set]:
    out = {k: np.full(len(records), np.nan) for k in keys}
    failed, paths = 0, set()
    from diagap.evaluate import PATH_KEY

    for j, rec in enumerate(records):
        if rec.get("status") != "ok":
            failed += 1
            continue
        o = rec.get("outputs", {})
        paths.add(bool(o.get(PATH_KEY, True)))
        for k in keys:
            v = o.get(k)
            out[k][j] = v if isinstance(v, (int, float)) and not isinstance(v, bool) else np.nan
    return out, failed, paths


def run_tolerance(design, spec: ToleranceSpec, out_dir, *, evaluate=None, exact: bool = False,
                  workers: int | None = 1, scheduler=None, progress=False,
                  table_options: dict | None = None) -> ToleranceResult:
    """Sample, evaluate (resumable) and summarise a tolerance study (module docstring).

    ``evaluate(design) -> {path: value}`` replaces the default
    :class:`diagap.evaluate.KeyEvaluator` (must be picklable for workers > 1).

    Unless ``exact`` (or an ``evaluate`` is given), the fast-path table over the box of the
    varied values (:func:`diagap.studies.tables.tolerance_ranges`: uniform bounds, normal
    mean ± 4σ clipped to the schema's range) is built first, once, with the same ``workers`` or
    ``scheduler``; the samples inside the box are then read from it and the others run the full
    FE (:mod:`diagap.studies.tables`). ``table_options``: ``tol``, ``nodes``, ``max_nodes``,
    ``validate`` of :func:`diagap.fastpath.study_table`.
    """
    from diagap.evaluate import KeyEvaluator
    from diagap.studies.indices import binned_first_order, saltelli_indices, saltelli_matrices
    from diagap.studies.runner import StudyRunner, evaluator_tag

    from diagap.studies.tables import prepare_tables, tolerance_ranges

    d, n = len(spec.inputs), spec.samples
    indices = spec.indices if spec.correlation is None else "none"
    own = evaluate is None
    evaluate = evaluate or KeyEvaluator(spec.outputs, exact)
    tag = evaluator_tag(evaluate)
    if indices == "saltelli":
        mats = [joint_samples(spec.inputs, m) for m in
                saltelli_matrices(unit_samples(n, 2 * d, spec.method, spec.seed))]
    else:
        mats = [joint_samples(spec.inputs, unit_samples(n, d, spec.method, spec.seed),
                              spec.correlation)]
    points = [p for m in mats for p in _overrides(spec.inputs, m)]
    with StudyRunner(design, evaluate, out_dir, tag=tag, workers=workers, scheduler=scheduler,
                     progress=progress, label="tolerance") as runner:
        tables: dict = {}
        if own and not exact:
            evaluate, built = prepare_tables(design, spec.outputs, tolerance_ranges(spec.inputs),
                                             workers=runner.workers, client=runner.client,
                                             table_options=table_options)
            runner.evaluate, runner.tag = evaluate, evaluator_tag(evaluate)
            tables = built.to_dict()
        records = runner.run(points)
    values, _, paths = _values(records, spec.outputs)
    first = {k: v[:n] for k, v in values.items()}
    failed = sum(r.get("status") != "ok" for r in records[:n])
    passed = np.array([all(lim.met(first[lim.path][j]) for lim in spec.limits)
                       and records[j].get("status") == "ok" for j in range(n)])
    result_indices: dict = {"method": indices, "inputs": [v.path for v in spec.inputs]}
    if indices == "none" and spec.correlation is not None:
        result_indices["note"] = "not computed: variance-based indices need independent inputs"
    for k, y in values.items():
        if indices == "saltelli":
            blocks = [y[i * n:(i + 1) * n] for i in range(d + 2)]
            ok = np.all([np.isfinite(b) for b in blocks], axis=0)
            if ok.sum() >= 4:
                result_indices[k] = saltelli_indices(blocks[0][ok], blocks[1][ok],
                                                     [b[ok] for b in blocks[2:]])
        elif indices == "given-data":
            ok = np.isfinite(y)
            if ok.sum() >= 4:
                result_indices[k] = binned_first_order(mats[0][ok], y[ok])
    evaluator = "mixed" if len(paths) > 1 else ("exact" if paths == {True} else
                                                "fast" if paths else "none")
    return ToleranceResult(spec, mats[0], first, passed, failed, result_indices, evaluator,
                           len(records), runner.computed, tables)
