"""Drift over the operating temperatures: stress, sensitivity, resonance, pull-in and noise at each
temperature of ``[analysis] temperatures``.

At temperature T the diaphragm carries the residual stress of the expansion mismatch with its
substrate (:mod:`diagap.thermal_model`, :mod:`diagap.lumped.thermal`),

    σ(T) = σ0 − E/(1 − ν)·(α_f − α_s)·(T − T0),

and the air in the gap and the back volume is at T (viscosity, mean free path, density and sound
speed from :mod:`diagap.fem.air`; the static pressure is the design's). Everything else is the
design as given: the geometry is that of the reference temperature and E, ν, ρ are taken
constant. Neglected thereby: the thermal strains of size and gap, |α ΔT| up to ~2e-3 over
−40…+85 °C for the metal presets and ~4e-4 for silicon films (they shift the capacitance and the
mass per area by that fraction, while the stress change they cause is kept), and the temperature
dependence of E (~−6e-5 1/K for silicon [from memory]).

Per temperature (a point):

* σ(T) at or beyond the critical compressive stress σ_cr = N_cr/h (flat plate under uniform
  biaxial compression; Timoshenko & Gere, *Theory of Elastic Stability*, via
  :mod:`diagap.lumped.buckling`): the point is ``buckled``; the flat diaphragm is no longer a
  stable equilibrium and nothing else is computed (null values, with the reason).
* else: the plate (FE, :func:`diagap.fem.plate.solver.solve_plate`), the device capacitance on
  its static shape, the coupled bias point and pull-in, and -- when the design has [electrical]
  and [acoustics] and the bias point is stable -- the squeeze film at T, the lumped model and its
  response and noise (:mod:`diagap.stages`). A collapsed bias point (bias at or above pull-in at
  that temperature) keeps the pull-in voltage and nulls the rest, with the reason.

Reused from the run at the operating temperature: the unit-cell capacitance density c(g) and the
rim fringing, which depend on the geometry only (meshes are cached on disk anyway). Left out for
the points: the large-deflection stage, the distributed reference solve and the report. The
error estimates of a point are the FE discretisation errors propagated to the lumped figures
(:func:`diagap.stages._response_uncertainty`); the single-mode reduction error measured by the
distributed solve at the operating temperature applies to the points as well.

The points run one after another. Each is a few seconds of sparse factorisations at draft
accuracy (about 3 s on an idle core for the demo geometry); a two-worker process pool measured
slower than the serial loop on a shared two-core machine (82.7 s against 63.4 s for four points,
``tests/bench/bench_temperature.py``): its workers start fresh, import the FE stack and rebuild
the c(g) table, and compete with the rest of the machine, so it is not used.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field, replace

from diagap.design import Design
from diagap.lumped.thermal import buckles, critical_stress_pa

__all__ = ["TemperaturePoint", "TemperatureSweep", "temperature_sweep", "design_at",
           "point_designs", "critical_stress_of"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class TemperaturePoint:
    """Results at one temperature (SI; None where not computed, ``note`` says why)."""

    temperature_k: float
    residual_stress_pa: float
    buckled: bool
    sensitivity_db_v_per_pa: float | None = None
    resonance_hz: float | None = None
    pull_in_voltage_v: float | None = None
    noise_dba_spl: float | None = None
    natural_frequency_hz: float | None = None  # mode 1 in vacuum, no bias
    collapsed: bool | None = None  # None: no bias point computed
    note: str = ""
    uncertainty: dict = field(default_factory=dict)  # relative errors of the FE-based figures

    def to_summary(self) -> dict:
        out = {"temperature_k": self.temperature_k, "residual_stress_pa": self.residual_stress_pa,
               "sensitivity_db_v_per_pa": self.sensitivity_db_v_per_pa,
               "resonance_hz": self.resonance_hz, "pull_in_voltage_v": self.pull_in_voltage_v,
               "noise_dba_spl": self.noise_dba_spl, "buckled": self.buckled,
               "natural_frequency_hz": self.natural_frequency_hz, "collapsed": self.collapsed,
               "uncertainty": dict(self.uncertainty)}
        if self.note:
            out["note"] = self.note
        return out


@dataclass(frozen=True)
class TemperatureSweep:
    """The points in ascending temperature and the critical (buckling) stress (Pa, magnitude)."""

    points: tuple
    critical_stress_pa: float
    uncertainty: dict = field(default_factory=dict)  # per point, inside each entry

    def to_summary(self) -> list:
        return [p.to_summary() for p in self.points]


def critical_stress_of(design: Design) -> float:
    """σ_cr of the design's diaphragm (Pa, magnitude of the compressive stress)."""
    d = design.diaphragm
    return critical_stress_pa(d.shape, d.edge, d.size_m, d.thickness_m, d.youngs_modulus_pa,
                              d.poisson_ratio)


def design_at(design: Design, temperature_k: float) -> Design:
    """The design at ``temperature_k``: stress σ(T), air at T, no temperature list or
    large-deflection pressures of its own."""
    sigma = design.thermal.stress_pa(temperature_k)
    a = design.acoustics
    return replace(design, diaphragm=replace(design.diaphragm, residual_stress_pa=sigma),
                   acoustics=None if a is None else replace(a, temperature_k=temperature_k),
                   analysis=replace(design.analysis, temperatures_k=(), static_pressures_pa=()))


