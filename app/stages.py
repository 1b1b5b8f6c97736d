"""The stages of a run: each turns the design and earlier results into one summary section.

Each stage returns a small frozen object with ``to_summary()`` and ``uncertainty`` (relative
discretisation error per reported FE quantity).

One shape for the whole reduction
---------------------------------
Every lumped quantity is a Rayleigh–Ritz projection on ONE shape, the static deflection under
uniform pressure φ_s = w_p/w_p(0) (1 at the centre): stiffness k = φ_sᵀKφ_s = A/c0, mass
m = φ_sᵀMφ_s, area A = ∫φ_s dA, the capacitance curve C(x) = ∫c(g − xφ_s) dA + C_rim and its
slope, the electrostatic spring k_e = ½V_b²C''(x_b) (the distributed −∂p_e/∂w at the bias point
projected on φ_s), the squeeze-film impedance and its noise. Why the static shape: an audio-band
microphone works far below its first resonance, where the diaphragm takes the static shape, so
this choice makes the low-frequency compliance (A/k = c0, the exact FE centre compliance) and
the volume displacement A²/k (the exact FE volume compliance) exact, and with them the 1 kHz
sensitivity. Its price is the resonance: the Rayleigh quotient of φ_s lies above ω₁ (clamped
disk, FE "normal": +1.1 % for a pure plate τ = 0, +1.8 % at the demo's τ = TL²/D = 178,
+1.9 % at τ = 3600, quadratic in the shape error), a shift at the top of or above the audio
band. The mode-1 shape would make the resonance exact but overstate the low-frequency compliance
by the mode's participation (A₁/k₁ over c0: 1.045 at τ = 0, 1.10 at τ = 178, 1.11 at τ = 3600),
i.e. +0.4 to +0.9 dB of sensitivity (and THD, and SNR) — an error in the band where the
microphone is used. The static shape is therefore chosen. The residual model error of
the reduction is measured against the distributed solve (:mod:`fem.response`) in the audit.

A compliant backplate (:mod:`diagap.backplate`) keeps the one shape: the backplate follows the
diaphragm quasi-statically, so the bias point is read at the centre gap closure and both the
capacitance slope and the electrostatic spring are multiplied by the FE slope factor
s = ∫π(δw_d + δw_b)/∫π δw_d at bias (s = 1 for a rigid backplate).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from diagap.design import Design

__all__ = ["electrostatics_stage", "coupled_stage", "damping_stage", "lumped_model",
           "electrostatic_spring", "response_stage", "Section", "electrode_quadrature"]

#: the c(g) table covers local gaps from GAP_TABLE[0]·g to GAP_TABLE[1]·g: the C(x) curve
#: (±g/3), the coupled branch up to and just past the fold, and the distortion model's travel.
GAP_TABLE = (0.25, 1.45)
#: centre travel of the C(x) samples handed to the nonlinear (distortion) model, in gaps
NONLINEAR_TRAVEL = 0.7
#: the rim-fringing model covers local rim gaps g(1 ± RIM_SPAN)
RIM_SPAN = 0.5
#: how the damping section states the air it assumed for a design without [acoustics]
AIR_DEFAULT_NOTE = "assumed 20 degC and 101.325 kPa (the design has no [acoustics] section)"


@dataclass(frozen=True)
class Section:
    """A summary section computed from several solver results."""

    data: dict
    uncertainty: dict = field(default_factory=dict)
    objects: dict = field(default_factory=dict, repr=False)  # solver results for reports

    def to_summary(self) -> dict:
        return self.data


def electrode_quadrature(design: Design, n: int = 48):
    """(x_m, y_m, weights_m2) of a tensor Gauss rule over the electrode (polar for a circle)."""
    b, d = design.backplate, design.diaphragm
    xg, wg = np.polynomial.legendre.leggauss(n)
    if d.shape == "circle":
        r_e = b.electrode_size_m
        r = 0.5 * r_e * (xg + 1.0)
        wr = 0.5 * r_e * wg * r
        n_t = 16
        th = (np.arange(n_t) + 0.5) * 2 * np.pi / n_t
        R, TH = np.meshgrid(r, th, indexing="ij")
        W = np.repeat(wr[:, None], n_t, axis=1) * (2 * np.pi / n_t)
        return (R * np.cos(TH)).ravel(), (R * np.sin(TH)).ravel(), W.ravel()
    half = 0.5 * b.electrode_size_m
    x = half * xg
    X, Y = np.meshgrid(x, x, indexing="ij")
    W = np.outer(wg, wg) * half**2
    return X.ravel(), Y.ravel(), W.ravel()


def _rim_points(design: Design, n: int = 64):
    b, d = design.backplate, design.diaphragm
    if d.shape == "circle":
        th = np.linspace(0, 2 * np.pi, n, endpoint=False)
        return b.electrode_size_m * np.cos(th), b.electrode_size_m * np.sin(th)
    half = 0.5 * b.electrode_size_m
    s = np.linspace(-half, half, n)
    return np.concatenate([s, s, np.full(n, half), np.full(n, -half)]), \
        np.concatenate([np.full(n, half), np.full(n, -half), s, s])


def electrostatics_stage(design: Design, mech, density=None, rim=None) -> Section:
    """Cell capacitance density c(g), rim fringing and the device C(x) on the static shape
    (``density``, ``rim``: those of an earlier run of the same geometry, reused)."""
    from diagap.fem.field.device import device_capacitance
    from diagap.fem.field.cell_table import capacitance_density_table
    from diagap.fem.field.rim import rim_fringing

    from diagap.dielectrics import table_lower_fraction

    d, b, acc = design.diaphragm, design.backplate, design.analysis.accuracy
    g = b.gap_m
    lattice = b.hole_lattice
    layers = design.layers  # dielectric layers: the electrode is the backplate less its layer
    t_el = b.thickness_m - (layers.backplate_thickness_m if layers is not None else 0.0)
    if density is None:
        density = capacitance_density_table(table_lower_fraction(design, GAP_TABLE[0]) * g,
                                            GAP_TABLE[1] * g, b.hole_radius_m, b.hole_pitch_m,
                                            lattice, t_el, acc, layers=layers)
    half = d.shape == "square"
    if rim is None:
        rim = rim_fringing((0.5 if half else 1.0) * b.electrode_size_m,
                           (0.5 if half else 1.0) * d.size_m, g, t_el, shape=d.shape,
                           accuracy=acc, gap_span=RIM_SPAN, layers=layers)
    x, y, w = electrode_quadrature(design)
    phi = mech.static_shape(x, y)
    phi_rim = float(np.mean(mech.static_shape(*_rim_points(design))))
    xs = np.linspace(-g / 3, g / 3, 41)
    dev = device_capacitance(w, phi, density, g, rim=rim, x_values_m=xs, phi_rim=phi_rim)
    shape_err = mech.uncertainty.get("volume_compliance_m3_per_pa", 0.0) + \
        mech.uncertainty.get("center_compliance_m_per_pa", 0.0)
    unc = {
        "rest_capacitance_f": dev.rel_error,
        "capacitance_slope_f_per_m": dev.slope_rel_error + shape_err,
        "perforation_factor": density.rel_error,
        "rim_fringing_capacitance_f": rim.abs_error_f / max(rim.capacitance_f, 1e-300),
    }
    data = dev.to_summary()
    if layers is not None:
        data["layers"] = layers.to_summary()
    return Section(data, unc, {"device": dev, "density": density, "rim": rim,
                               "phi_max": float(np.max(phi)), "phi_rim": phi_rim})


def coupled_stage(design: Design, problem, es: Section, mech) -> Section:
    """Equilibrium under bias, softening and pull-in of the FE diaphragm.

    The electrostatic spring is referred to the mode-1 centre coordinate: with the resonance
    f_b at bias and f_0 without (same mesh, vacuum), k_soft = k_eff (f_b/f_0)² and
    k_e = k_eff − k_soft (constant voltage; = −dF/dx of the electrostatic force) — reported as a
    cross-check. The lumped model's own electrostatic spring is the static-shape one,
    ½V²C''(x_b) (:func:`electrostatic_spring`); ``softened_stiffness_n_per_m`` and
    ``electrostatic_stiffness_n_per_m`` are those of the static shape."""
    from diagap.dielectrics import effective_bias_v, electret_bias_v
    from diagap.fem.coupling.plate import solve_coupled

    b = design.backplate
    # supply + electret equivalent (diagap.dielectrics); the force goes with its square, so
    # the coupled solve takes its magnitude
    bias = abs(effective_bias_v(design))
    pair = None
    if b.plate is not None:  # compliant backplate: the two-plate solve (diagap.backplate)
        from diagap.backplate import coupled_pair

        pair = coupled_pair(design, problem, mech.backplate_problem, es.objects["density"], mech)
        res = pair.coupled
    else:
        res = solve_coupled(problem, design.analysis.accuracy, b.electrode_size_m, b.gap_m,
                            bias, es.objects["density"])
    data = res.to_summary()
    if design.electret is not None:
        data["electret_equivalent_bias_v"] = electret_bias_v(design)
    unc = dict(res.uncertainty)
    if pair is not None:
        data.update(pair.data)
        unc.update(pair.uncertainty)
    if design.electrical is None:  # pull-in only: no bias point without a bias voltage
        data = {k: data[k] for k in ("pull_in_voltage_v", "pull_in_center_deflection_m",
                                     "branch", "backplate_pull_in_center_deflection_m",
                                     "electret_equivalent_bias_v") if k in data}
        unc = {k: v for k, v in unc.items() if k.startswith("pull_in")}
        return Section(data, unc, {"coupled": res, "no_bias": True, "backplate": pair})
    if not res.collapsed:
        from diagap.backplate import lumped_bias

        k = mech.static_shape_stiffness_n_per_m
        x_b, s_b = lumped_bias(pair, res.bias_center_deflection_m or 0.0)
        k_e = s_b * electrostatic_spring(design, es, x_b)
        data["softened_stiffness_n_per_m"] = k - k_e
        data["electrostatic_stiffness_n_per_m"] = k_e
        data["mode_1_electrostatic_stiffness_n_per_m"] = mech.effective_stiffness_n_per_m * (
            1.0 - (res.resonance_at_bias_hz / res.resonance_no_bias_hz) ** 2)
        unc["softened_stiffness_n_per_m"] = (
            mech.uncertainty.get("static_shape_stiffness_n_per_m", 0.0)
            + abs(k_e / (k - k_e)) * (es.uncertainty.get("capacitance_slope_f_per_m", 0.0)
                                      + unc.get("bias_center_deflection_m", 0.0)))
    return Section(data, unc, {"coupled": res, "backplate": pair})


def damping_stage(design: Design, mech, resonance_hz: float) -> Section:
    """Squeeze-film damping and film stiffness through the perforation, on the static shape."""
    from diagap.fem.air import air_properties
    from diagap.fem.film.squeeze import squeeze_film

    from diagap.lumped.noise import mechanical_thermal_noise

    d, b = design.diaphragm, design.backplate
    temperature_k, pressure_pa = design.air_conditions
    air = air_properties(temperature_k, pressure_pa)
    freqs = np.logspace(0, 5, 51)
    res = squeeze_film(d.shape, b.electrode_size_m, b.gap_m, b.hole_radius_m, b.hole_pitch_m,
                       b.hole_lattice, b.thickness_m, air, mech.static_shape,
                       freqs, design.analysis.accuracy)
    data = res.to_summary(resonance_hz=resonance_hz)
    thermal = mechanical_thermal_noise(res.frequencies_hz, res.damping_spectrum_n_s_per_m,
                                       temperature_k, mech.static_shape_area_m2)
    data["mechanical_noise_dba_spl"] = thermal.a_weighted_spl_db()
    data["force_noise_n_per_rthz"] = float(np.sqrt(thermal.force_psd_n2_per_hz[0]))
    if design.acoustics is None:
        data["air_conditions"] = AIR_DEFAULT_NOTE
    unc = {"damping_n_s_per_m": res.damping_relative_uncertainty,
           "cutoff_frequency_hz": data["cutoff_relative_uncertainty"]}
    if res.perforation is not None:  # per-hole resistance used (Stokes cell) and closed forms
        data["hole_resistance_pa_s_per_m3"] = res.perforation.resistance_pa_s_per_m3
        data["hole_resistance_closed_form_pa_s_per_m3"] = \
            res.perforation.closed_form_resistance_pa_s_per_m3
        unc["hole_resistance_pa_s_per_m3"] = res.perforation.resistance_rel_error
    return Section(data, unc, {"squeeze": res, "air": air})


def _curve_points(design: Design, es: Section) -> np.ndarray:
    """Centre displacements (m) of the C(x) samples: every local gap stays inside the c(g) table
    and the rim model's range."""
    from diagap.dielectrics import table_lower_fraction

    g = design.backplate.gap_m
    pm, pr = max(es.objects["phi_max"], 1e-9), max(es.objects["phi_rim"], 1e-9)
    low = table_lower_fraction(design, GAP_TABLE[0])
    x_hi = 0.999 * min(NONLINEAR_TRAVEL * g, (1 - low) * g / pm, RIM_SPAN * g / pr)
    x_lo = -0.999 * min(0.4 * g, (GAP_TABLE[1] - 1) * g / pm, RIM_SPAN * g / pr)
    return np.linspace(x_lo, x_hi, 111)


