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
that the tables do not cover, falls back to the exact path; :func:`evaluate_with_path` says
which one answered. Without a study box the fast path reads the global tables
(:func:`diagap.fastpath.fast_summary`): the ``mechanics`` outputs of every diaphragm in their
range and, for clamped circular diaphragms over a rigid backplate, the electrostatics, coupled,
damping and response outputs where the global tables have been built (``diagap tables``); with
a :class:`diagap.fastpath.StudyBox` (the bounds of the values a study varies) it covers every
numeric output of the mechanics to response sections that the box's table certifies. A requested path that the design does not produce (e.g. the sensitivity of a
collapsed design, biased at or above pull-in) is NaN. When the fast path finds the design
collapsed with a bias at least :data:`COLLAPSE_MARGIN` times its pull-in voltage (its bias
margin is certified within 1e-3, so the verdict is certain), the ``response`` paths are NaN
without a full FE run, as the pipeline skips that section for a collapsed design.
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
           "no_table_building", "absent_paths", "COLLAPSE_MARGIN",
           "FAST", "EXACT", "PATH_KEY", "fast_path_installed"]

FAST, EXACT = "fast", "exact"
#: output key telling which path computed a point (True: the full FE pipeline)
PATH_KEY = "evaluation.exact"
#: summary sections in pipeline order; the last two need the complete run
_ORDER = ("mechanics", "electrostatics", "coupled", "damping", "response")
_WHOLE_RUN = ("large_deflection", "audit")
#: bias / pull-in from which the fast path's "collapsed" is taken as certain (ten times the
#: certified 1e-3 of the bias margin)
COLLAPSE_MARGIN = 1.01


def fast_path_installed() -> bool:
    """True when :mod:`diagap.fastpath` can be imported."""
    return fast_summary is not None


def check_keys(keys: Iterable[str], what: str = "summary path") -> tuple[str, ...]:
    """The summary paths ``keys`` as a tuple, each ``section.key`` with a known section and a
    numeric output of that section (a key of the names table, :func:`diagap.names.lookup`, which
    names every numeric summary output).

    Raises
    ------
    diagap.design.DesignError
        A path that is not ``section.key``, names an unknown section, or is no numeric output
        (one line; the nearest output's name as a hint).
    """
    import difflib

    from diagap.design import DesignError
    from diagap.names import LIST_KEYS, NAMES, TEXT_KEYS, lookup

    out = []
    for key in keys:
        section = key.split(".", 1)[0] if isinstance(key, str) else ""
        if not isinstance(key, str) or "." not in key or section not in (*_ORDER, *_WHOLE_RUN):
            raise DesignError(f"{what} {key!r}: expected section.key with a section of "
                              f"{', '.join((*_ORDER, *_WHOLE_RUN))}, e.g. "
                              f"'response.sensitivity_db_v_per_pa'")
        if lookup(key) is None or key in TEXT_KEYS:
            near = difflib.get_close_matches(key, [k for k in NAMES if k not in TEXT_KEYS], n=1)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise DesignError(f"{what} {key!r}: not a numeric output of summary.json (lists "
                              f"take _1, _2, ...){hint}")
        if key in LIST_KEYS:
            raise DesignError(f"{what} {key!r}: a list of numbers; name one entry, e.g. "
                              f"'{key}_1'")
        out.append(key)
    if not out:
        raise DesignError(f"no {what} given")
    return tuple(dict.fromkeys(out))


def _partial_run(design, sections: set):
    """The pipeline's stages up to the last one that ``sections`` need (a RunResult)."""
    from diagap.budget import check_run_size
    from diagap.extract import plate_problem
    from diagap.fem.plate.solver import solve_plate
    from diagap.pipeline import RunResult, _skipped, _stage, response_step
    from diagap.stages import coupled_stage, damping_stage, electrostatics_stage

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
        response_step(result, design, mech, es, cp, damp)
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


def absent_paths(fast: dict, keys) -> set:
    """The paths of ``keys`` that a design does not produce by the fast outputs ``fast``: the
    ``response`` section of a design collapsed with bias / pull-in ≥ :data:`COLLAPSE_MARGIN`
    (the pipeline skips it, :func:`diagap.pipeline._skipped`)."""
    margin = fast.get("coupled.bias_margin")
    if fast.get("coupled.collapsed") != 1.0 or margin is None or not margin >= COLLAPSE_MARGIN:
        return set()
    return {k for k in keys if k.split(".", 1)[0] == "response"}


