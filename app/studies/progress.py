"""Progress of a study that evaluates its points in batches (optimisation, fit), on stderr.

An optimisation or a fit does not know in advance how many points it will evaluate: each step
asks for a batch (a value and its finite-difference neighbours) and the next batch depends on
the result. The display therefore reports where the search is (``start 2/3, iteration 4``), the
points of the current batch, the evaluations so far (computed now and replayed from
``OUT/evaluations.jsonl``) and the best value found so far.

On a terminal one line is redrawn in place::

    optimise start 2/3, iteration 4 [####....] 3/7 | 45 computed, 7 replayed | best feasible
    response.snr_db = 61.2 | 0:42

Elsewhere (a log file, a batch job) it writes one line per finished batch. Nothing goes to
stdout.
"""
from __future__ import annotations

import sys
import time
from typing import TextIO

from diagap.sweep.progress import _clock

__all__ = ["StudyProgress"]


class _Batch:
    """The sink of one batch of a :class:`StudyProgress` (``update(record)``, ``close()``)."""

    def __init__(self, owner: "StudyProgress", total: int):
        self.owner, self.total, self.done = owner, total, 0

    def update(self, record: dict) -> None:
        self.done += 1
        if record.get("status") not in ("ok", "collapsed"):
            self.owner.failed += 1
        if self.owner.tty:
            self.owner._draw(self)

    def close(self) -> None:
        pass


class StudyProgress:
    """Progress of batches of study points, drawn on ``stream`` (default ``sys.stderr``).

    The :class:`diagap.studies.runner.StudyRunner` given this object as ``progress`` calls
    :meth:`batch` for each batch it computes and :meth:`batch_done` after every batch (also one
    replayed entirely from the log); the search sets :attr:`where` and :attr:`best`.
    """

    def __init__(self, label: str, stream: TextIO | None = None, width: int = 16):
        self.label, self.width = label, width
        self.stream = stream if stream is not None else sys.stderr
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.where = ""       # e.g. "start 2/3, iteration 4"
        self.best = ""        # e.g. "best feasible response.snr_db = 61.2"
        self.computed = self.replayed = self.failed = 0
        self.t0 = time.perf_counter()
        self._drawn = False

    def _status(self) -> str:
        failed = f", {self.failed} failed" if self.failed else ""
        best = f" | {self.best}" if self.best else ""
        return (f"{self.computed} computed, {self.replayed} replayed{failed}{best} | "
                f"{_clock(time.perf_counter() - self.t0)}")

    def _head(self) -> str:
        return f"{self.label} {self.where}".rstrip()

    def _draw(self, batch: _Batch | None) -> None:
        if batch is not None and batch.total:
            fill = int(round(batch.done / batch.total * self.width))
            bar = f" [{'#' * fill}{'.' * (self.width - fill)}] {batch.done}/{batch.total}"
        else:
            bar = ""
        self.stream.write(f"\r{self._head()}{bar} | {self._status()}\033[K")
        self.stream.flush()
        self._drawn = True

    def batch(self, total: int) -> _Batch:
        """A sink for the ``total`` points of a batch to compute."""
        b = _Batch(self, total)
        if self.tty:
            self._draw(b)
        return b

    def batch_done(self, computed: int, replayed: int) -> None:
        """Count a finished batch: ``computed`` points evaluated now, ``replayed`` from the log."""
        self.computed += computed
        self.replayed += replayed
        if self.tty:
            self._draw(None)
            return
        self.stream.write(f"{self._head()}: {computed + replayed} points | {self._status()}\n")
        self.stream.flush()

    def note(self, text: str) -> None:
        """A line of its own (e.g. the verification step)."""
        self.close()
        self.stream.write(f"{self.label}: {text}\n")
        self.stream.flush()

    def close(self) -> None:
        if self.tty and self._drawn:
            self.stream.write("\n")
            self.stream.flush()
        self._drawn = False
