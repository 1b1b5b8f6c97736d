"""Parameter sweeps of a design: resumable, failure-tolerant, serial, local-parallel or on Dask.

A sweep is the cartesian product of variations of design keys (:mod:`diagap.sweep.spec`), each
point a copy of the base design with its overrides, evaluated by the analysis pipeline (or any
picklable ``evaluate(design)``). Results go to ``OUT/sweep.jsonl`` (the record of every finished
point, fsync'ed line by line) and ``OUT/sweep.csv`` (one row per point), summary plots to
``OUT/plots/`` (layout and columns: :mod:`diagap.sweep.store`).

Resuming: a point's id is a hash of its overrides (the varied values in SI and the accuracy
level), so running the same sweep again into the same folder computes only the points without a
record -- finished points (ok, failed or collapsed) are skipped, except points that failed
because of the environment (a full disk, a killed worker, memory; :mod:`diagap.sweep.faults`),
which are computed again; all failed ones are computed again with ``retry_failed=True``.
Extending a variation reuses the points already computed. A folder holding a sweep of another
base design, or over other varied keys, is refused; ``fresh=True`` removes the earlier sweep's
files and starts a clean sweep instead. Plots of an earlier run that this run does not write are
removed.

Failures: an exception of one point (an invalid combination such as hole radius >= half the
pitch, a solver error) is recorded with its message and cause, and the sweep goes on.
``KeyboardInterrupt`` and ``SystemExit`` stop the sweep; every point finished until then stays
recorded.

Example
-------
>>> from diagap.design import demo_design
>>> from diagap.sweep.run import run_sweep
>>> res = run_sweep(demo_design(), ["backplate.hole_radius=2um:8um:4"], "out",
...                 accuracy="draft")                                   # doctest: +SKIP
>>> res.values("mechanics.center_compliance_m_per_pa")                  # doctest: +SKIP
"""
from __future__ import annotations

import logging
import pickle
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Sequence

from diagap.design import Design, with_override
from diagap.sweep.exec import available_cores, connect, run_dask, run_pool, run_serial
from diagap.sweep.faults import ENVIRONMENT, record_cause, retry_on_resume
from diagap.sweep.point import PointOutput, PointTask, pipeline_point
from diagap.sweep.progress import make_progress
from diagap.sweep.spec import SweepError, Variation, check_path, grid, parse_vary, point_id
from diagap.sweep.store import FORMAT, CsvTable, SweepFolder, design_hash

