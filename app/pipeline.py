"""The analysis pipeline: a validated design in, every computed section out.

design ─► mechanics (fem.plate) ─► electrostatics (fem.field) ─► coupled (fem.coupling)
       ─► damping (fem.film) ─► lumped model, response, noise, distortion, with the
       distributed reference (fem.response) ─► large deflection (fem.plate.large_deflection)
       ─► audit

Each stage returns a frozen result object that knows its summary section. A section that is not
computed is absent from the summary, never filled with placeholders; the summary's ``skipped``
entry says which were left out and why (a design without [acoustics] or [electrical], a collapsed
bias point).

Before any mesh is made the size of the run is estimated (:mod:`diagap.budget`) and a run above
the memory limit is refused with a :class:`~diagap.design.DesignError`.
"""
from __future__ import annotations

import logging
import time
from dataclasses import dataclass, field
from typing import Any

from diagap.design import Design
from diagap.extract import plate_problem, response_inputs
from diagap.scope import response_scope

__all__ = ["RunResult", "run_design", "SCHEMA_VERSION"]

SCHEMA_VERSION = "0.1"
log = logging.getLogger(__name__)


@dataclass
class RunResult:
    """Everything computed for one design, as objects and as the summary dictionary.

    Returned by :func:`run_design`. The solver results are frozen objects with SI attributes and
    an ``uncertainty`` dictionary (relative discretisation error per quantity); a section that was
    not computed (e.g. the response of a collapsed design) is ``None``.

    Attributes
    ----------
    design : Design
        The design that was run.
    sections : dict
        Summary-section name → result object with ``to_summary()`` (``"mechanics"``,
        ``"electrostatics"``, ``"coupled"``, ``"damping"``, ``"response"``, ``"audit"``).
    timings_s : dict
        Wall time of each stage (s).
    collapsed : bool
        True when the bias voltage is at or above pull-in.

    Examples
    --------
    >>> from diagap import demo_design, run_design
    >>> result = run_design(demo_design().with_accuracy("draft"))   # doctest: +SKIP
    >>> result.mechanics.natural_frequencies_hz[0]                  # doctest: +SKIP
    >>> result.summary()["response"]["sensitivity_db_v_per_pa"]     # doctest: +SKIP
    """

    design: Design
    sections: dict[str, Any] = field(default_factory=dict)  # name -> result with to_summary()
    timings_s: dict[str, float] = field(default_factory=dict)
    collapsed: bool = False
    skipped: dict[str, str] = field(default_factory=dict)  # section -> why it was not computed

    def summary(self) -> dict:
        """The summary.json dictionary: schema version, design, every section, uncertainties
        (``"section.key"`` → relative error) and timings (s)."""
        out: dict[str, Any] = {"schema_version": SCHEMA_VERSION, "design": self.design.to_dict()}
        if self.skipped:
            out["skipped"] = dict(self.skipped)
        uncertainty: dict[str, float] = {}
        for name, res in self.sections.items():
            out[name] = res.to_summary()
            for key, val in getattr(res, "uncertainty", {}).items():
                uncertainty[f"{name}.{key}"] = float(val)
        out["uncertainty"] = uncertainty
        out["timings_s"] = {k: round(v, 3) for k, v in self.timings_s.items()}
        return out

    def _object(self, section: str, key: str):
        sec = self.sections.get(section)
        return None if sec is None else getattr(sec, "objects", {}).get(key)

    @property
    def mechanics(self):
        """:class:`diagap.fem.plate.solver.PlateResult`: centre and volume compliance (m/Pa,
        m³/Pa), natural frequencies (Hz), mode-1 effective mass (kg), stiffness (N/m) and area
        (m²), without bias."""
        return self.sections.get("mechanics")

    @property
    def capacitance(self):
        """:class:`diagap.fem.field.device.DeviceCapacitance`: rest capacitance C0 (F), slope
        dC/dx (F/m), the C(x) samples, rim fringing and perforation factor."""
        return self._object("electrostatics", "device")

    @property
    def coupling(self):
        """:class:`diagap.fem.coupling.plate.CoupledResult`: pull-in voltage (V), bias deflection
        (m), softened resonance (Hz) and compliance at bias (m/Pa)."""
        return self._object("coupled", "coupled")

    @property
    def squeeze_film(self):
        """:class:`diagap.fem.film.result.SqueezeResult`: film damping (N·s/m) and film stiffness
        (N/m) versus frequency, cut-off frequency (Hz), hole resistance."""
        return self._object("damping", "squeeze")

    @property
    def lumped_model(self):
        """:class:`diagap.lumped.model.LumpedModel` built from the FE results (None when
        collapsed)."""
        return self._object("response", "model")

    @property
    def response(self):
        """:class:`diagap.lumped.response.ResponseResult`: sensitivity (V/Pa), corners and
        resonance (Hz), Q, and the complex response ``.response`` (None when collapsed)."""
        return self._object("response", "response")

    @property
    def distortion(self):
        """:class:`diagap.lumped.distortion.DistortionResult`: THD versus SPL (None when
        collapsed)."""
        return self._object("response", "distortion")

    @property
    def audit(self):
        """:class:`diagap.audit.Audit`: the assumption audit, ``.rows`` of
        :class:`diagap.audit.AuditRow` (assumption, simple and FE values, deviation, verdict)."""
        return self.sections.get("audit")


