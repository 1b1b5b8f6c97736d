"""One sweep point: the design with its overrides, evaluated and flattened into a record.

:func:`run_point` runs in worker processes (local pool or Dask workers), so it and everything it
is given must be picklable. It never raises for an ordinary exception: a design that does not
validate (for example hole radius >= half the pitch) or a failing solver gives a record with
``status = "failed"`` and a one-line ``error``. ``KeyboardInterrupt`` and ``SystemExit`` are not
caught: they stop the sweep.

A record is a plain dict::

    point_id      12 hex digits, hash of the overrides (sweep_spec.point_id)
    overrides     {path: value in SI or a name}, including analysis.accuracy
    status        "ok" | "failed" | "collapsed" (bias at or above pull-in; outputs that do not
                  depend on the bias point are present)
    error         one line, "" unless failed
    cause         failed points only: "input" | "environment" | "error" (:mod:`diagap.sweep.faults`;
                  environment failures are computed again when the sweep is resumed)
    wall_time_s   time spent on the point in the worker
    outputs       {flattened summary key: number, bool or None}
    uncertainty   {flattened summary key: estimated relative discretisation error}
    summary       the full summary dict (ok/collapsed only; kept in OUT/points/<id>.json)

Flattening keeps every numeric scalar of every summary section (``"mechanics.
center_compliance_m_per_pa"``), whatever sections exist; a short list of numbers
(``natural_frequencies_hz``) gives element-wise keys ``..._1``, ``..._2``; nested lists
(curves) and texts are left to the full summary. Non-finite numbers become None.
"""
from __future__ import annotations

import math
import numbers
import os
import socket
import time
import traceback
from dataclasses import dataclass
from typing import Any, Callable

from diagap.design import Design, DesignError, parse_design
from diagap.writer import json_ready

__all__ = ["PointTask", "PointOutput", "pipeline_point", "run_point", "apply_overrides",
           "flatten_summary", "failed_record", "MAX_LIST"]

MAX_LIST = 8  # longest list of numbers that is flattened element-wise
_NOT_OUTPUTS = ("schema_version", "design", "timings_s", "uncertainty")


@dataclass(frozen=True)
class PointOutput:
    """What an evaluate function returns: the nested summary dict and the collapse flag."""

    summary: dict
    collapsed: bool = False


@dataclass(frozen=True)
class PointTask:
    """Everything a worker needs for one point (picklable)."""

    point_id: str
    base: Design
    overrides: tuple  # ((path, value), ...)
    evaluate: Callable[[Design], Any]
    mesh_cache: bool | None = None  # set the worker's mesh cache on/off; None: leave as is


def pipeline_point(design: Design) -> PointOutput:
    """The default point function: the analysis pipeline, :func:`diagap.pipeline.run_design`."""
    from diagap.pipeline import run_design

    result = run_design(design)
    return PointOutput(result.summary(), bool(result.collapsed))


def apply_overrides(design: Design, overrides) -> Design:
    """``design`` with every ``(section.key, value)`` of ``overrides`` set, validated once.

    All overrides are applied before validation, so a combination that is only valid as a whole
    (a larger hole radius together with a larger pitch) is accepted.
    """
    raw = design.raw_dict()
    for path, value in overrides:
        section, key = path.split(".")
        raw.setdefault(section, {})[key] = value
    return parse_design(raw, "sweep point")


def _normalise(out) -> PointOutput:
    if isinstance(out, PointOutput):
        return out
    if hasattr(out, "summary") and callable(out.summary):  # a pipeline RunResult
        return PointOutput(out.summary(), bool(getattr(out, "collapsed", False)))
    if isinstance(out, dict):
        return PointOutput(out, False)
    raise TypeError(f"evaluate returned {type(out).__name__}; expected a summary dict, "
                    f"a PointOutput or a RunResult")


def _number(v):
    if isinstance(v, bool):
        return v
    x = float(v)
    return x if math.isfinite(x) else None


def _is_number(v) -> bool:
    return isinstance(v, numbers.Real)  # bool and numpy floats included


def _flatten(prefix: str, value, out: dict) -> None:
    if isinstance(value, dict):
        for k, v in value.items():
            _flatten(f"{prefix}.{k}" if prefix else str(k), v, out)
    elif value is None:
        out[prefix] = None
    elif _is_number(value):
        out[prefix] = _number(value)
    elif isinstance(value, (list, tuple)) and 0 < len(value) <= MAX_LIST \
            and all(_is_number(v) and not isinstance(v, bool) for v in value):
        for i, v in enumerate(value, start=1):
            out[f"{prefix}_{i}"] = _number(v)
    # texts, nested lists (curves) and long lists stay in the full summary only


def flatten_summary(summary: dict) -> tuple[dict, dict]:
    """(outputs, uncertainty) of a nested summary dict, both flat ``{dotted key: value}``."""
    outputs: dict[str, Any] = {}
    for name, section in summary.items():
        if name not in _NOT_OUTPUTS:
            _flatten(str(name), section, outputs)
    uncertainty: dict[str, Any] = {}
    _flatten("", summary.get("uncertainty") or {}, uncertainty)
    return outputs, uncertainty


def _base_record(task: PointTask) -> dict:
    return {"point_id": task.point_id, "overrides": dict(task.overrides), "status": "failed",
            "error": "", "wall_time_s": None, "outputs": {}, "uncertainty": {},
            "host": socket.gethostname(), "pid": os.getpid()}


def failed_record(task: PointTask, error: str, wall_time_s: float | None = None,
                  trace: str = "", cause: str = "error") -> dict:
    """A record of a point that could not be computed (``cause``: :mod:`diagap.sweep.faults`)."""
    rec = _base_record(task)
    rec.update(error=" ".join(str(error).split()) or "failed", cause=cause,
               wall_time_s=None if wall_time_s is None else round(wall_time_s, 6))
    if trace:
        rec["traceback"] = trace[-4000:]
    return rec


def _error_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return f"{type(exc).__name__}: {text[0] if text else ''}".rstrip(": ")


def _set_cache(flag: bool | None) -> None:
    if flag is None:
        return
    from diagap.meshes.cache import enabled, set_enabled

    if enabled() != flag:
        set_enabled(flag)


def run_point(task: PointTask) -> dict:
    """Build, evaluate and flatten one point; any ``Exception`` gives a failed record."""
    t0 = time.perf_counter()
    try:
        _set_cache(task.mesh_cache)
        design = apply_overrides(task.base, task.overrides)
        out = _normalise(task.evaluate(design))
        summary = json_ready(out.summary)
        outputs, uncertainty = flatten_summary(summary)
    except DesignError as exc:
        return failed_record(task, _error_line(exc), time.perf_counter() - t0, cause="input")
    except Exception as exc:  # noqa: BLE001 - any failure of one point is recorded, not raised
        from diagap.sweep.faults import exception_cause

        return failed_record(task, _error_line(exc), time.perf_counter() - t0,
                             traceback.format_exc(), exception_cause(exc))
    rec = _base_record(task)
    rec.update(status="collapsed" if out.collapsed else "ok",
               wall_time_s=round(time.perf_counter() - t0, 6),
               outputs=outputs, uncertainty=uncertainty, summary=summary)
    if rec["wall_time_s"] > 0.2:  # a finite-element run, not a table look-up
        from diagap.sweep.exec import release_memory

        release_memory()
    return rec