__all__ = ["run_sweep", "SweepResult", "SweepError", "Variation", "parse_vary", "PointOutput",
           "pipeline_point"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class SweepResult:
    """The outcome of :func:`run_sweep`.

    Attributes
    ----------
    out_dir : Path
        The sweep folder.
    variations : tuple of Variation
        The varied inputs.
    records : tuple of dict
        One record per finished point of this sweep, in grid order (keys: point_id, overrides,
        status, error, wall_time_s, outputs, uncertainty; see :mod:`diagap.sweep.point`).
    computed, reused : int
        Points computed by this call, and points found already finished in ``out_dir``.
    plot_files : tuple of Path
        The summary plots written.
    """

    out_dir: Path
    variations: tuple
    records: tuple
    computed: int
    reused: int
    plot_files: tuple = ()

    @property
    def csv_path(self) -> Path:
        return self.out_dir / "sweep.csv"

    @property
    def jsonl_path(self) -> Path:
        return self.out_dir / "sweep.jsonl"

    def counts(self) -> dict[str, int]:
        """Number of points per status (``ok``, ``failed``, ``collapsed``)."""
        out = {"ok": 0, "failed": 0, "collapsed": 0}
        for r in self.records:
            out[r["status"]] = out.get(r["status"], 0) + 1
        return out

    def exit_status(self) -> int:
        """0 unless every point failed: 2 if all failures are input errors, else 1."""
        from diagap.sweep.faults import sweep_exit_status

        return sweep_exit_status(self.records)

    def values(self, key: str) -> list:
        """The output ``key`` of every point in grid order (None where absent or failed)."""
        return [r.get("outputs", {}).get(key) for r in self.records]


def _variations(variations) -> tuple[Variation, ...]:
    if isinstance(variations, (str, Variation)):
        variations = [variations]
    out = []
    for v in variations:
        if isinstance(v, str):
            out.append(parse_vary(v))
        elif isinstance(v, Variation):
            check_path(v.path)
            out.append(v)
        else:
            raise SweepError(f"variation {v!r}: expected a Variation or a 'PATH=SPEC' text")
    return tuple(out)


def _workers(workers) -> int:
    if workers is None:
        return available_cores()
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise SweepError(f"--workers {workers!r}: must be a whole number >= 1")
    return workers


def _points(base: Design, variations: Sequence[Variation], accuracy: str):
    """(index, overrides, id) of every grid point; the accuracy is an override unless varied."""
    varied = {v.path for v in variations}
    extra = () if "analysis.accuracy" in varied else (("analysis.accuracy", accuracy),)
    pts = []
    for i, combo in enumerate(grid(variations)):
        overrides = combo + extra
        pts.append((i, overrides, point_id(overrides)))
    return pts


def _check_picklable(evaluate) -> None:
    try:
        pickle.dumps(evaluate)
    except Exception as exc:  # noqa: BLE001 - any pickling failure means the same to the user
        raise SweepError(f"evaluate = {evaluate!r}: cannot be sent to worker processes "
                         f"({type(exc).__name__}); use a module-level function or workers=1"
                         ) from None


def _manifest(base: Design, variations, accuracy: str, n: int) -> dict:
    return {"format": FORMAT, "design_name": base.name, "design_hash": design_hash(base),
            "accuracy": accuracy, "points": n,
            "variations": [{"path": v.path, "unit": v.unit, "spacing": v.spacing,
                            "values": list(v.values), "text": v.text} for v in variations]}


def _runner(scheduler, workers: int, client) -> Callable:
    if scheduler is not None:
        return lambda tasks, emit: run_dask(tasks, client, emit)
    if workers > 1:
        return lambda tasks, emit: run_pool(tasks, min(workers, len(tasks)), emit)
    return run_serial


def _mesh_cache_state() -> bool:
    from diagap.meshes.cache import enabled

    return enabled()


def run_sweep(design: Design, variations, out_dir: str | Path = "diagap-sweep", *,
              workers: int | None = None, scheduler: Any = None, accuracy: str | None = None,
              evaluate: Callable[[Design], Any] | None = None, progress=False,
              retry_failed: bool = False, plots: bool = True, fresh: bool = False) -> SweepResult:
    """Run (or resume) a sweep of ``design`` over the cartesian product of ``variations``.

    Parameters
    ----------
    design : Design
        The base design.
    variations : sequence of Variation or str
        The varied keys, as :class:`Variation` or ``"PATH=SPEC"`` texts (:func:`parse_vary`).
    out_dir : str or Path
        The sweep folder (created; an existing sweep of the same base design is resumed).
    workers : int, optional
        Local worker processes (default: the cores available); 1 runs in this process.
        Ignored with ``scheduler``. Workers are started with ``spawn``: a script calling
        ``run_sweep`` with workers > 1 needs the ``if __name__ == "__main__":`` guard.
    scheduler : str or distributed.Client, optional
        A Dask scheduler address (``tcp://host:8786``) or client: run the points on that
        cluster (needs the ``diagap[cluster]`` extra).
    accuracy : {"draft", "normal", "fine"}, optional
        Accuracy level of every point (default: the design's ``analysis.accuracy``).
    evaluate : callable, optional
        ``evaluate(design)`` returning a summary dict, a :class:`PointOutput` or a pipeline
        ``RunResult``; default :func:`pipeline_point`. Must be picklable for workers > 1.
    progress : bool or callable
        True draws a progress bar on stderr; a callable is called as ``f(done, total, record)``.
    retry_failed : bool
        Compute all failed points again (points that failed because of the environment are
        computed again in any case).
    plots : bool
        Write the summary plots into ``out_dir/plots`` at the end.
    fresh : bool
        Remove the files of an earlier sweep in ``out_dir`` and start a clean sweep (otherwise
        a folder holding a sweep of another base design or other varied keys is refused).

    Raises
    ------
    SweepError
        Bad variations or workers, an unusable folder (or one holding another sweep), no Dask
        or no connection to the scheduler; raised before any file is written.
    DesignError
        An invalid ``accuracy``.
    """
    variations = _variations(variations)
    acc = accuracy if accuracy is not None else design.analysis.accuracy
    base = with_override(design, "analysis.accuracy", acc)
    points = _points(base, variations, acc)
    evaluate = evaluate if evaluate is not None else pipeline_point
    n_workers = _workers(workers)
    folder = SweepFolder(out_dir)
    folder.check(design_hash(base), [v.path for v in variations], fresh)
    if scheduler is None and n_workers > 1:
        _check_picklable(evaluate)
    client, owned = connect(scheduler) if scheduler is not None else (None, False)
    try:
        with folder:
            return _run(folder, base, variations, acc, points, evaluate,
                        _runner(scheduler, n_workers, client), progress, retry_failed, plots,
                        fresh)
    finally:
        if owned:
            client.close()


def _run(folder, base, variations, acc, points, evaluate, runner, progress, retry_failed,
         plots, fresh) -> SweepResult:
    done = folder.open(_manifest(base, variations, acc, len(points)), fresh)
    index_of = {pid: i for i, _, pid in points}
    mine = {pid: r for pid, r in done.items() if pid in index_of}
    keep = {pid: r for pid, r in mine.items() if not retry_on_resume(r, retry_failed)}
    retried = sum(record_cause(r) == ENVIRONMENT for pid, r in mine.items() if pid not in keep)
    if retried:
        log.info("sweep: computing again %d points that failed because of the environment",
                 retried)
    cache = _mesh_cache_state()
    tasks = [PointTask(pid, base, over, evaluate, cache) for _, over, pid in points
             if pid not in keep]
    log.info("sweep: %d points, %d already finished, %d to compute", len(points), len(keep),
             len(tasks))
    table = CsvTable(folder.csv, variations, index_of)
    table.rewrite(sorted(keep.values(), key=lambda r: index_of[r["point_id"]]))
    finished = dict(keep)
    bar = make_progress(progress, len(tasks))

    def emit(record: dict) -> None:
        record = folder.append(record)
        finished[record["point_id"]] = record
        table.add(record)
        bar.update(record)

    try:
        if tasks:
            runner(tasks, emit)
    finally:
        bar.close()
    records = tuple(sorted(finished.values(), key=lambda r: index_of[r["point_id"]]))
    table.rewrite(records)
    plot_files = ()
    if plots:
        from diagap.sweep.plots import write_plots

        plot_files = tuple(write_plots(records, variations, folder.plots))
    folder.finish(plot_files)
    return SweepResult(folder.root, variations, records, len(tasks), len(keep), plot_files)