def _stage(result: RunResult, name: str, func, *args, **kw):
    t0 = time.perf_counter()
    log.info("computing %s ...", name)
    value = func(*args, **kw)
    result.timings_s[name] = time.perf_counter() - t0
    result.sections[name] = value
    return value


#: why a section is left out, by cause
SKIP_REASONS = {
    "no_acoustics": "no [acoustics] section (back volume, vent): the lumped model needs it",
    "no_electrical": "no [electrical] section (bias voltage, bias resistor): needs a bias point",
    "collapsed": "the bias is at or above pull-in: there is no stable bias point",
    "compliant_backplate": "the distributed reference assumes a rigid backplate",
}


def _skipped(design: Design, collapsed: bool) -> dict[str, str]:
    out = {}
    if design.electrical is None:
        out["coupled.bias_point"] = SKIP_REASONS["no_electrical"]
    if design.acoustics is None:
        out["response"] = SKIP_REASONS["no_acoustics"]
    elif design.electrical is None:
        out["response"] = SKIP_REASONS["no_electrical"]
    elif collapsed:
        out["response"] = SKIP_REASONS["collapsed"]
    return out


def run_design(design: Design, max_memory_b: float | None = None,
               parallel: bool | None = None, on_wait=None) -> RunResult:
    """Run every stage of the analysis for ``design``.

    Parameters
    ----------
    design : Design
        From :func:`diagap.load_design`, :func:`diagap.parse_design` or
        :func:`diagap.demo_design`, possibly changed with :func:`diagap.with_overrides`; its
        ``analysis.accuracy`` chooses the meshes (``design.with_accuracy("draft")`` for speed).

    Returns
    -------
    RunResult
        The results as objects and :meth:`RunResult.summary` (write them with
        :func:`diagap.write_outputs`).

    Raises
    ------
    ValueError
        Input outside a solver's range (each solver has its own ``ValueError`` subclass).

    Notes
    -----
    A bias at or above pull-in marks the run ``collapsed``: the sections that do not depend on the
    bias point (mechanics, electrostatics, damping) are kept, the coupled section reports the
    pull-in voltage with ``collapsed = true``, and the lumped response and audit rows that need a
    bias point are left out. A design without [electrical] gets the pull-in voltage but no bias
    point; without [acoustics] the damping uses air at 20 degC and 101.325 kPa and the lumped
    response is left out. ``max_memory_b`` (default: the design's ``analysis.max_memory``, else
    :data:`diagap.budget.DEFAULT_MAX_MEMORY_B`) bounds the estimated peak memory.

    The large deflection runs partly on a forked child process (the second core) while the
    coupled, damping and response stages run here (:mod:`diagap.overload_lanes`): ``parallel``
    False keeps it in this process, None (default) forks where :func:`diagap.forked.can_fork`
    allows (not inside a sweep's or a study's worker processes). The results are the same to
    the last bit either way; ``timings_s["large_deflection"]`` is then the time this process
    spent on it after the response (its share and the wait for the child). ``on_wait(result,
    busy)``: called at most once, when this process would otherwise wait for the child, with
    the result so far (mechanics through response; the response section is final only after
    the large deflection) and ``busy()`` telling whether the child is still working: e.g. to
    draw plots meanwhile (:func:`diagap.report.outputs.draw_early`).
    """
    from diagap.fem.plate.solver import solve_plate

    from diagap.audit import audit_design
    from diagap.budget import check_run_size
    from diagap.overload_lanes import LargeDeflectionLanes
    from diagap.packaged import packaged_section
    from diagap.stages import electrostatics_stage

    check_run_size(design, max_memory_b)
    from diagap.thermal import point_designs, temperature_sweep

    for point in point_designs(design):  # σ(T) changes the plate model and its meshes
        check_run_size(point, max_memory_b)
    result = RunResult(design)
    acc = design.analysis.accuracy
    problem = plate_problem(design)
    mech = _stage(result, "mechanics", solve_plate, problem, accuracy=acc)
    if design.backplate.plate is not None:  # compliant backplate: its plate joins mechanics
        from diagap.backplate import solve_backplate_mechanics

        t0 = time.perf_counter()
        mech = result.sections["mechanics"] = solve_backplate_mechanics(design, mech)
        result.timings_s["mechanics"] += time.perf_counter() - t0
    es = _stage(result, "electrostatics", electrostatics_stage, design, mech)
    _share_coupling_plates(design, problem)
    # the large deflection needs only the electrostatic table: on the second core meanwhile
    lane = LargeDeflectionLanes(design, problem, es, parallel)
    try:
        _middle_stages(result, design, problem, es, mech, lane, on_wait)
    except BaseException:
        lane.cancel()
        raise
    if "response" in result.sections:  # overload point, dynamic range, scope (diagap.packaged)
        result.sections["response"] = packaged_section(
            design, result.sections["response"], result.sections.get("large_deflection"))
    sections = {k: v.to_summary() for k, v in result.sections.items()}
    _stage(result, "audit", audit_design, design, sections)
    if design.thermal is not None and design.analysis.temperatures_k:
        _stage(result, "temperature_sweep", temperature_sweep, design, es)
    return result


