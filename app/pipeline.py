"""The analysis pipeline: a validated design in, every computed section out.

design ─► mechanics (fem.plate) ─► electrostatics (fem.capacitance) ─► coupled (fem.coupled)
       ─► damping (fem.squeeze) ─► lumped model, response, noise, distortion
       ─► large deflection (fem.plate.large_deflection) ─► audit

Each stage returns a frozen result object that knows its summary section. A section that is not
computed is absent from the summary, never filled with placeholders.
"""
from __future__ import annotations

import logging
import time
from dataclasses import dataclass, field
from typing import Any

from diagap.design import Design
from diagap.extract import plate_problem

__all__ = ["RunResult", "run_design", "SCHEMA_VERSION"]

SCHEMA_VERSION = "0.1"
log = logging.getLogger(__name__)


@dataclass
class RunResult:
    """Everything computed for one design; ``summary()`` is the summary.json dictionary."""

    design: Design
    sections: dict[str, Any] = field(default_factory=dict)  # name -> result with to_summary()
    timings_s: dict[str, float] = field(default_factory=dict)
    collapsed: bool = False

    def summary(self) -> dict:
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION, "design": self.design.to_dict()}
        uncertainty: dict[str, float] = {}
        for name, res in self.sections.items():
            out[name] = res.to_summary()
            for key, val in getattr(res, "uncertainty", {}).items():
                uncertainty[f"{name}.{key}"] = float(val)
        out["uncertainty"] = uncertainty
        out["timings_s"] = {k: round(v, 3) for k, v in self.timings_s.items()}
        return out


def _stage(result: RunResult, name: str, func, *args, **kw):
    t0 = time.perf_counter()
    log.info("computing %s ...", name)
    value = func(*args, **kw)
    result.timings_s[name] = time.perf_counter() - t0
    result.sections[name] = value
    return value


def run_design(design: Design) -> RunResult:
    """Run every stage of the analysis for ``design``.

    A bias at or above pull-in marks the run ``collapsed``: the sections that do not depend on the
    bias point (mechanics, electrostatics, damping) are kept, the coupled section reports the
    pull-in voltage with ``collapsed = true``, and the lumped response and audit rows that need a
    bias point are left out.
    """
    from diagap.fem.plate.solver import solve_plate
    from diagap.fem.plate.vonkarman import NewtonError

    from diagap.audit import audit_design
    from diagap.stages import (coupled_stage, damping_stage, electrostatics_stage,
                               large_deflection_stage, lumped_model, response_stage)

    result = RunResult(design)
    acc = design.analysis.accuracy
    problem = plate_problem(design)
    mech = _stage(result, "mechanics", solve_plate, problem, accuracy=acc)
    es = _stage(result, "electrostatics", electrostatics_stage, design, mech)
    cp = _stage(result, "coupled", coupled_stage, design, problem, es, mech)
    result.collapsed = bool(cp.objects["coupled"].collapsed)
    f_res = cp.objects["coupled"].resonance_at_bias_hz or mech.natural_frequencies_hz[0]
    damp = _stage(result, "damping", damping_stage, design, mech, f_res)
    if not result.collapsed:
        model = lumped_model(design, mech, es, cp, damp)
        _stage(result, "response", response_stage, model, result.summary()["uncertainty"])
    resp = result.sections["response"].to_summary() if "response" in result.sections else None
    try:
        _stage(result, "large_deflection", large_deflection_stage, design, problem, es, resp,
               result.collapsed)
    except NewtonError as exc:  # the section is then absent, the rest of the run stands
        log.warning("large deflection not computed: %s", exc)
    sections = {k: v.to_summary() for k, v in result.sections.items()}
    _stage(result, "audit", audit_design, design, sections)
    return result
