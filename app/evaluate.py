"""Values of chosen summary quantities for one design: the fast tables or the full FE pipeline.

A summary path names one number of summary.json by its section and key,
``"response.sensitivity_db_v_per_pa"`` or ``"coupled.pull_in_voltage_v"`` (lists of numbers take
``_1``, ``_2``: ``"mechanics.natural_frequencies_hz_1"``), exactly as in a sweep's CSV columns
(:func:`diagap.sweep.point.flatten_summary`). Values are SI numbers (dB for levels).

Two ways to get them:

- the fast path, :func:`diagap.fastpath.fast_summary`: interpolation in precomputed tables of
  the dimensionless FE solutions, certified against the full FE inside the tables' range; it
  raises ``FastPathUnavailable`` outside that range (or is not installed);
- the exact path: the analysis pipeline (:func:`diagap.pipeline.run_design`), stopped after the
  last stage that the requested sections need. Stages run in the pipeline's order, mechanics →
  electrostatics → coupled → damping → response; the large-deflection and audit sections need
  the whole run.

The fast path is tried unless ``exact=True``; a design outside its tables, or a requested path
that the tables do not cover, falls back to the exact path. :func:`evaluate_with_path` says
which one answered. A requested path that the design does not produce (e.g. the sensitivity of a
collapsed design, biased at or above pull-in) is NaN.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable

try:  # the certified fast path is optional: without it every evaluation is exact
    from diagap.fastpath import FastPathUnavailable, fast_summary
except ImportError:  # pragma: no cover - depends on the installed version
    fast_summary = None

    class FastPathUnavailable(Exception):
        """Stand-in when :mod:`diagap.fastpath` is not installed."""

__all__ = ["evaluate", "evaluate_with_path", "exact_summary", "KeyEvaluator", "check_keys",
           "FAST", "EXACT", "PATH_KEY", "fast_path_installed"]

FAST, EXACT = "fast", "exact"
#: output key telling which path computed a point (True: the full FE pipeline)
PATH_KEY = "evaluation.exact"
#: summary sections in pipeline order; the last two need the complete run
_ORDER = ("mechanics", "electrostatics", "coupled", "damping", "response")
_WHOLE_RUN = ("large_deflection", "audit")


def fast_path_installed() -> bool:
    """True when :mod:`diagap.fastpath` can be imported."""
    return fast_summary is not None


def check_keys(keys: Iterable[str], what: str = "summary path") -> tuple[str, ...]:
    """The summary paths ``keys`` as a tuple, each ``section.key`` with a known section.

    Raises
    ------
    diagap.design.DesignError
        A path that is not ``section.key`` or names an unknown section (one line).
    """
    from diagap.design import DesignError

    out = []
    for key in keys:
        section = key.split(".", 1)[0] if isinstance(key, str) else ""
        if not isinstance(key, str) or "." not in key or section not in (*_ORDER, *_WHOLE_RUN):
            raise DesignError(f"{what} {key!r}: expected section.key with a section of "
                              f"{', '.join((*_ORDER, *_WHOLE_RUN))}, e.g. "
                              f"'response.sensitivity_db_v_per_pa'")
        out.append(key)
    if not out:
        raise DesignError(f"no {what} given")
    return tuple(dict.fromkeys(out))


def _partial_run(design, sections: set):
    """The pipeline's stages up to the last one that ``sections`` need (a RunResult)."""
    from diagap.budget import check_run_size
    from diagap.extract import plate_problem, response_inputs
    from diagap.fem.plate.solver import solve_plate
    from diagap.pipeline import RunResult, _skipped, _stage
    from diagap.stages import (coupled_stage, damping_stage, electrostatics_stage,
                               lumped_model, response_stage)

    last = max(_ORDER.index(s) for s in sections)
    check_run_size(design, None)
    result = RunResult(design)
    acc = design.analysis.accuracy
    problem = plate_problem(design)
    mech = _stage(result, "mechanics", solve_plate, problem, accuracy=acc)
    if last < 1:
        return result
    es = _stage(result, "electrostatics", electrostatics_stage, design, mech)
    if last < 2:
        return result
    cp = _stage(result, "coupled", coupled_stage, design, problem, es, mech)
    coupled = cp.objects["coupled"]
    result.collapsed = design.electrical is not None and bool(coupled.collapsed)
    if last < 3:
        return result
    f_res = (coupled.resonance_at_bias_hz if design.electrical is not None else None) or \
        mech.natural_frequencies_hz[0]
    damp = _stage(result, "damping", damping_stage, design, mech, f_res)
    result.skipped = _skipped(design, result.collapsed)
    if last >= 4 and "response" not in result.skipped:
        model = lumped_model(design, mech, es, cp, damp)
        dist = response_inputs(design, es.objects["density"], es.objects["rim"],
                               damp.objects["air"])
        _stage(result, "response", response_stage, model, result.summary()["uncertainty"],
               dist, acc)
    return result


def exact_summary(design, keys: Iterable[str]) -> dict[str, float]:
    """Every flat summary value of the stages that ``keys`` need, from the full FE pipeline."""
    from diagap.sweep.point import flatten_summary
    from diagap.writer import json_ready

    sections = {k.split(".", 1)[0] for k in keys}
    if sections & set(_WHOLE_RUN) or not sections <= set(_ORDER):
        from diagap.pipeline import run_design

        result = run_design(design)
    else:
        result = _partial_run(design, sections)
    outputs, _ = flatten_summary(json_ready(result.summary()))
    return outputs


def _pick(values: dict, keys) -> dict[str, float]:
    out = {}
    for k in keys:
        v = values.get(k)
        out[k] = float(v) if v is not None and not isinstance(v, str) else math.nan
    return out


def evaluate_with_path(design, keys: Iterable[str], *, exact: bool = False
                       ) -> tuple[dict[str, float], str]:
    """The values of the summary paths ``keys`` for ``design`` and the path that gave them.

    Parameters
    ----------
    design : diagap.design.Design
    keys : iterable of str
        Summary paths such as ``"response.sensitivity_db_v_per_pa"``.
    exact : bool
        Run the full FE pipeline even when the fast tables cover the design.

    Returns
    -------
    values : dict
        Path → float (SI; NaN where the design does not produce the value).
    path : {"fast", "exact"}
    """
    keys = check_keys(keys)
    if not exact and fast_summary is not None:
        try:
            fast = fast_summary(design)
        except FastPathUnavailable:
            fast = None
        if fast is not None and all(k in fast for k in keys):
            return _pick(fast, keys), FAST
    return _pick(exact_summary(design, keys), keys), EXACT


def evaluate(design, keys: Iterable[str], *, exact: bool = False) -> dict[str, float]:
    """The values of the summary paths ``keys`` for ``design`` (see :func:`evaluate_with_path`).

    Examples
    --------
    >>> from diagap.design import demo_design
    >>> evaluate(demo_design().with_accuracy("draft"),
    ...          ["coupled.pull_in_voltage_v"], exact=True)       # doctest: +SKIP
    {'coupled.pull_in_voltage_v': 36.1...}
    """
    return evaluate_with_path(design, keys, exact=exact)[0]


@dataclass(frozen=True)
class KeyEvaluator:
    """A picklable ``f(design) -> {path: value}`` for study points run in worker processes.

    The returned dict also holds :data:`PATH_KEY` (True when the full FE pipeline answered).
    """

    keys: tuple
    exact: bool = False

    def __call__(self, design) -> dict:
        values, path = evaluate_with_path(design, self.keys, exact=self.exact)
        return {**values, PATH_KEY: path == EXACT}
