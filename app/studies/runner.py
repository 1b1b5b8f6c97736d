"""Running the evaluations of a study: resumable, in this process, a local pool or on Dask.

A study evaluates copies of a base design, each with a few design values replaced
(``((path, SI value), ...)``). The points run through the sweep machinery
(:mod:`diagap.sweep.exec`, :func:`diagap.sweep.point.run_point`): the same worker processes,
fault handling and Dask client; local worker processes are kept from the first batch that needs
them to the end of the study (:mod:`diagap.studies.pool`). Only this process writes files.

Resuming: every finished evaluation is one line of ``OUT/evaluations.jsonl`` (flushed and
fsync'ed; a truncated last line left by a killed process is cut off when the log is opened).
A point's id hashes the base design, the evaluator (its keys and the exact flag) and the
replaced values rounded to 12 significant digits, so running the same study again into the same
folder computes only the points without a record, and a log shared by different studies or
designs never serves a wrong value. Points that failed because of the environment are computed
again.
"""
from __future__ import annotations

import hashlib
import json
import logging
import os
from pathlib import Path
from typing import Any, Callable, Sequence

from diagap.sweep.exec import available_cores, connect, run_dask, run_serial
from diagap.sweep.faults import retry_on_resume
from diagap.sweep.point import PointTask
from diagap.sweep.progress import ProgressBar, make_progress
from diagap.sweep.spec import SweepError, si_round
from diagap.sweep.store import design_hash

__all__ = ["StudyRunner", "EvaluationLog", "study_point_id", "evaluator_tag"]

log = logging.getLogger(__name__)


