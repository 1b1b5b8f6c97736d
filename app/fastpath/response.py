r"""The ``response`` section of a clamped circular diaphragm from the fast mechanics,
electrostatics, coupled and damping outputs: the stage's own lumped model, built from fast pieces.

The response stage (:func:`diagap.stages.lumped_model`, :func:`diagap.stages.response_stage`)
reduces the capsule to one degree of freedom on the static shape φ_s (1 at the centre):

==========================================  ===================================================
lumped value                                fast source
==========================================  ===================================================
k, m, A (static shape)                      ``mechanics.static_shape_{stiffness,mass,area}``
x_b (bias centre deflection)                ``coupled.bias_center_deflection_m``
C(x) on φ_s; C0 = C(x_b), C'(x_b)           the device of the scaled cell and rim tables
                                            (:func:`diagap.fastpath.field.field_objects`)
k_e = ½V²C''(x_b)                           :func:`diagap.stages.electrostatic_spring` on that
                                            device, over :func:`diagap.stages._curve_points`
b (low frequency)                           ``damping.damping_n_s_per_m``
b(f), k(f) of the film on φ_s               the radial P2 film
                                            (:mod:`diagap.fastpath.filmspectrum`)
                                            with the hole resistance of the Stokes cell table
                                            of the design's accuracy (the damping stage's
                                            hole resistance, which the stage's film takes)
air, package, bias circuit                  closed forms (as the stage)
==========================================  ===================================================

φ_s is the closed form of the clamped disk (:func:`diagap.fastpath.field.static_shape`) times the
plate FE's departure from it (:mod:`diagap.fastpath.shape`, the correction the damping fast path
uses). The model then goes through the stage's own code (:func:`diagap.stages.response_stage`
without the distributed reference and without curves, then
:func:`diagap.packaged.packaged_section` without the large deflection), so every response
figure, noise source, distortion level and readout level is the stage's function of those
inputs. Without curves the distortion scan solves only the levels its 1 % / 10 % crossings and
its stopping level need (``curve=False`` of :func:`diagap.lumped.distortion.distortion_vs_spl`:
the same crossings to its 1e-4 dB, the same stopping level and reason).

Left out (not flat numbers of this path): the distributed FE reference and what depends on it
(``distributed_*``, ``reduction_error_*``, ``lumped_peak_*``); the overload point when the
harmonic balance does not reach 10 % THD (``capsule_aop_db_spl``, ``aop_db_spl``,
``dynamic_range_db`` then need the large-deflection section); the error estimates; lists and
curves (``input_noise_density_pa_per_rthz``, ``thd_vs_spl``) and texts, as sweeps flatten them
(:func:`diagap.sweep.point.flatten_summary`).

Covered: what the electrostatics and damping fast paths cover (clamped circles, rigid backplate,
no dielectric layers or electret), with ``[electrical]`` and ``[acoustics]`` sections and a bias
below pull-in. Otherwise :class:`~diagap.fastpath.FastPathUnavailable` (one line: field, value,
allowed).

Measured (tests/bench/bench_fastpath_response.py, the demo, examples/packaged.toml and a solid
backplate, "draft" and "normal", the pipeline's own device and inputs fed in): every output
within 4.3e-4 dB (levels) and 3.8e-4 relative (the peak frequency of the solid backplate) of the
pipeline; the film table within 5e-5 of the stage's two-dimensional film (whose own
discretisation error that is). With the device of the "draft" cell and rim tables instead
(those designs and four random clamped circles): sensitivity within 0.0024 dB, noise and SNR
within 0.0015 dB, every other output within 0.0035 dB or 3.9e-4 relative. Since the stage's
lumped film moved to a finer mesh (:data:`diagap.stages.LUMPED_FILM_MIN_DOFS`), every output of the
whole fast summary is within 1e-3 of the pipeline on 50 random designs at draft
(tests/bench/bench_fastpath_all.py). Time per design with a response (one idle core of two,
profile of 50 designs): the model ≈ 12 ms (the radial film ≈ 4 ms of it), then the stage's own
lumped code ≈ 25 ms, ≈ 14 ms of it the distortion scan without curves (11 harmonic-balance
solves on the demo).

CAUTION: bias voltages can be hazardous; results are design estimates, as for the full run.
"""
from __future__ import annotations

import numpy as np

from diagap.fastpath import FastPathUnavailable