def electrostatic_spring(design: Design, es: Section, x_b_m: float) -> float:
    """Constant-voltage electrostatic spring ½V_b²C''(x_b) on the static shape (N/m), C''
    from the elastance spline of :class:`lumped.model.CapacitanceCurve` through C(x)."""
    from diagap.dielectrics import effective_bias_v
    from diagap.lumped.model import CapacitanceCurve

    xs = _curve_points(design, es)
    curve = CapacitanceCurve(xs, es.objects["device"](xs))
    return float(0.5 * effective_bias_v(design)**2 * curve.curvature(x_b_m))


def _piston_radius(design: Design) -> float:
    """Radius of the disk of the diaphragm's area: the baffled-piston front load (m)."""
    d = design.diaphragm
    return d.size_m if d.shape == "circle" else d.size_m / math.sqrt(math.pi)


#: the lumped film (:func:`_film_table`) runs on the distributed solve's finer film mesh
#: (``FILM_LEVELS[1]``) when that has at least this many degrees of freedom, else on its
#: refinement. Measured: on random clamped disks whose level 1 has 289 DOFs, b(f) and k(f) there
#: were 1.0e-3 … 1.8e-3 off a converged radial film (6e-3 … 1e-2 on level 0), and within
#: 2.7e-4 on the refinement (1217 DOFs, 0.2–0.25 s for the 51 frequencies); that level-1 error
#: moved the quality factor by up to 2e-3 and the peak frequency of a nearly flat response by
#: up to 3e-3. The demo's level 1 (993 DOFs) is within 5e-5 of its refinement (4097 DOFs,
#: 0.8 s), so it stays there.
LUMPED_FILM_MIN_DOFS = 900