def point_designs(design: Design) -> list[Design]:
    """The designs of the points that are not buckled (for the run-size check)."""
    if design.thermal is None:
        return []
    s_cr = critical_stress_of(design)
    return [design_at(design, t) for t in design.analysis.temperatures_k
            if not buckles(design.thermal.stress_pa(t), s_cr)]


def _fe_uncertainty(sections: dict) -> dict:
    out = {}
    for name, sec in sections.items():
        for key, val in getattr(sec, "uncertainty", {}).items():
            out[f"{name}.{key}"] = float(val)
    return out


def _bias_point(design: Design, es_ref, t: float, sigma: float) -> TemperaturePoint:
    from diagap.extract import plate_problem
    from diagap.fem.plate.solver import solve_plate
    from diagap.stages import (coupled_stage, damping_stage, electrostatics_stage, lumped_model,
                               response_stage)

    acc = design.analysis.accuracy
    problem = plate_problem(design)
    mech = solve_plate(problem, accuracy=acc)
    es = electrostatics_stage(design, mech, es_ref.objects["density"] if es_ref else None,
                              es_ref.objects["rim"] if es_ref else None)
    cp = coupled_stage(design, problem, es, mech)
    res = cp.objects["coupled"]
    base = dict(temperature_k=t, residual_stress_pa=sigma, buckled=False,
                pull_in_voltage_v=res.pull_in_voltage_v,
                natural_frequency_hz=float(mech.natural_frequencies_hz[0]))
    unc = {k: v for k, v in (("pull_in_voltage_v", cp.uncertainty.get("pull_in_voltage_v")),
                             ("natural_frequency_hz",
                              mech.uncertainty.get("natural_frequencies_hz"))) if v is not None}
    if design.electrical is None:
        return TemperaturePoint(**base, uncertainty=unc, note="no [electrical] section: no bias "
                                "point; pull-in and the natural frequency only")
    if res.collapsed:
        return TemperaturePoint(**base, collapsed=True, uncertainty=unc, note=(
            f"collapsed: the bias {design.electrical.bias_voltage_v:g} V is at or above the "
            f"pull-in voltage {res.pull_in_voltage_v:.4g} V at this temperature; no response"))
    if design.acoustics is None:
        return TemperaturePoint(**base, collapsed=False, uncertainty=unc, note="no [acoustics] "
                                "section: no lumped response or noise")
    damp = damping_stage(design, mech, res.resonance_at_bias_hz or base["natural_frequency_hz"])
    model = lumped_model(design, mech, es, cp, damp)
    rs = response_stage(model, _fe_uncertainty({"mechanics": mech, "electrostatics": es,
                                                "coupled": cp, "damping": damp}))
    data = rs.data
    unc.update({"sensitivity_v_per_pa": rs.uncertainty["sensitivity_v_per_pa"],
                "noise_dba_spl": rs.uncertainty["sensitivity_v_per_pa"],
                "resonance_hz": rs.uncertainty["resonance_hz"]})
    note = "" if data["resonance_hz"] is not None else \
        "the lumped model has no resonance peak (overdamped)"
    return TemperaturePoint(**base, collapsed=False, uncertainty=unc, note=note,
                            sensitivity_db_v_per_pa=data["sensitivity_db_v_per_pa"],
                            resonance_hz=data["resonance_hz"], noise_dba_spl=data["noise_dba_spl"])


def temperature_sweep(design: Design, es_ref=None) -> TemperatureSweep:
    """Evaluate the design at each of its ``analysis.temperatures_k`` (ascending).

    Parameters
    ----------
    design : Design
        With a thermal model (``design.thermal``; any thermal datum or a temperature list).
    es_ref : Section, optional
        The electrostatics section of the run at the operating temperature: its c(g) table and
        rim fringing are reused (same geometry).

    Returns
    -------
    TemperatureSweep
    """
    if design.thermal is None:
        raise ValueError("temperature_sweep: the design has no thermal model")
    from diagap.fem.plate.vonkarman import NewtonError

    s_cr = critical_stress_of(design)
    points = []
    for t in sorted(design.analysis.temperatures_k):
        sigma = design.thermal.stress_pa(t)
        if buckles(sigma, s_cr):
            points.append(TemperaturePoint(t, sigma, True, note=(
                f"buckled: the thermal stress {sigma:.4g} Pa is at or beyond the critical "
                f"compressive stress -{s_cr:.4g} Pa; the flat diaphragm is not a stable "
                f"equilibrium, so nothing else is computed")))
            continue
        log.info("temperature %.2f K: stress %.4g Pa ...", t, sigma)
        try:
            points.append(_bias_point(design_at(design, t), es_ref, t, sigma))
        except (ValueError, NewtonError) as exc:  # a solver refused this point: say why
            log.warning("temperature %.2f K not computed: %s", t, exc)
            points.append(TemperaturePoint(t, sigma, False, note=f"not computed: {exc}"))
    return TemperatureSweep(tuple(points), s_cr)
