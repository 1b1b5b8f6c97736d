"""Tables of the whole summary over a box of design values around one design.

A study (tolerances, optimisation, fitting) varies a few design values of one design within
bounds. The summary outputs of the full analysis — mechanics, electrostatics, coupled, damping
and response, computed by exactly the stages and in the order of
:func:`diagap.pipeline.run_design` — are tabulated over those values with
:func:`diagap.fastpath.nested.build_nested_table` (positive values on log axes, one
Chebyshev–Lobatto segment per axis raised to the next nested level where a held-out point is off
by more than the tolerance, random held-out validation points at the end) and cached on disk.
Every table point is one full FE analysis, so the table's error is measured against the full FE
itself; the large-deflection section and the audit are not tabulated, nor (unless asked) the
distributed reference of the response.
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass, fields
from functools import partial

import numpy as np

from diagap.design import Design, with_overrides

__all__ = ["StudyBox", "study_table", "design_value", "pipeline_outputs", "SECTIONS",
           "DRIVING_OUTPUTS"]

#: summary sections the study tables hold
SECTIONS = ("mechanics", "electrostatics", "coupled", "damping", "response")
#: the outputs whose held-out errors refine a study table built without a study's own keys
#: (what studies commonly constrain and optimise); every other output is reported where it
#: meets the tolerance and left out otherwise
DRIVING_OUTPUTS = (
    "response.sensitivity_db_v_per_pa", "response.sensitivity_v_per_pa",
    "response.noise_dba_spl", "response.snr_db", "response.resonance_hz",
    "coupled.pull_in_voltage_v", "coupled.bias_margin", "coupled.bias_center_deflection_m",
    "coupled.resonance_at_bias_hz", "electrostatics.rest_capacitance_f",
    "electrostatics.capacitance_slope_f_per_m", "mechanics.natural_frequencies_hz_1",
    "mechanics.center_compliance_m_per_pa", "damping.damping_n_s_per_m",
)
_SIZE_KEYS = {"radius": "size_m", "side": "size_m", "electrode_radius": "electrode_size_m",
              "electrode_side": "electrode_size_m"}


def design_value(design: Design, path: str) -> float:
    """The SI value of design key ``path`` (``"section.key"`` as in a design file)."""
    from diagap.fastpath import FastPathUnavailable

    section, _, key = path.partition(".")
    obj = getattr(design, section, None)
    if obj is None or not key:
        raise FastPathUnavailable(f"{path}: not a numeric design value of this design")
    name = _SIZE_KEYS.get(key)
    if name is None:
        name = next((f.name for f in fields(obj)
                     if f.name == key or f.name.startswith(key + "_")), None)
    value = getattr(obj, name, None) if name else None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise FastPathUnavailable(f"{path}: not a numeric design value of this design")
    return float(value)


@dataclass(frozen=True)
class StudyBox:
    """One design and the bounds (SI) of the design values a study varies.

    Parameters
    ----------
    design : Design
        The nominal design; every value not in ``ranges`` is held at its value.
    ranges : tuple of (path, low, high)
        Design keys (``"diaphragm.thickness"``) and their SI bounds, low < high.
    """

    design: Design
    ranges: tuple

    def __post_init__(self):
        from diagap.fastpath import FastPathUnavailable

        for path, lo, hi in self.ranges:
            design_value(self.design, path)
            if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
                raise FastPathUnavailable(f"{path}: bounds ({lo!r}, {hi!r}) must be finite with "
                                          "low < high")

    @property
    def paths(self) -> tuple:
        return tuple(p for p, _, _ in self.ranges)

    def key(self) -> dict:
        d = self.design.to_dict()
        return {"design": json.dumps(d, sort_keys=True, default=str),
                "ranges": [[p, float(lo), float(hi)] for p, lo, hi in self.ranges]}

    def at(self, x) -> Design:
        """The nominal design with the varied values set to ``x`` (SI)."""
        return with_overrides(self.design, {p: float(v) for p, v in zip(self.paths, x)})


def _sections(design: Design, reference: bool = True) -> dict:
    """The summary sections of :func:`diagap.pipeline.run_design` up to the response (without
    the distributed reference of the response for ``reference=False``)."""
    from diagap.extract import plate_problem
    from diagap.fem.plate.solver import solve_plate
    from diagap.pipeline import RunResult, _skipped, response_step
    from diagap.stages import coupled_stage, damping_stage, electrostatics_stage

    result = RunResult(design)
    acc = design.analysis.accuracy
    problem = plate_problem(design)
    mech = result.sections["mechanics"] = solve_plate(problem, accuracy=acc)
    es = result.sections["electrostatics"] = electrostatics_stage(design, mech)
    cp = result.sections["coupled"] = coupled_stage(design, problem, es, mech)
    coupled = cp.objects["coupled"]
    result.collapsed = design.electrical is not None and bool(coupled.collapsed)
    f_res = (coupled.resonance_at_bias_hz if design.electrical is not None else None) or \
        mech.natural_frequencies_hz[0]
    damp = result.sections["damping"] = damping_stage(design, mech, f_res)
    result.skipped = _skipped(design, result.collapsed)
    if "response" not in result.skipped:
        response_step(result, design, mech, es, cp, damp, reference=reference)
    return result.summary()


def pipeline_outputs(design: Design, reference: bool = True) -> dict:
    """Flat numeric outputs (``section.key``, lists as ``key_1, key_2, …``) of the full FE
    analysis of ``design``, sections :data:`SECTIONS`, without mesh sizes and flags (and
    without :data:`diagap.response_stage.DISTRIBUTED_OUTPUTS` for ``reference=False``)."""
    from diagap.sweep.point import flatten_summary

    flat, _ = flatten_summary(_sections(design, reference))
    return {k: v for k, v in flat.items()
            if k.split(".", 1)[0] in SECTIONS and "_dofs" not in k
            and not isinstance(v, bool) and v is not None}


def _box_point(box: StudyBox, x, reference: bool = True) -> dict:
    return pipeline_outputs(box.at(x), reference)


def _axis(path: str, lo: float, hi: float, n: int):
    from diagap.fastpath.grid import Axis

    if lo > 0:
        return Axis(path, True, (math.log(lo), math.log(hi)), n)
    return Axis(path, False, (float(lo), float(hi)), n)


def study_table(box: StudyBox, *, tol: float = 1e-3, nodes: int = 3, max_nodes: int = 9,
                validate: int = 6, distributed: bool = False, drive=(), mapper=None):
    """The table of the summary outputs over ``box`` (cached; built on demand).

    Built by nested Chebyshev–Lobatto levels (:func:`diagap.fastpath.nested.
    build_nested_table`): one segment per axis, positive values on log axes.

    Parameters
    ----------
    box : StudyBox
    tol : float
        Allowed error at held-out points (relative; 0.01 dB per 1e-3 for decibel levels).
    nodes : int
        Chebyshev–Lobatto nodes per axis to start with (2^l + 1: 2, 3, 5, 9).
    max_nodes : int
        Most nodes per axis.
    validate : int
        Random held-out points checked at the end.
    distributed : bool
        Also tabulate the outputs of the distributed reference of the response
        (:data:`diagap.response_stage.DISTRIBUTED_OUTPUTS`; a fifth of the cost of a point).
    drive : sequence of str
        The outputs whose held-out errors refine the table (a study's own keys: what it
        reports, constrains or optimises); empty: :data:`DRIVING_OUTPUTS`. Every other output
        is reported where it meets the tolerance at the held-out points and left out otherwise.
    mapper : callable, optional
        :func:`diagap.fastpath.refine.mapper_for` (local processes or a Dask client).

    Returns
    -------
    (TensorTable, dict)
        The table and its build facts (reference points, uncertified outputs, nodes per axis).
    """
    from diagap.fastpath.nested import build_nested_table
    from diagap.fastpath.refine import mapper_for
    from diagap.fastpath.store import held_table

    driving = sorted(set(drive) or set(DRIVING_OUTPUTS))

    def build():
        axes = [_axis(p, lo, hi, nodes) for p, lo, hi in box.ranges]
        return build_nested_table(partial(_box_point, box, reference=bool(distributed)), axes,
                                  tol=tol, max_nodes=max_nodes, mapper=mapper or mapper_for(),
                                  validate=validate, drive=set(driving).__contains__)

    params = dict(box.key(), drive=driving, tol=tol, nodes=nodes,
                  max_nodes=max_nodes, validate=validate, distributed=bool(distributed),
                  scheme="nested")
    return held_table("fastpath-study", params, build)


def box_coordinates(box: StudyBox, design: Design) -> np.ndarray:
    """The varied values of ``design`` (SI), after checking that it differs from the box's
    design only in them."""
    from diagap.fastpath import FastPathUnavailable

    x = np.array([design_value(design, p) for p in box.paths])
    nominal = box.design.to_dict()
    same = with_overrides(design, {p: design_value(box.design, p) for p in box.paths})
    mine = same.to_dict()
    for d in (nominal, mine):
        d.pop("name", None)
        d.pop("description", None)
    if mine != nominal:
        diff = sorted(f"{s}.{k}" for s in nominal if isinstance(nominal[s], dict)
                      for k in nominal[s] if (mine.get(s) or {}).get(k) != nominal[s][k])
        raise FastPathUnavailable(
            f"the design differs from the tabulated one outside the varied values "
            f"({', '.join(box.paths)}): {', '.join(diff) or 'sections present'}")
    return x
