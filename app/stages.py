"""The stages of a run: each turns the design and earlier results into one summary section.

Each stage returns a small frozen object with ``to_summary()`` and ``uncertainty`` (relative
discretisation error per reported FE quantity). Lumped parameters are referred to the centre
displacement (mode-1 shape normalised to 1 at the centre) throughout.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from diagap.design import Design

__all__ = ["electrostatics_stage", "coupled_stage", "damping_stage", "lumped_model",
           "response_stage", "large_deflection_stage", "Section", "electrode_quadrature"]

#: the c(g) table covers local gaps from GAP_TABLE[0]·g to GAP_TABLE[1]·g: the C(x) curve
#: (±g/3), the coupled branch up to and just past the fold, and the distortion model's travel.
GAP_TABLE = (0.25, 1.45)
#: centre travel of the C(x) samples handed to the nonlinear (distortion) model, in gaps
NONLINEAR_TRAVEL = 0.7
#: the rim-fringing model covers local rim gaps g(1 ± RIM_SPAN)
RIM_SPAN = 0.5


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


def electrostatics_stage(design: Design, mech) -> Section:
    """Cell capacitance density c(g), rim fringing and the device C(x) on the static shape."""
    from diagap.fem.field.device import device_capacitance
    from diagap.fem.field.cell_table import capacitance_density_table
    from diagap.fem.field.rim import rim_fringing

    d, b, acc = design.diaphragm, design.backplate, design.analysis.accuracy
    g = b.gap_m
    lattice = b.hole_lattice
    density = capacitance_density_table(GAP_TABLE[0] * g, GAP_TABLE[1] * g, b.hole_radius_m,
                                        b.hole_pitch_m, lattice, b.thickness_m, acc)
    half = d.shape == "square"
    rim = rim_fringing((0.5 if half else 1.0) * b.electrode_size_m,
                       (0.5 if half else 1.0) * d.size_m, g, b.thickness_m, shape=d.shape,
                       accuracy=acc, gap_span=RIM_SPAN)
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
    return Section(data, unc, {"device": dev, "density": density, "rim": rim,
                               "phi_max": float(np.max(phi)), "phi_rim": phi_rim})


def coupled_stage(design: Design, problem, es: Section, mech) -> Section:
    """Equilibrium under bias, softening and pull-in of the FE diaphragm.

    The electrostatic spring is referred to the mode-1 centre coordinate: with the resonance
    f_b at bias and f_0 without (same mesh, vacuum), k_soft = k_eff (f_b/f_0)² and
    k_e = k_eff − k_soft (constant voltage; = −dF/dx of the electrostatic force)."""
    from diagap.fem.coupling.plate import solve_coupled

    b = design.backplate
    res = solve_coupled(problem, design.analysis.accuracy, b.electrode_size_m, b.gap_m,
                        design.electrical.bias_voltage_v, es.objects["density"])
    data = res.to_summary()
    unc = dict(res.uncertainty)
    if not res.collapsed:
        k = mech.effective_stiffness_n_per_m
        soft = k * (res.resonance_at_bias_hz / res.resonance_no_bias_hz) ** 2
        data["softened_stiffness_n_per_m"] = soft
        data["electrostatic_stiffness_n_per_m"] = k - soft
        unc["softened_stiffness_n_per_m"] = 2 * unc.get("resonance_at_bias_hz", 0.0) + \
            mech.uncertainty.get("effective_stiffness_n_per_m", 0.0)
    return Section(data, unc, {"coupled": res})


def damping_stage(design: Design, mech, resonance_hz: float) -> Section:
    """Squeeze-film damping and film stiffness through the perforation, on the mode-1 shape."""
    from diagap.fem.air import air_properties
    from diagap.fem.film.squeeze import squeeze_film

    from diagap.lumped.noise import mechanical_thermal_noise

    d, b, a = design.diaphragm, design.backplate, design.acoustics
    air = air_properties(a.temperature_k, a.static_pressure_pa)
    freqs = np.logspace(0, 5, 51)
    res = squeeze_film(d.shape, b.electrode_size_m, b.gap_m, b.hole_radius_m, b.hole_pitch_m,
                       b.hole_lattice, b.thickness_m, air, lambda x, y: mech.mode_shape(1, x, y),
                       freqs, design.analysis.accuracy)
    data = res.to_summary(resonance_hz=resonance_hz)
    thermal = mechanical_thermal_noise(res.frequencies_hz, res.damping_spectrum_n_s_per_m,
                                       a.temperature_k, mech.effective_area_m2)
    data["mechanical_noise_dba_spl"] = thermal.a_weighted_spl_db()
    data["force_noise_n_per_rthz"] = float(np.sqrt(thermal.force_psd_n2_per_hz[0]))
    unc = {"damping_n_s_per_m": res.damping_relative_uncertainty,
           "cutoff_frequency_hz": data["cutoff_relative_uncertainty"]}
    return Section(data, unc, {"squeeze": res, "air": air})


def lumped_model(design: Design, mech, es: Section, cp: Section, damp: Section):
    """The one-degree-of-freedom model at the bias point (see :mod:`lumped.model`)."""
    from diagap.lumped.model import FilmTable, LumpedModel

    res = cp.objects["coupled"]
    dev = es.objects["device"]
    air = damp.objects["air"]
    sq = damp.objects["squeeze"]
    g = design.backplate.gap_m
    x_b = res.bias_center_deflection_m or 0.0
    k = mech.effective_stiffness_n_per_m
    ratio = (res.resonance_at_bias_hz / res.resonance_no_bias_hz) ** 2
    k_e = k * (1.0 - ratio)
    # keep every local gap inside the c(g) table and the rim model's range
    pm, pr = max(es.objects["phi_max"], 1e-9), max(es.objects["phi_rim"], 1e-9)
    x_hi = 0.999 * min(NONLINEAR_TRAVEL * g, (1 - GAP_TABLE[0]) * g / pm, RIM_SPAN * g / pr)
    x_lo = -0.999 * min(0.4 * g, (GAP_TABLE[1] - 1) * g / pm, RIM_SPAN * g / pr)
    xs = np.linspace(x_lo, x_hi, 111)
    curve = tuple((float(x), float(dev(x))) for x in xs)
    e, ac = design.electrical, design.acoustics
    film = FilmTable(tuple(sq.frequencies_hz.tolist()), tuple(sq.damping_spectrum_n_s_per_m.tolist()),
                     tuple(sq.film_stiffness_n_per_m.tolist()))
    return LumpedModel(
        stiffness_n_per_m=k, electrostatic_stiffness_n_per_m=k_e, mass_kg=mech.effective_mass_kg,
        area_m2=mech.effective_area_m2, damping_n_s_per_m=sq.damping_n_s_per_m,
        back_volume_m3=ac.back_volume_m3, vent_resistance_pa_s_per_m3=ac.vent_resistance_pa_s_per_m3,
        rest_capacitance_f=float(dev(x_b)), capacitance_slope_f_per_m=float(dev.slope(x_b)),
        bias_resistance_ohm=e.bias_resistance_ohm, bias_voltage_v=e.bias_voltage_v, gap_m=g,
        parasitic_capacitance_f=e.parasitic_capacitance_f,
        preamp_input_capacitance_f=e.preamp_input_capacitance_f, capacitance_curve=curve,
        film_damping=film, bias_displacement_m=x_b, air_density_kg_m3=air.density_kg_per_m3,
        sound_speed_m_s=air.speed_of_sound_m_per_s, static_pressure_pa=ac.static_pressure_pa,
        gamma=air.heat_capacity_ratio, temperature_k=ac.temperature_k)


def _response_uncertainty(unc: dict) -> dict:
    """First-order propagation of the FE error estimates into the lumped figures (relative, on
    the linear quantities): the mid-band sensitivity (V/Pa) ∝ (dC/dx / C)·A_eff / k and the
    resonance ∝ √(k/m); errors add linearly (a bound, no cancellation assumed)."""
    def u(key):
        return abs(float(unc.get(key, 0.0)))

    sens = (u("electrostatics.capacitance_slope_f_per_m") + u("electrostatics.rest_capacitance_f")
            + u("mechanics.effective_area_m2") + u("coupled.softened_stiffness_n_per_m"))
    res = 0.5 * (u("coupled.softened_stiffness_n_per_m") + u("mechanics.effective_mass_kg"))
    return {"sensitivity_v_per_pa": sens, "resonance_hz": res}


def response_stage(model, fe_uncertainty: dict | None = None) -> Section:
    """Frequency response, noise (mechanical-thermal, bias resistor, vent) and distortion."""
    from diagap.lumped.distortion import distortion_vs_spl
    from diagap.lumped.noise import a_weighted_level_db
    from diagap.lumped.response import (analyse_response, output_noise_psd_damping, output_noise_psd_resistor,
                           output_noise_psd_vent, input_referred)

    resp = analyse_response(model)
    f = resp.response.frequency_hz
    parts = {"mechanical_thermal": output_noise_psd_damping(model, f),
             "bias_resistor": output_noise_psd_resistor(model, f),
             "vent": output_noise_psd_vent(model, f)}
    total = sum(parts.values())
    p_in = input_referred(model, f, total)
    noise = a_weighted_level_db(f, p_in)
    contributions = {k: a_weighted_level_db(f, input_referred(model, f, v))
                     for k, v in parts.items()}
    dist = distortion_vs_spl(model)
    data = resp.to_summary()
    data.update({
        "noise_dba_spl": noise, "snr_db": 94.0 - noise,
        "noise_contributions_dba_spl": contributions,
        "input_noise_density_pa_per_rthz": [[float(a), float(math.sqrt(b))]
                                            for a, b in zip(f, p_in)],
    })
    data.update(dist.to_summary())
    data["thd_vs_spl"] = [[float(a), float(b)] for a, b in zip(dist.spl_db, dist.thd)]
    unc = _response_uncertainty(fe_uncertainty or {})
    return Section(data, unc, {"response": resp, "distortion": dist, "model": model,
                              "noise_parts": parts, "noise_input_psd": p_in})


def large_deflection_stage(design: Design, problem, es: Section, resp: dict | None,
                           collapsed: bool = False) -> Section:
    """Large deflection up to contact, without and with bias, and the quasi-static overload point
    (see :mod:`diagap.overload`); without the biased part when the bias collapses the diaphragm."""
    from diagap.overload import large_deflection_section

    return large_deflection_section(design, problem, es, resp, with_bias=not collapsed)
