"""The fast-path tables of a study: its box of varied values, built once before the evaluations.

A study varies a few design values X_i of one design. The certified study table
(:func:`diagap.fastpath.study_table`) covers every numeric summary output of the mechanics to
response sections over a box lo_i ≤ X_i ≤ hi_i, each table point one full FE analysis. The box
of a study:

- tolerance study (:mod:`diagap.studies.tolerance`), per varied value: a uniform distribution
  gives its bounds [low, high]; a normal distribution N(μ, σ²) gives μ ± 4σ, clipped to the
  value's allowed range of the design schema (:data:`diagap.schema.SCHEMA`). ±4σ holds all but
  6.3e-5 of the samples of each value (Φ(−4) = 3.17e-5 per side), so at most a few in ten
  thousand samples fall outside and are evaluated exactly; a wider box costs a longer table for
  little gain. Correlations need no change: the box is the product of the per-value ranges;
- optimisation (:mod:`diagap.studies.optimise`): the bounds of the variables.

First, the global tables (``diagap tables``, :mod:`diagap.fastpath.catalog`; clamped circular
diaphragms over a rigid backplate) are asked, read-only, for the study's keys at the nominal
design and the corners of the box (:func:`global_tables_cover`): where they answer everywhere,
the study needs no table of its own, and its evaluations read the global tables (a corner
collapsed beyond doubt counts as answered: the full FE has no response there either, so a box
that reaches past pull-in is no obstacle, as it is for a box table) (the option
``box_only`` skips this). An optimisation (``build_global``) whose box lies in the global
tables' family (:func:`family_covered`) builds *patches* of the global tables rather than a box
table (with a Dask client or more than one local worker): the cell, rim and flow-cell tables
over the range of their dimensionless groups that the box reaches
(:func:`diagap.fastpath.patches.study_patches`), the diaphragm and film-shape tables global
(:func:`build_global_tables` with the patches); the evaluations then read them
(:class:`diagap.evaluate.KeyEvaluator` with ``patches``). Over the wide bounds of a hole
pattern a box table costs more and the whole global tables cost more again: the demo's
3-variable box at "draft" on two cores from an empty cache took 571 s as a box table, 305 s
(tables) for the global tables it reads, and 77 s as patches (cell 13 s, rim 9 s, flow cell
33 s, diaphragm and film shape the rest), all three with the same optimum. Otherwise
the box table is built once in the calling process with the study's local workers or Dask
client (:func:`diagap.fastpath.mapper_for`), cached on disk and kept in memory; the evaluations then
only read it (:class:`diagap.evaluate.KeyEvaluator` with the box). Points outside the box, and
outputs the table does not certify, are evaluated with the full FE pipeline. If the table cannot
be built (a corner of the box outside the schema's cross-field limits, a design the tables do
not handle), the study runs with the exact path and says so in the log.
"""
from __future__ import annotations

import logging
import math
import time

__all__ = ["tolerance_ranges", "prepare_tables", "NORMAL_SIGMAS", "TableBuild",
           "global_tables_cover", "family_covered", "build_global_tables"]

log = logging.getLogger(__name__)

#: half-width of the box of a normally distributed value, in standard deviations
NORMAL_SIGMAS = 4.0


def _schema_bounds(path: str) -> tuple[float, float]:
    from diagap.schema import SCHEMA

    section, _, key = path.partition(".")
    f = SCHEMA.get(section, {}).get(key)
    lo = getattr(f, "low", None)
    hi = getattr(f, "high", None)
    return (-math.inf if lo is None else float(lo)), (math.inf if hi is None else float(hi))


def tolerance_ranges(inputs) -> tuple:
    """The box ``((path, low, high), ...)`` (SI) of the varied values ``inputs``
    (:class:`diagap.studies.sampling.Varied`), as in the module docstring."""
    out = []
    for v in inputs:
        if v.kind == "uniform":
            lo, hi = float(v.a), float(v.b)
        else:
            lo, hi = v.a - NORMAL_SIGMAS * v.b, v.a + NORMAL_SIGMAS * v.b
        s_lo, s_hi = _schema_bounds(v.path)
        out.append((v.path, max(lo, s_lo), min(hi, s_hi)))
    return tuple(out)


