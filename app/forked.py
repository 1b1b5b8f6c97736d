"""A call run on the machine's second core: a forked child process, or here when it cannot be.

A single run has stages that do not need each other's results (the diaphragm's large deflection
at bias needs only the electrostatic table, not the coupled bias point, the squeeze film or the
response), and the report's plots can be drawn on two processes. :class:`ForkedCall` runs such a
call in a child made with ``fork`` (the child inherits everything already imported and computed:
nothing is pickled on the way in) and returns its result through a pipe (pickled on the way
out). The parent may send the child inputs it computes later (:meth:`ForkedCall.send`); the
child reads them, in order, with the ``receive`` callable it is given.

The child runs the same code on the same inputs, so its result is the same as the inline call's
to the last bit. When a child cannot be used the call runs in this process when its result is
asked for (:meth:`ForkedCall.result`), with the inputs sent so far: on one core, without
``fork``, inside a worker process (a sweep's or a study's: those already keep the cores busy), or
when the child fails in any way (it is then run again here, so a failure of the child costs
time, never results).

The child takes the default action on SIGTERM, SIGHUP and SIGINT: cleaning up a run's output
folder on a signal is the parent's business.
"""
from __future__ import annotations

import os
from typing import Any, Callable

__all__ = ["ForkedCall", "can_fork", "ENABLED"]

#: use a forked child where :func:`can_fork` allows (False: every call runs inline)
ENABLED = True
#: longest wait (s) for a child's result before the call is run here instead
TIMEOUT_S = 600.0


def can_fork() -> bool:
    """True when a forked child can run on another core: ``fork`` exists, the machine has two
    cores or more, and this process is not itself a worker of a process pool or a daemon."""
    import multiprocessing as mp

    if not ENABLED or (os.cpu_count() or 1) < 2 or "fork" not in mp.get_all_start_methods():
        return False
    proc = mp.current_process()
    return not proc.daemon and mp.parent_process() is None


def _child(conn, func, args, kwargs) -> None:
    import signal

    for name in ("SIGTERM", "SIGHUP", "SIGINT"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_DFL)

    def receive():
        return conn.recv()
    try:
        conn.send(("ok", func(*args, receive=receive, **kwargs)))
    except BaseException:  # noqa: BLE001 - the parent runs the call itself
        try:
            conn.send(("failed", None))
        except Exception:  # noqa: BLE001
            pass
    finally:
        conn.close()


class ForkedCall:
    """``func(*args, receive=..., **kwargs)`` on a forked child, or inline at :meth:`result`.

    ``func`` must accept a keyword ``receive``: a callable returning, in order, the objects the
    parent passes to :meth:`send`. Its return value must be picklable.

    Parameters
    ----------
    func : callable
    *args, **kwargs : its arguments
    fork : bool, optional
        False: always inline; None (default): :func:`can_fork`.
    """

    def __init__(self, func: Callable, *args, fork: bool | None = None, **kwargs):
        self.func, self.args, self.kwargs = func, args, kwargs
        self._sent: list = []
        self._conn = self._proc = None
        self.forked = False
        if fork is False or (fork is None and not can_fork()):
            return
        import multiprocessing as mp

        try:
            ctx = mp.get_context("fork")
            mine, theirs = ctx.Pipe(duplex=True)
        except (ValueError, OSError):  # no fork on this platform, or no pipe: run inline
            return
        try:
            proc = ctx.Process(target=_child, args=(theirs, func, args, kwargs), daemon=True)
            proc.start()
        except Exception:  # noqa: BLE001 - no child: run inline
            mine.close()
            theirs.close()
            return
        theirs.close()
        self._conn, self._proc, self.forked = mine, proc, True

    def send(self, obj: Any) -> None:
        """Pass ``obj`` to the call (its next ``receive()``)."""
        self._sent.append(obj)
        if self._conn is not None:
            try:
                self._conn.send(obj)
            except (OSError, EOFError):  # the child is gone: result() runs the call here
                self._close()

    def _inline(self):
        queue = iter(list(self._sent))

        def receive():
            try:
                return next(queue)
            except StopIteration:
                raise RuntimeError("the call asked for an input that was never sent") from None
        return self.func(*self.args, receive=receive, **self.kwargs)

    def _close(self) -> None:
        if self._proc is not None:
            if self._proc.is_alive():
                self._proc.terminate()
            self._proc.join()
        if self._conn is not None:
            self._conn.close()
        self._conn = self._proc = None

    def result(self, timeout_s: float = TIMEOUT_S):
        """The call's return value (from the child if it delivered, else computed here)."""
        got = None
        if self._conn is not None:
            try:
                if self._conn.poll(timeout_s):
                    got = self._conn.recv()
            except (EOFError, OSError):
                got = None
            finally:
                self._close()
        if isinstance(got, tuple) and len(got) == 2 and got[0] == "ok":
            return got[1]
        return self._inline()

    def busy(self) -> bool:
        """True while a forked child is still working (its result not yet sent)."""
        if self._conn is None:
            return False
        try:
            return not self._conn.poll(0)
        except (EOFError, OSError):
            return False

    def cancel(self) -> None:
        """Stop the child (if any) without waiting for its result."""
        self._close()