def study_point_id(base_hash: str, tag: str, overrides) -> str:
    """16 hex digits identifying a point of a study (module docstring)."""
    items = [[p, si_round(v) if isinstance(v, float) else v] for p, v in overrides]
    text = json.dumps([base_hash, tag, items], sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def evaluator_tag(evaluate) -> str:
    """A name of ``evaluate`` that is the same in every run: a dataclass's repr (its fields), or
    a function's module and qualified name."""
    from dataclasses import is_dataclass

    if is_dataclass(evaluate):
        return repr(evaluate)
    name = getattr(evaluate, "__qualname__", None) or type(evaluate).__qualname__
    return f"{getattr(evaluate, '__module__', '')}.{name}"


class EvaluationLog:
    """``OUT/evaluations.jsonl``: one record per finished evaluation, with a folder lock."""

    def __init__(self, out_dir):
        self.root = Path(out_dir)
        self.path = self.root / "evaluations.jsonl"
        self._fh = None
        self._lock = None
        self.records: dict[str, dict] = {}

    def open(self) -> "EvaluationLog":
        if self.root.exists() and not self.root.is_dir():
            raise SweepError(f"{self.root}: exists and is not a folder (choose another -o)")
        self.root.mkdir(parents=True, exist_ok=True)
        self._take_lock()
        self.records = self._read()
        self._fh = open(self.path, "ab")
        return self

    def _take_lock(self) -> None:
        try:
            import fcntl
        except ImportError:  # pragma: no cover - not POSIX
            return
        fh = open(self.root / ".study.lock", "a")
        try:
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            fh.close()
            raise SweepError(f"{self.root}: another study is writing to this folder") from None
        self._lock = fh

    def _read(self) -> dict[str, dict]:
        if not self.path.exists():
            return {}
        data = self.path.read_bytes()
        end = data.rfind(b"\n") + 1
        if end < len(data):
            log.warning("%s: ignoring a truncated last line", self.path)
            with open(self.path, "r+b") as fh:
                fh.truncate(end)
        out = {}
        for line in data[:end].splitlines():
            try:
                rec = json.loads(line)
                out[rec["point_id"]] = rec
            except (ValueError, KeyError, TypeError):
                continue
        return out

    def append(self, record: dict) -> dict:
        rec = {k: v for k, v in record.items() if k not in ("summary", "traceback")}
        line = json.dumps(rec, separators=(",", ":"), default=str) + "\n"
        self._fh.write(line.encode("utf-8"))
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self.records[rec["point_id"]] = rec
        return rec

    def close(self) -> None:
        for fh in (self._fh, self._lock):
            if fh is not None:
                fh.close()
        self._fh = self._lock = None


class StudyRunner:
    """Evaluates batches of points of one base design (use as a context manager).

    Parameters
    ----------
    base : Design
        The base design (its accuracy is that of every point).
    evaluate : callable
        Picklable ``f(design) -> {summary path: value}``, e.g. :class:`diagap.evaluate.KeyEvaluator`.
    out_dir : path
        The study folder (``evaluations.jsonl``).
    tag : str
        Names the evaluator in the point ids (keys and exact flag).
    workers : int, optional
        Local processes (default: the cores available; 1 runs in this process).
    scheduler : str or distributed.Client, optional
        A Dask scheduler: points run on that cluster.
    progress : bool, callable or StudyProgress
        True: a progress bar on stderr per batch; a callable ``f(done, total, record)``; an
        object with ``batch(total)`` and ``batch_done(computed, replayed)`` (e.g.
        :class:`diagap.studies.progress.StudyProgress`) is told of every batch.
    label : str
        The progress bar's label.
    """

    def __init__(self, base, evaluate: Callable, out_dir, *, tag: str, workers: int | None = 1,
                 scheduler: Any = None, progress=False, label: str = "study"):
        self.base, self.evaluate, self.tag = base, evaluate, tag
        self.log = EvaluationLog(out_dir)
        self.base_hash = design_hash(base) + base.analysis.accuracy
        self.workers = workers if workers is not None else available_cores()
        if self.workers < 1:
            raise SweepError(f"workers = {workers!r}: must be >= 1")
        self.scheduler, self.progress, self.label = scheduler, progress, label
        self.client, self._owned = None, False
        self.pool = None  # local worker processes, started by the first batch that needs them
        self.computed = self.reused = 0

    def __enter__(self):
        if self.scheduler is None and self.workers > 1:
            import pickle

            try:
                pickle.dumps(self.evaluate)
            except Exception as exc:  # noqa: BLE001
                raise SweepError(f"evaluate = {self.evaluate!r}: cannot be sent to worker "
                                 f"processes ({type(exc).__name__}); use workers=1") from None
        if self.scheduler is not None:
            self.client, self._owned = connect(self.scheduler)
        try:
            self.log.open()
        except BaseException:
            self._close_client()
            raise
        return self

    def __exit__(self, *exc):
        if self.pool is not None:
            self.pool.close()
            self.pool = None
        self.log.close()
        self._close_client()

    def _close_client(self) -> None:
        if self._owned and self.client is not None:
            self.client.close()
        self.client, self._owned = None, False

    def _bar(self, total: int):
        if self.progress is True:
            return ProgressBar(total, label=self.label)
        if hasattr(self.progress, "batch"):
            return self.progress.batch(total)
        return make_progress(self.progress, total)

    def _mesh_cache(self) -> bool:
        from diagap.meshes.cache import enabled

        return enabled()

    def run(self, points: Sequence) -> list[dict]:
        """Evaluate ``points`` (each a sequence of ``(path, SI value)``); returns one record per
        point in order (``status`` ok / failed, ``outputs`` {path: value}, ``error``)."""
        ids = [study_point_id(self.base_hash, self.tag, p) for p in points]
        todo, seen = [], set()
        cache = self._mesh_cache()
        for pid, over in zip(ids, points):
            rec = self.log.records.get(pid)
            if (rec is None or retry_on_resume(rec, False)) and pid not in seen:
                seen.add(pid)
                todo.append(PointTask(pid, self.base, tuple(over), self.evaluate, cache))
        reused = len(set(ids)) - len(todo)
        self.reused += reused
        self.computed += len(todo)
        if todo:
            bar = self._bar(len(todo))

            def emit(record: dict) -> None:
                self.log.append(record)
                bar.update(record)

            try:
                self._runner(len(todo))(todo, emit)
            finally:
                bar.close()
        if hasattr(self.progress, "batch_done"):
            self.progress.batch_done(len(todo), reused)
        return [self.log.records[pid] for pid in ids]

    def _runner(self, n: int):
        if self.client is not None:
            return lambda tasks, emit: run_dask(tasks, self.client, emit)
        if self.workers > 1 and n > 1:  # one pool for all the batches of the study
            if self.pool is None:
                from diagap.studies.pool import WorkerPool

                self.pool = WorkerPool(self.workers)
            return self.pool.run
        return run_serial