def _timed_wait(result: RunResult, on_wait, busy) -> None:
    t0 = time.perf_counter()
    try:
        on_wait(result, busy)
    finally:
        result.timings_s["while_waiting"] = time.perf_counter() - t0


def response_step(result: RunResult, design: Design, mech, es, cp, damp, *,
                  reference: bool = True) -> None:
    """The response stage of ``result`` from the sections before it: the lumped model, the
    distributed reference (none for a compliant backplate: the reference has a rigid one; none
    with ``reference=False``, for study tables that need none of
    :data:`diagap.response_stage.DISTRIBUTED_OUTPUTS`), the readout and the response scope.
    Every caller that stops after the response (the full run,
    :func:`diagap.evaluate.exact_summary`, the study tables) runs this one step."""
    from diagap.stages import lumped_model, response_stage

    model = lumped_model(design, mech, es, cp, damp)
    dist = None
    if design.backplate.plate is not None:  # the distributed reference has a rigid backplate
        result.skipped["response.distributed"] = SKIP_REASONS["compliant_backplate"]
    elif reference:
        dist = response_inputs(design, es.objects["density"], es.objects["rim"],
                               damp.objects["air"])
    _stage(result, "response", response_stage, model, result.summary()["uncertainty"],
           dist, design.analysis.accuracy, readout=design.readout, scope=response_scope(design))


def _share_coupling_plates(design: Design, problem) -> None:
    """Assemble the plate systems of the coupling meshes now, before the second process starts:
    the coupled stage (here) and the biased large deflection (there) both use them, and the
    process-wide memo (:mod:`diagap.fem.plate.shared`) hands both the same systems."""
    from diagap.fem.coupling.plate import COUPLING_MESHES, plate_levels

    acc = design.analysis.accuracy
    plate_levels(problem, COUPLING_MESHES.get(acc, acc), design.backplate.electrode_size_m)


def _middle_stages(result: RunResult, design: Design, problem, es, mech, lane,
                   on_wait=None) -> None:
    """Coupled, damping and response here, then the large deflection from ``lane``."""
    from diagap.fem.plate.vonkarman import NewtonError

    from diagap.stages import coupled_stage, damping_stage

    cp = _stage(result, "coupled", coupled_stage, design, problem, es, mech)
    coupled = cp.objects["coupled"]
    result.collapsed = design.electrical is not None and bool(coupled.collapsed)
    f_res = (coupled.resonance_at_bias_hz if design.electrical is not None else None) or \
        mech.natural_frequencies_hz[0]
    damp = _stage(result, "damping", damping_stage, design, mech, f_res)
    result.skipped = _skipped(design, result.collapsed)
    if "response" not in result.skipped:
        response_step(result, design, mech, es, cp, damp)
    resp = result.sections["response"].to_summary() if "response" in result.sections else None
    try:
        _stage(result, "large_deflection", lane.section, resp,
               not (result.collapsed or design.electrical is None),
               None if on_wait is None else (lambda busy: _timed_wait(result, on_wait, busy)))
        result.timings_s["large_deflection"] -= result.timings_s.get("while_waiting", 0.0)
    except NewtonError as exc:  # the section is then absent, the rest of the run stands
        log.warning("large deflection not computed: %s", exc)