class TableBuild:
    """What :func:`prepare_tables` did: ``used`` (the evaluations read tables), ``seconds``
    (the build, the read or the coverage check), ``reason`` (why not used), ``kind``
    ("global": the global tables cover the box; "patches": the study's patches of them,
    :mod:`diagap.fastpath.patches`; "box": the study's own table)."""

    def __init__(self, used: bool, seconds: float = 0.0, reason: str = "", kind: str = "box"):
        self.used, self.seconds, self.reason, self.kind = used, seconds, reason, kind

    def to_dict(self) -> dict:
        return {"used": self.used, "seconds": self.seconds, "reason": self.reason,
                "kind": self.kind if self.used else None}


def _box_probes(design, ranges) -> list:
    """The nominal design and the box's corners (all 2^d for d ≤ 5 values, else the 2d ends of
    each value's range with the others at their nominal values)."""
    import itertools

    from diagap.design import with_overrides

    paths = [p for p, _, _ in ranges]
    if len(ranges) <= 5:
        combos = itertools.product(*[(lo, hi) for _, lo, hi in ranges])
        points = [dict(zip(paths, c)) for c in combos]
    else:
        points = [{p: v} for p, lo, hi in ranges for v in (lo, hi)]
    return [design] + [with_overrides(design, {k: float(v) for k, v in pt.items()})
                       for pt in points]


def global_tables_cover(design, keys, ranges, patches=None) -> bool:
    """True when the global tables (built beforehand with ``diagap tables``; only read here)
    give every one of ``keys`` at the nominal design and at the corners of the box
    (:func:`_box_probes`), a corner collapsed beyond doubt counting as answered for its
    ``response`` paths (:func:`diagap.evaluate.absent_paths`): the study then needs no table of
    its own. A point inside the box that they do not cover after all is evaluated with the full
    FE (as any point without a table). With ``patches`` the cell, rim and flow-cell tables
    are read from those patches (:mod:`diagap.fastpath.patches`)."""
    from diagap.evaluate import absent_paths
    from diagap.fastpath import fast_summary, read_only

    extra = {} if patches is None else {"patches": patches}
    try:  # a corner outside the design rules (DesignError), or outside the tables
        for probe in _box_probes(design, ranges):
            out = fast_summary(probe, mapper=read_only, **extra)
            absent = absent_paths(out, keys)
            if not all(k in out or k in absent for k in keys):
                return False
    except ValueError:  # DesignError, FastPathUnavailable
        return False
    return True


def family_covered(design, ranges) -> bool:
    """True when the nominal design and every corner of the box lie in the global tables'
    family and range (:func:`diagap.fastpath.field.check_covered`: clamped circle, rigid
    backplate, no dielectric layer or electret, tension ratio and hole pattern inside the
    tables): a static check that reads no table."""
    from diagap.fastpath.field import check_covered

    try:
        for probe in _box_probes(design, ranges):
            check_covered(probe)
    except ValueError:  # DesignError, FastPathUnavailable
        return False
    return True


def build_global_tables(design, ranges, mapper, patches=None) -> None:
    """Build (on demand, cached on disk) the global tables that the nominal design and the
    corners of the box read: a fast summary of each with a building ``mapper``. With
    ``patches`` (:func:`diagap.fastpath.patches.study_patches`) the cell, rim and flow-cell
    tables are built as those patches; the diaphragm and film-shape tables stay global."""
    from diagap.fastpath import fast_summary

    extra = {} if patches is None else {"patches": patches}
    for probe in _box_probes(design, ranges):
        try:
            fast_summary(probe, mapper=mapper, **extra)
        except ValueError:  # a corner the tables do not answer: the cover check says so
            continue


def _parallel(workers, client) -> bool:
    """True for a Dask client or more than one local worker process: the global tables are
    then built in worker processes (one process building all of them would keep growing)."""
    from diagap.sweep.exec import available_cores

    if client is not None:
        return True
    return int(available_cores() if workers is None else workers) > 1