def no_table_building(func, points):
    """A table mapper that refuses to compute table points: an evaluation with it uses a study
    table already built (on disk or in memory) and otherwise falls back to the exact path,
    instead of building the table inside a worker process."""
    raise FastPathUnavailable("the study table has not been built (build it before the "
                              "evaluations, diagap.studies.tables.prepare_tables)")


def evaluate_with_path(design, keys: Iterable[str], *, exact: bool = False, box=None,
                       build: bool = True, table_options=None, patches=None
                       ) -> tuple[dict[str, float], str]:
    """The values of the summary paths ``keys`` for ``design`` and the path that gave them.

    Parameters
    ----------
    design : diagap.design.Design
    keys : iterable of str
        Summary paths such as ``"response.sensitivity_db_v_per_pa"``.
    exact : bool
        Run the full FE pipeline even when the fast tables cover the design.
    box : diagap.fastpath.StudyBox, optional
        The study box whose table answers (all sections up to the response); without it the
        global tables answer (module docstring).
    build : bool
        Build a missing box table here (False: a missing table means the exact path).
    table_options : dict, optional
        ``tol``, ``nodes``, ``max_nodes``, ``validate``, ``distributed`` of the box table
        (:func:`diagap.fastpath.study_table`); they select which cached table is read.
    patches : diagap.fastpath.patches.PatchSet, optional
        Without a box: the study's patches of the cell, rim and flow-cell tables, read (never
        built here) in place of the global ones (:mod:`diagap.fastpath.patches`).

    Returns
    -------
    values : dict
        Path → float (SI; NaN where the design does not produce the value).
    path : {"fast", "exact"}
    """
    keys = check_keys(keys)
    if not exact and fast_summary is not None:
        try:
            if box is None and patches is not None:
                fast = fast_summary(design, patches=patches)
            elif box is None:
                fast = fast_summary(design)
            else:
                fast = fast_summary(design, box, mapper=None if build else no_table_building,
                                    **dict(table_options or {}))
        except FastPathUnavailable:
            fast = None
        if fast is not None:
            absent = absent_paths(fast, keys)
            if all(k in fast or k in absent for k in keys):
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


@dataclass(frozen=True, repr=False)
class KeyEvaluator:
    """A picklable ``f(design) -> {path: value}`` for study points run in worker processes.

    The returned dict also holds :data:`PATH_KEY` (True when the full FE pipeline answered).

    Parameters
    ----------
    keys : tuple of str
        Summary paths.
    exact : bool
        Always the full FE pipeline.
    box : diagap.fastpath.StudyBox, optional
        The study box of the fast path. Its table is only read, never built, by the evaluator
        (build it first, :func:`diagap.studies.tables.prepare_tables`); a design outside the
        box, or a missing table, is evaluated exactly.
    table_options : tuple of (name, value)
        Options of the box table (:func:`diagap.fastpath.study_table`), as used when it was
        built.
    patches : diagap.fastpath.patches.PatchSet, optional
        Without a box: the study's patches of the global tables
        (:mod:`diagap.fastpath.patches`), only read, as the box table.
    """

    keys: tuple
    exact: bool = False
    box: object = None
    table_options: tuple = ()
    patches: object = None

    def __repr__(self) -> str:
        # the repr names the evaluator in study point ids: without a box it is the plain one
        text = f"KeyEvaluator(keys={self.keys!r}, exact={self.exact!r}"
        if self.box is not None:
            ranges = tuple((p, float(lo), float(hi)) for p, lo, hi in self.box.ranges)
            text += f", box={ranges!r}, table_options={self.table_options!r}"
        if self.patches is not None:
            text += f", patches={self.patches!r}"
        return text + ")"

    def __call__(self, design) -> dict:
        values, path = evaluate_with_path(design, self.keys, exact=self.exact, box=self.box,
                                          build=False, table_options=dict(self.table_options),
                                          patches=self.patches)
        return {**values, PATH_KEY: path == EXACT}