__all__ = ["response_outputs", "covered_response_outputs", "fast_lumped_model", "model_outputs",
           "NEEDED"]

#: flat outputs the response needs from the other sections
NEEDED = ("mechanics.static_shape_stiffness_n_per_m", "mechanics.static_shape_mass_kg",
          "mechanics.static_shape_area_m2", "coupled.bias_center_deflection_m",
          "damping.damping_n_s_per_m")
#: outputs of the packaged section that need the large deflection when the harmonic balance
#: does not reach 10 % THD
_OVERLOAD = ("capsule_aop_db_spl", "aop_db_spl", "dynamic_range_db")


def _check(design, outputs: dict) -> None:
    if design.electrical is None:
        raise FastPathUnavailable("electrical: the response needs a bias (allowed: an "
                                  "[electrical] section)")
    if design.acoustics is None:
        raise FastPathUnavailable("acoustics: the response needs a back volume and vent "
                                  "(allowed: an [acoustics] section)")
    if outputs.get("coupled.collapsed"):
        raise FastPathUnavailable("electrical.bias_voltage: at or above pull-in (allowed: below "
                                  "coupled.pull_in_voltage_v)")
    for key in NEEDED:
        if outputs.get(key) is None:
            raise FastPathUnavailable(f"{key}: needed by the response (allowed: the fast "
                                      "mechanics, coupled and damping outputs)")


def fast_lumped_model(design, outputs: dict, device, shape,
                      hole_resistance_pa_s_per_m3: float | None):
    """The stage's :class:`~diagap.lumped.model.LumpedModel` from flat outputs, a device C(x)
    and the static shape.

    Parameters
    ----------
    design : Design
        A covered design (module docstring).
    outputs : dict
        Flat outputs with :data:`NEEDED` (and the hole resistance of a perforated backplate).
    device : DeviceCapacitance
        C(x) on the static shape (centre displacement in m).
    shape : callable
        φ_s(u), u = r/a (1 at the centre), vectorised.
    hole_resistance_pa_s_per_m3 : float or None
        Flow resistance per hole of the film (the stage's: the Stokes cell at the design's
        accuracy, as in the damping stage); None without holes.

    Returns
    -------
    (LumpedModel, float)
        The model and the film table's estimated relative discretisation error.
    """
    from diagap.dielectrics import effective_bias_v
    from diagap.extract import film_coefficients
    from diagap.fem.air import air_properties
    from diagap.lumped.model import FilmTable, LumpedModel
    from diagap.readout_design import bias_leg_resistance_ohm
    from diagap.stages import (Section, _curve_points, _package, _piston_radius, _rim_points,
                               electrode_quadrature, electrostatic_spring)

    from diagap.fastpath.film import SPECTRUM_HZ, _tension_ratio
    from diagap.fastpath.filmspectrum import film_spectrum

    d, b, e, ac = design.diaphragm, design.backplate, design.electrical, design.acoustics
    a = d.size_m
    x, y, _ = electrode_quadrature(design)
    phi_max = float(np.max(shape(np.hypot(x, y) / a)))
    phi_rim = float(np.mean(shape(np.hypot(*_rim_points(design)) / a)))
    es = Section({}, {}, {"device": device, "phi_max": phi_max, "phi_rim": phi_rim})
    x_b = float(outputs["coupled.bias_center_deflection_m"])
    k_e = electrostatic_spring(design, es, x_b)
    xs = _curve_points(design, es)
    air = air_properties(*design.air_conditions)
    coef = film_coefficients(design, air, hole_resistance_pa_s_per_m3)
    L = b.electrode_size_m
    f = np.asarray(SPECTRUM_HZ, float)
    damp, stiff, err = film_spectrum(coef, L, shape, L / a, f, _tension_ratio(design))
    film = FilmTable(tuple(f.tolist()), tuple(damp.tolist()), tuple(stiff.tolist()))
    model = LumpedModel(
        stiffness_n_per_m=float(outputs["mechanics.static_shape_stiffness_n_per_m"]),
        electrostatic_stiffness_n_per_m=k_e,
        mass_kg=float(outputs["mechanics.static_shape_mass_kg"]),
        area_m2=float(outputs["mechanics.static_shape_area_m2"]),
        damping_n_s_per_m=float(outputs["damping.damping_n_s_per_m"]),
        back_volume_m3=ac.back_volume_m3,
        vent_resistance_pa_s_per_m3=ac.vent_resistance_pa_s_per_m3,
        rest_capacitance_f=float(device(x_b)), capacitance_slope_f_per_m=float(device.slope(x_b)),
        bias_resistance_ohm=bias_leg_resistance_ohm(design),
        bias_voltage_v=effective_bias_v(design), gap_m=b.gap_m,
        parasitic_capacitance_f=e.parasitic_capacitance_f,
        preamp_input_capacitance_f=e.preamp_input_capacitance_f,
        capacitance_curve=tuple(zip(xs.tolist(), np.asarray(device(xs), float).tolist())),
        film_damping=film, bias_displacement_m=x_b, air_density_kg_m3=air.density_kg_per_m3,
        sound_speed_m_s=air.speed_of_sound_m_per_s, static_pressure_pa=ac.static_pressure_pa,
        gamma=air.heat_capacity_ratio, temperature_k=ac.temperature_k,
        radiation_radius_m=_piston_radius(design), package=_package(design, air))
    return model, float(np.max(err))