def prepare_tables(design, keys, ranges, *, exact: bool = False, workers: int | None = 1,
                   client=None, table_options: dict | None = None, build_global: bool = False):
    """The evaluator of a study and what happened to its table.

    Parameters
    ----------
    design : Design
        The study's base design (the box's nominal design).
    keys : sequence of str
        Summary paths the study needs.
    ranges : sequence of (path, low, high)
        The box (SI).
    exact : bool
        Full FE for every point: no table.
    workers : int, optional
        Local processes computing the table points (when ``client`` is None).
    client : distributed.Client, optional
        A Dask client computing the table points.
    table_options : dict, optional
        ``tol``, ``nodes``, ``max_nodes``, ``validate``, ``distributed``, ``drive`` of
        :func:`diagap.fastpath.study_table` (default ``distributed``: whether a key needs the
        distributed reference; ``drive``: the keys).
    build_global : bool
        When the global tables do not cover the box yet but its designs lie in their family
        (:func:`family_covered`), build the study's patches of them (module docstring) instead
        of a box table, and use them if they then cover the box (an optimisation: a box table
        over wide bounds of the hole pattern costs more than its patches).
        Only with a Dask client or more than one local worker (the table points then run in
        worker processes); with one worker the box table is built as before.

    Returns
    -------
    (diagap.evaluate.KeyEvaluator, TableBuild)
    """
    from diagap.evaluate import KeyEvaluator, fast_path_installed

    keys = tuple(keys)
    if exact:
        return KeyEvaluator(keys, True), TableBuild(False, reason="exact evaluation requested")
    if not fast_path_installed():  # pragma: no cover - depends on the installed version
        return KeyEvaluator(keys, False), TableBuild(False, reason="fast path not installed")
    from diagap.fastpath import StudyBox, mapper_for, study_table
    from diagap.fastpath.refine import close_mapper

    options = dict(table_options or {})
    t0 = time.perf_counter()
    box_only = options.pop("box_only", False)
    if not box_only and global_tables_cover(design, keys, ranges):
        seconds = time.perf_counter() - t0
        log.info("the global tables cover the study's box (checked in %.1f s)", seconds)
        return KeyEvaluator(keys, False), TableBuild(True, seconds, kind="global")
    if (not box_only and build_global and _parallel(workers, client)
            and family_covered(design, ranges)):
        from diagap.fastpath.patches import study_patches

        patches = study_patches(design, ranges)
        log.info("building the study's patches of the global tables: %r", patches)
        mapper = mapper_for(workers, client)
        try:
            build_global_tables(design, ranges, mapper, patches)
        finally:
            close_mapper(mapper)
        if global_tables_cover(design, keys, ranges, patches):
            seconds = time.perf_counter() - t0
            log.info("patches built and covering the study's box in %.1f s", seconds)
            return (KeyEvaluator(keys, False, patches=patches),
                    TableBuild(True, seconds, kind="patches"))
        log.info("the patches do not give every key at the box's corners: box table")
    from diagap.response_stage import is_distributed_output

    options.setdefault("distributed", any(is_distributed_output(k) for k in keys))
    options.setdefault("drive", tuple(sorted(keys)))
    t0 = time.perf_counter()
    try:
        box = StudyBox(design, tuple((p, float(lo), float(hi)) for p, lo, hi in ranges))
        mapper = mapper_for(workers, client)
        try:
            table, facts = study_table(box, mapper=mapper, **options)
        finally:
            close_mapper(mapper)
    except Exception as exc:  # noqa: BLE001 - any failure of the table means exact evaluations
        reason = f"{type(exc).__name__}: {exc}".splitlines()[0]
        log.warning("study table not available, every point runs the full FE (%s)", reason)
        return KeyEvaluator(keys, False), TableBuild(False, time.perf_counter() - t0, reason)
    seconds = time.perf_counter() - t0
    skip = set(facts.get("uncertified", ()))
    missing = [k for k in keys if k not in table.names or k in skip]
    if missing:  # e.g. the box holds designs biased beyond pull-in: no response there
        reason = (f"the table over the box has no certified {', '.join(missing)} (a corner of "
                  "the box may collapse at its bias, or the output is not a number there); "
                  "every point runs the full FE: narrow the box to get the fast path")
        log.warning("study table incomplete: %s", reason)
        return KeyEvaluator(keys, False), TableBuild(False, seconds, reason)
    log.info("study table over %s ready in %.1f s", ", ".join(box.paths), seconds)
    return (KeyEvaluator(keys, False, box, tuple(sorted(options.items()))),
            TableBuild(True, seconds))
