"""Why a sweep point failed, which failed points a resumed sweep computes again, the exit status.

Every failed record carries a ``cause``:

``input``
    The design or a solver refused the point: :class:`diagap.design.DesignError` and the solvers'
    input errors (``ValueError`` subclasses defined in diagap). Recorded; a resumed sweep does not
    compute it again (the same input fails the same way).
``environment``
    The machine, not the design: ``OSError`` (disk full, read-only folder, a vanished file),
    ``MemoryError``, an unreadable file, a worker process that died (killed, out of memory) or a
    lost Dask worker. A resumed sweep computes these points again.
``error``
    Any other exception (a solver that did not converge, an internal error). Recorded and not
    computed again unless asked (``--retry-failed``).

Records written before causes were recorded are classified from their error text.

A sweep in which every point failed does not succeed: :func:`sweep_exit_status` gives 2 when all
failures are input errors and 1 otherwise.
"""
from __future__ import annotations

import builtins
import zipfile
import zlib

__all__ = ["exception_cause", "record_cause", "retry_on_resume", "sweep_exit_status",
           "INPUT", "ENVIRONMENT", "ERROR"]

INPUT, ENVIRONMENT, ERROR = "input", "environment", "error"
_ENVIRONMENT_TYPES = (OSError, MemoryError, EOFError, zipfile.BadZipFile, zlib.error)
_ENVIRONMENT_NAMES = {"BadZipFile", "KilledWorker", "BrokenProcessPool"}
_WORKER_DIED = ("worker process ended unexpectedly", "worker died")


def exception_cause(exc: BaseException) -> str:
    """The cause of a point's exception: ``input``, ``environment`` or ``error``."""
    if isinstance(exc, _ENVIRONMENT_TYPES):
        return ENVIRONMENT
    if isinstance(exc, ValueError) and type(exc).__module__.split(".")[0] == "diagap":
        return INPUT
    return ERROR


def _cause_from_text(error: str) -> str:
    name = error.split(":", 1)[0].strip()
    if any(text in error for text in _WORKER_DIED):
        return ENVIRONMENT
    kind = getattr(builtins, name, None)
    if isinstance(kind, type) and issubclass(kind, (OSError, MemoryError, EOFError)):
        return ENVIRONMENT
    if name in _ENVIRONMENT_NAMES:
        return ENVIRONMENT
    if name == "DesignError" or name.endswith("InputError"):
        return INPUT
    return ERROR


def record_cause(record: dict) -> str | None:
    """The cause of a failed record (None for a point that did not fail)."""
    if record.get("status") != "failed":
        return None
    cause = record.get("cause")
    if cause in (INPUT, ENVIRONMENT, ERROR):
        return cause
    return _cause_from_text(str(record.get("error", "")))


def retry_on_resume(record: dict, retry_failed: bool = False) -> bool:
    """Whether a resumed sweep computes this finished point again."""
    cause = record_cause(record)
    return cause is not None and (retry_failed or cause == ENVIRONMENT)


def sweep_exit_status(records) -> int:
    """0 unless every point failed: then 2 if all failures are input errors, else 1."""
    records = list(records)
    if not records or any(r.get("status") != "failed" for r in records):
        return 0
    return 2 if all(record_cause(r) == INPUT for r in records) else 1