def _film_table(design: Design, mech, air, sq):
    """b(f), k_film(f) of the film on the static shape, with the air mass of the film and the
    holes (:mod:`fem.response.film`, on the distributed solve's finer film mesh or its
    refinement, :data:`LUMPED_FILM_MIN_DOFS`)."""
    from diagap.extract import film_coefficients
    from diagap.fem.response.coupled import F_MAX_HZ, FILM_FAMILY, FILM_LEVELS
    from diagap.fem.response.film import film_layer, film_operator
    from diagap.lumped.model import FilmTable

    b, d = design.backplate, design.diaphragm
    perf = sq.perforation  # the damping stage's hole resistance, not a second cell solve
    coef = film_coefficients(design, air,
                             None if perf is None else perf.resistance_pa_s_per_m3)
    f = np.asarray(sq.frequencies_hz, float)
    scale = b.electrode_size_m if d.shape == "circle" else 0.5 * b.electrode_size_m
    layer = film_layer(coef, scale, F_MAX_HZ)
    family = FILM_FAMILY[design.analysis.accuracy]
    fo = film_operator(d.shape, family, layer, FILM_LEVELS[1], scale)
    if fo.n < LUMPED_FILM_MIN_DOFS:
        fo = film_operator(d.shape, family, layer, FILM_LEVELS[1] + 1, scale)
    z = fo.impedance_spectrum(coef, 2 * np.pi * f, mech.static_shape(fo.xq_m, fo.yq_m))
    return FilmTable(tuple(f.tolist()), tuple(z.real.tolist()),
                     tuple((-2 * np.pi * f * z.imag).tolist()))


