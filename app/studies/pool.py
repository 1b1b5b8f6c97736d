"""Local worker processes kept for every batch of a study.

An optimisation or a fit evaluates many small batches (a point and its finite-difference
neighbours), one after the other. Starting worker processes for each batch (``spawn``: a fresh
interpreter that imports diagap and, for a fit, builds the model again) would cost more than the
batch, so a study keeps one pool from its first batch to its end. The workers are those of the
sweeps (:mod:`diagap.sweep.exec`: SIGINT ignored, one BLAS thread, ended with their parent) and
run the same :func:`diagap.sweep.point.run_point`.

When a worker process dies during a batch, the points not yet finished are handed to
:func:`diagap.sweep.exec.run_pool`, which retries them one at a time and records a point whose
worker dies again as failed (cause ``environment``); the next batch starts a fresh pool.
"""
from __future__ import annotations

import logging
import multiprocessing
import os
from collections import deque

from diagap.sweep.exec import _init_worker, _line, _stop, run_pool
from diagap.sweep.point import run_point
from diagap.sweep.spec import SweepError

__all__ = ["WorkerPool"]

log = logging.getLogger(__name__)


class WorkerPool:
    """``workers`` local processes; :meth:`run` has the signature of the sweep runners."""

    def __init__(self, workers: int):
        self.workers = workers
        self.pool = None

    def _start(self):
        from concurrent.futures import ProcessPoolExecutor

        self.pool = ProcessPoolExecutor(self.workers,
                                        mp_context=multiprocessing.get_context("spawn"),
                                        initializer=_init_worker, initargs=(os.getpid(),))
        return self.pool

    def run(self, tasks, emit) -> None:
        """Run the points ``tasks``, at most one per worker in flight; ``emit`` each record."""
        from concurrent.futures import FIRST_COMPLETED, wait
        from concurrent.futures.process import BrokenProcessPool

        pool = self.pool or self._start()
        queue, running = deque(tasks), {}
        try:
            while queue or running:
                try:
                    while queue and len(running) < self.workers:
                        running[pool.submit(run_point, queue[0])] = queue[0]
                        queue.popleft()
                except BrokenProcessPool:
                    break
                done, _ = wait(running, return_when=FIRST_COMPLETED)
                broken = False
                for fut in done:
                    task = running.pop(fut)
                    try:
                        record = fut.result()
                    except BrokenProcessPool:
                        broken = True
                        queue.appendleft(task)
                        continue
                    except Exception as exc:  # noqa: BLE001 - e.g. the point cannot be pickled
                        raise SweepError(f"could not run a point in a worker process: "
                                         f"{_line(exc)}") from None
                    emit(record)
                if broken:
                    break
        except BaseException:
            _stop(pool)
            self.pool = None
            raise
        if queue or running:  # a worker died: the sweep's pool isolates the culprit
            log.warning("a study worker process died; retrying its points one at a time")
            rest = [*running.values(), *queue]
            self.close()
            run_pool(rest, self.workers, emit)

    def close(self) -> None:
        if self.pool is not None:
            self.pool.shutdown(wait=True, cancel_futures=True)
            self.pool = None
