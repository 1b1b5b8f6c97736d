"""Where sweep points run: in this process, in a local process pool, or on a Dask cluster.

Each runner calls ``emit(record)`` in this process as each point finishes; only this process
writes files. Ordinary exceptions of a point are already records (:func:`run_point`);
``KeyboardInterrupt`` and ``SystemExit`` stop the sweep, and the runners stop their workers.

Local pool: worker processes are started with ``spawn`` (safe with the threads of BLAS and gmsh),
ignore SIGINT (the parent stops them) and pin BLAS to one thread each. They die with their parent,
even when it is killed with SIGKILL: on Linux the kernel sends them SIGKILL when the parent ends
(``prctl(PR_SET_PDEATHSIG)``); elsewhere a watchdog thread ends a worker whose parent process id
changes. At most one point per worker is in flight. When a worker process dies (a crash in native
code, the out-of-memory killer), the points it may have been running are retried one at a time; a
point whose worker dies again alone is recorded as failed, with the cause ``environment`` (it is
computed again when the sweep is resumed, :mod:`diagap.sweep.faults`).

Dask: ``dask`` and ``distributed`` are the optional extra ``diagap[cluster]``, imported only
here. Workers need diagap installed; start them with one thread each (``--nthreads 1``) for
finite-element work. A point whose worker dies repeatedly (``KilledWorker``) is recorded as
failed; any other error of the cluster stops the sweep (finished points are kept).
"""
from __future__ import annotations

import logging
import os
import time
import uuid
from collections import deque
from typing import Callable, Iterable

from diagap.sweep.faults import ENVIRONMENT
from diagap.sweep.point import PointTask, failed_record, run_point
from diagap.sweep.spec import SweepError

__all__ = ["run_serial", "run_pool", "run_dask", "connect", "available_cores"]

log = logging.getLogger(__name__)
Emit = Callable[[dict], None]
_CRASH = ("the worker process ended unexpectedly while computing this point (it was retried "
          "alone and ended again)")
_PR_SET_PDEATHSIG = 1  # linux/prctl.h
_WATCH_S = 0.5