def lumped_model(design: Design, mech, es: Section, cp: Section, damp: Section):
    """The one-degree-of-freedom model at the bias point (see :mod:`diagap.lumped.model`)."""
    from diagap.dielectrics import effective_bias_v
    from diagap.lumped.model import FilmTable, LumpedModel
    from diagap.readout_design import bias_leg_resistance_ohm

    res = cp.objects["coupled"]
    dev = es.objects["device"]
    air = damp.objects["air"]
    sq = damp.objects["squeeze"]
    g = design.backplate.gap_m
    from diagap.backplate import lumped_bias

    x_b, s_b = lumped_bias(cp.objects.get("backplate"),  # (x_b, 1) for a rigid backplate
                           res.bias_center_deflection_m or 0.0)
    k = mech.static_shape_stiffness_n_per_m
    k_e = s_b * electrostatic_spring(design, es, x_b)
    xs = _curve_points(design, es)
    curve = tuple((float(x), float(dev(x))) for x in xs)
    e, ac = design.electrical, design.acoustics
    film = _film_table(design, mech, air, sq)
    return LumpedModel(
        stiffness_n_per_m=k, electrostatic_stiffness_n_per_m=k_e, mass_kg=mech.static_shape_mass_kg,
        area_m2=mech.static_shape_area_m2, damping_n_s_per_m=sq.damping_n_s_per_m,
        back_volume_m3=ac.back_volume_m3, vent_resistance_pa_s_per_m3=ac.vent_resistance_pa_s_per_m3,
        rest_capacitance_f=float(dev(x_b)),
        capacitance_slope_f_per_m=s_b * float(dev.slope(x_b)),
        bias_resistance_ohm=bias_leg_resistance_ohm(design),
        bias_voltage_v=effective_bias_v(design), gap_m=g,
        parasitic_capacitance_f=e.parasitic_capacitance_f,
        preamp_input_capacitance_f=e.preamp_input_capacitance_f, capacitance_curve=curve,
        film_damping=film, bias_displacement_m=x_b, air_density_kg_m3=air.density_kg_per_m3,
        sound_speed_m_s=air.speed_of_sound_m_per_s, static_pressure_pa=ac.static_pressure_pa,
        gamma=air.heat_capacity_ratio, temperature_k=ac.temperature_k,
        radiation_radius_m=_piston_radius(design), package=_package(design, air))


def _package(design: Design, air):
    """Port, front chamber, lossy back volume, vent channel (None: the capsule alone)."""
    from diagap.package_design import gas_from_air, package_acoustics

    return package_acoustics(design, gas_from_air(air))


# the response stage lives in its own module; its names stay importable from here
from diagap.response_stage import (DISTRIBUTED_FREQUENCIES_HZ, READOUT_SOURCES,  # noqa: E402
                                   _response_uncertainty, distributed_section, response_stage)