def model_outputs(design, model) -> dict[str, float]:
    """Flat numeric ``response.*`` outputs of the stage's response code for ``model`` (module
    docstring: what is left out)."""
    from diagap.packaged import packaged_section
    from diagap.scope import response_scope
    from diagap.stages import response_stage
    from diagap.sweep.point import flatten_summary

    section = response_stage(model, None, None, design.analysis.accuracy,
                             readout=design.readout, scope=response_scope(design), curves=False)
    data = packaged_section(design, section, None).data
    drop = _OVERLOAD if data.get("aop_10pct_spl_db") is None else ()
    flat, _ = flatten_summary({"response": {k: v for k, v in data.items() if k not in drop}})
    return {k: float(v) for k, v in flat.items()
            if v is not None and not isinstance(v, bool)}


def _shape(design, tau: float, mapper):
    from diagap.fastpath.field import static_shape
    from diagap.fastpath.film import _correction

    corr = _correction(design, tau, mapper)

    def shape(u):
        u = np.asarray(u, float)
        return static_shape(u, tau) * (1.0 + corr(u))

    return shape


def _hole_resistance(design, mapper) -> float | None:
    """Per-hole resistance of the stage's film: the Stokes cell table of the design's accuracy
    (the damping stage's own hole resistance, which the stage's film takes)."""
    from diagap.fem.air import air_properties

    from diagap.fastpath.film import _cell

    if design.backplate.hole_lattice == "none":
        return None
    air = air_properties(*design.air_conditions)
    return _cell(design, air, mapper)["resistance_per_hole_pa_s_per_m3"]


def response_outputs(design, outputs: dict, mapper=None) -> dict[str, float]:
    """The ``response`` outputs of ``design`` from the fast tables and the other sections.

    Parameters
    ----------
    design : Design
        A clamped circular diaphragm with ``[electrical]`` and ``[acoustics]`` (module
        docstring); its ``analysis.accuracy`` selects the tables.
    outputs : dict
        Flat outputs of the mechanics, coupled and damping sections (:data:`NEEDED`).
    mapper : callable, optional
        How table points are computed if a table is built
        (:func:`diagap.fastpath.refine.mapper_for`; :func:`diagap.fastpath.read_only`: never).

    Returns
    -------
    dict
        Flat summary path (``"response.sensitivity_db_v_per_pa"``) → SI value (dB for levels).

    Raises
    ------
    FastPathUnavailable
        Not covered (module docstring), an uncertified electrostatics table, or a missing input
        output.
    """
    from diagap.fastpath.field import field_objects
    from diagap.fastpath.film import _tension_ratio

    _check(design, outputs)
    _, device, skipped = field_objects(design, mapper)
    if skipped:
        raise FastPathUnavailable(f"electrostatics: {', '.join(sorted(skipped))} uncertified "
                                  "in the tables (allowed: certified tables)")
    tau = _tension_ratio(design)
    model, _ = fast_lumped_model(design, outputs, device, _shape(design, tau, mapper),
                                 _hole_resistance(design, mapper))
    return model_outputs(design, model)


def covered_response_outputs(design, outputs: dict, mapper=None) -> dict[str, float]:
    """:func:`response_outputs`, or nothing where the design is not covered, a table is not
    built (without a ``mapper`` the tables are only read) or the coupled outputs are absent."""
    from diagap.fastpath import read_only

    try:
        return response_outputs(design, outputs, mapper or read_only)
    except FastPathUnavailable:
        return {}
