"""A small text progress bar for sweeps (no dependency).

On a terminal the bar is redrawn in place::

    sweep [##########..........]  8/16  50%  1 failed  0:42 elapsed, ~0:42 left

Elsewhere (a log file, a batch job) it writes one line per finished point.
"""
from __future__ import annotations

import sys
import time
from typing import Callable, TextIO

from diagap.sweep.spec import SweepError

__all__ = ["ProgressBar", "make_progress"]


def _clock(seconds: float) -> str:
    s = int(round(seconds))
    h, rem = divmod(s, 3600)
    m, s = divmod(rem, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m}:{s:02d}"


class ProgressBar:
    """Progress of ``total`` points, drawn on ``stream`` (default ``sys.stderr``)."""

    def __init__(self, total: int, stream: TextIO | None = None, label: str = "sweep",
                 width: int = 24):
        self.total = total
        self.stream = stream if stream is not None else sys.stderr
        self.label = label
        self.width = width
        self.done = 0
        self.counts: dict[str, int] = {}
        self.t0 = time.perf_counter()
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        if self.tty and total:
            self._draw()

    def _text(self) -> str:
        frac = self.done / self.total if self.total else 1.0
        fill = int(round(frac * self.width))
        elapsed = time.perf_counter() - self.t0
        extra = "".join(f"  {n} {s}" for s, n in sorted(self.counts.items()) if s != "ok")
        left = f", ~{_clock(elapsed / self.done * (self.total - self.done))} left" \
            if self.done and self.done < self.total else ""
        bar = "#" * fill + "." * (self.width - fill)
        count = f"{self.done:>{len(str(self.total))}}/{self.total}"
        return f"{self.label} [{bar}] {count} {frac:4.0%}{extra}  {_clock(elapsed)} elapsed{left}"

    def _draw(self) -> None:
        self.stream.write("\r" + self._text() + "\033[K")
        self.stream.flush()

    def update(self, record: dict) -> None:
        """Count one finished point (a sweep record)."""
        self.done += 1
        status = record.get("status", "?")
        self.counts[status] = self.counts.get(status, 0) + 1
        if self.tty:
            self._draw()
            return
        t = record.get("wall_time_s")
        took = f" in {t:.1f} s" if isinstance(t, (int, float)) else ""
        err = f": {record['error']}" if record.get("error") else ""
        self.stream.write(f"{self.label} {self.done}/{self.total} point {record.get('point_id')} "
                          f"{status}{took}{err}\n")
        self.stream.flush()

    def close(self) -> None:
        if self.tty and self.total:
            self.stream.write("\n")
            self.stream.flush()


class _Callback:
    def __init__(self, func: Callable[[int, int, dict], None], total: int):
        self.func, self.total, self.done = func, total, 0

    def update(self, record: dict) -> None:
        self.done += 1
        self.func(self.done, self.total, record)

    def close(self) -> None:
        pass


class _Silent:
    def update(self, record: dict) -> None:
        pass

    def close(self) -> None:
        pass


def make_progress(progress, total: int):
    """A progress sink: False/None → silent, True → :class:`ProgressBar` on stderr,
    a callable ``f(done, total, record)`` → called for each finished point."""
    if progress is None or progress is False:
        return _Silent()
    if progress is True:
        return ProgressBar(total)
    if callable(progress):
        return _Callback(progress, total)
    raise SweepError(f"progress = {progress!r}: expected True, False or a callable")