def available_cores() -> int:
    """The number of cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def run_serial(tasks: Iterable[PointTask], emit: Emit) -> None:
    """Run the points one after the other in this process."""
    for task in tasks:
        emit(run_point(task))


def _die_with_parent(parent_pid: int | None) -> None:
    """End this worker process when the process ``parent_pid`` that started it ends."""
    import signal
    import sys

    if parent_pid is None:
        return
    armed = False
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            armed = libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0) == 0
        except (OSError, AttributeError):  # pragma: no cover - no prctl in this libc
            armed = False
    if os.getppid() != parent_pid:  # the parent ended before the signal was armed
        os._exit(1)
    if not armed:
        import threading

        def watch():
            while os.getppid() == parent_pid:
                time.sleep(_WATCH_S)
            os._exit(1)

        threading.Thread(target=watch, name="diagap-parent-watchdog", daemon=True).start()


def _init_worker(parent_pid: int | None = None) -> None:
    import signal

    _die_with_parent(parent_pid)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")
    try:
        from threadpoolctl import threadpool_limits

        threadpool_limits(1)
    except ImportError:  # pragma: no cover - threadpoolctl is a dependency
        pass


def release_memory() -> None:
    """Give freed heap memory back to the system (glibc ``malloc_trim``; nothing elsewhere).

    A worker that runs many designs of different geometry (new meshes, matrices and
    factorisations each time) otherwise keeps growing: the freed blocks stay in glibc's arenas,
    fragmented, and the resident size of a study-table worker was seen to rise by about 70 MB
    per design until the system killed it; trimming after each design keeps it near 0.5 GB.
    """
    import ctypes
    import ctypes.util

    global _TRIM
    if _TRIM is None:
        try:
            _TRIM = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6").malloc_trim
        except (OSError, AttributeError):  # not glibc
            _TRIM = False
    if _TRIM:
        _TRIM(0)


_TRIM = None


def _stop(pool) -> None:
    """Stop a process pool at once (interrupt): cancel queued points, end the workers."""
    pool.shutdown(wait=False, cancel_futures=True)
    terminate = getattr(pool, "terminate_workers", None)  # Python >= 3.14
    if terminate is not None:
        terminate()
        return
    for proc in list((getattr(pool, "_processes", None) or {}).values()):
        proc.terminate()


class _PoolRun:
    """State of a local pool run across pool restarts after a worker died."""

    def __init__(self, tasks: Iterable[PointTask], workers: int, emit: Emit):
        self.queue = deque(tasks)
        self.workers = workers
        self.emit = emit
        self.crashes: dict[str, int] = {}

    def _suspect(self, task: PointTask) -> bool:
        return self.crashes.get(task.point_id, 0) > 0

    def _fill(self, pool, running: dict) -> None:
        """Submit points up to one per worker; a point under suspicion runs alone."""
        while self.queue and len(running) < self.workers:
            if any(self._suspect(t) for t in running.values()):
                return
            task = self.queue[0]
            if self._suspect(task) and running:
                return
            running[pool.submit(run_point, task)] = task
            self.queue.popleft()

    def _crashed(self, task: PointTask) -> None:
        self.crashes[task.point_id] = self.crashes.get(task.point_id, 0) + 1
        if self.crashes[task.point_id] >= 2:
            self.emit(failed_record(task, _CRASH, cause=ENVIRONMENT))
        else:
            self.queue.appendleft(task)

    def _collect(self, futures, running: dict) -> bool:
        """Emit the finished points; True if the pool broke."""
        from concurrent.futures.process import BrokenProcessPool

        broken = False
        for fut in futures:
            task = running.pop(fut)
            try:
                record = fut.result()
            except BrokenProcessPool:
                broken = True
                self._crashed(task)
                continue
            except Exception as exc:  # noqa: BLE001 - e.g. the point could not be pickled
                raise SweepError(f"could not run a point in a worker process: {_line(exc)}"
                                 ) from None
            self.emit(record)
        return broken

    def round(self) -> None:
        """Run points in a fresh pool until all are done or a worker dies."""
        import multiprocessing
        from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
        from concurrent.futures.process import BrokenProcessPool

        pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"),
                                   initializer=_init_worker, initargs=(os.getpid(),))
        running: dict = {}
        try:
            while self.queue or running:
                try:
                    self._fill(pool, running)
                    broken = False
                except BrokenProcessPool:
                    broken = True
                done, _ = wait(running, return_when=FIRST_COMPLETED)
                if self._collect(done, running) or broken:
                    done, _ = wait(running)
                    self._collect(done, running)
                    log.warning("a sweep worker process died; restarting the pool")
                    return
        except BaseException:
            _stop(pool)
            raise
        finally:
            pool.shutdown(wait=True, cancel_futures=True)


def run_pool(tasks: Iterable[PointTask], workers: int, emit: Emit) -> None:
    """Run the points in a local pool of ``workers`` processes."""
    run = _PoolRun(tasks, workers, emit)
    while run.queue:
        run.round()


def _distributed():
    try:
        import distributed
    except ImportError:
        raise SweepError("--scheduler needs dask and distributed (install the optional extra: "
                         "pip install 'diagap[cluster]')") from None
    return distributed


def _line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return f"{type(exc).__name__}: {text[0] if text else ''}".rstrip(": ")


def connect(scheduler, timeout_s: float = 15.0):
    """A Dask client for ``scheduler`` (an address, or a ``distributed.Client`` used as is).

    Returns ``(client, owned)``; ``owned`` tells whether the caller must close the client.
    """
    distributed = _distributed()
    if isinstance(scheduler, distributed.Client):
        return scheduler, False
    if not isinstance(scheduler, str) or not scheduler.strip():
        raise SweepError(f"--scheduler {scheduler!r}: expected an address such as "
                         f"tcp://10.0.0.5:8786")
    try:  # a malformed address fails inside the Client, whose clean-up then hangs for 30 s
        from distributed.comm.addressing import parse_address, parse_host_port

        protocol, location = parse_address(scheduler.strip())
        if protocol in ("tcp", "tls"):
            parse_host_port(location)
    except Exception as exc:  # noqa: BLE001 - any parse failure is one line for the user
        raise SweepError(f"--scheduler {scheduler!r}: not an address ({_line(exc)}); expected "
                         f"one such as tcp://10.0.0.5:8786") from None
    try:
        client = distributed.Client(scheduler.strip(), timeout=f"{timeout_s}s",
                                    set_as_default=False)
    except Exception as exc:  # noqa: BLE001 - any connection failure is one line for the user
        raise SweepError(f"--scheduler {scheduler!r}: cannot connect ({_line(exc)})") from None
    return client, True


def run_dask(tasks: Iterable[PointTask], client, emit: Emit) -> None:
    """Run the points on the Dask cluster of ``client``."""
    distributed = _distributed()
    token = uuid.uuid4().hex[:8]
    futures = {client.submit(run_point, t, key=f"diagap-point-{t.point_id}-{token}", pure=False):
               t for t in tasks}
    try:
        for fut in distributed.as_completed(list(futures), loop=client.loop):
            task = futures[fut]
            try:
                record = fut.result()
            except distributed.KilledWorker as exc:
                record = failed_record(task, f"a Dask worker died while computing this point "
                                             f"({_line(exc)})", cause=ENVIRONMENT)
            except Exception as exc:  # noqa: BLE001 - the cluster, not the point, failed
                raise SweepError(f"a Dask worker could not run a point: {_line(exc)} (is diagap "
                                 f"installed on the workers?)") from None
            emit(record)
            fut.release()
    finally:
        pending = [f for f in futures if not f.done()]
        if pending:
            client.cancel(pending)
