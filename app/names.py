"""The names of diagap's outputs: one table for every place a person reads a result.

Each numeric key of summary.json (``section.key``; keys carry their SI unit) has a :class:`Name`:
a label, the SI unit of the stored value, the display unit and the fixed factor from SI to it
(``display = SI × scale``), and a one-line description. The console table (:mod:`diagap.table`),
report.html (:mod:`diagap.report.html_tables`), the report plots and their captions, the sweep
plots (:mod:`diagap.sweep.plots`) and the CSV column descriptions all read this table, so a
quantity has the same name and the same unit everywhere.

The display unit of a quantity is fixed (it does not change with the value), so that tables,
plots and captions of one run, and of runs of different designs, can be compared by eye.

Four different resonances are reported and told apart by name:

* ``mechanics.natural_frequencies_hz``  natural frequencies in vacuum (no bias, FE modes),
* ``coupled.resonance_at_bias_hz``      resonance at bias (vacuum): mode 1 softened by the bias,
* ``response.resonance_hz``             resonance in air (lumped model: film, back volume, bias),
* ``response.peak_frequency_hz``        peak of the response (frequency of the largest
                                        diaphragm displacement per pascal).
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

__all__ = ["Name", "NAMES", "INPUT_NAMES", "KEY_OUTPUTS", "lookup", "input_name", "format_display",
           "display_text", "TEXT_KEYS", "LIST_KEYS"]


@dataclass(frozen=True)
class Name:
    """How one output is named and shown."""

    key: str          # "section.key" as in summary.json (flattened with '.')
    label: str        # what a person reads
    si_unit: str      # unit of the stored value ("" for a ratio or count)
    unit: str         # display unit ("" for a ratio or count)
    scale: float      # display value = SI value × scale
    description: str
    diagnostic: bool = False  # solver bookkeeping (errors, mesh sizes): not plotted

    def display(self, value: float) -> float:
        return float(value) * self.scale


def _n(key, label, si_unit, unit, scale, description, diagnostic=False) -> Name:
    return Name(key, label, si_unit, unit, scale, description, diagnostic)


_ROWS = [
    # ---- mechanics (FE, vacuum, no bias)
    _n("mechanics.center_compliance_m_per_pa", "centre compliance", "m/Pa", "nm/Pa", 1e9,
       "centre deflection per pascal of uniform pressure (vacuum, no bias)"),
    _n("mechanics.volume_compliance_m3_per_pa", "volume compliance", "m³/Pa", "µm³/Pa", 1e18,
       "swept volume per pascal of uniform pressure"),
    _n("mechanics.natural_frequencies_hz", "natural frequencies in vacuum (no bias)", "Hz",
       "kHz", 1e-3, "FE natural frequencies of the diaphragm in vacuum, no bias, in order"),
    _n("mechanics.distinct_frequencies_hz", "natural frequencies in vacuum (no bias, distinct)",
       "Hz", "kHz", 1e-3, "the natural frequencies with degenerate pairs listed once"),
    _n("mechanics.effective_mass_kg", "effective mass", "kg", "µg", 1e9,
       "mode-1 mass referred to the centre displacement"),
    _n("mechanics.effective_stiffness_n_per_m", "effective stiffness", "N/m", "N/m", 1.0,
       "mode-1 stiffness referred to the centre displacement"),
    _n("mechanics.effective_area_m2", "effective area", "m²", "mm²", 1e6,
       "swept volume per centre displacement of mode 1"),
    _n("mechanics.mesh_dofs", "mesh degrees of freedom", "", "", 1.0,
       "unknowns of the mesh levels used for the error estimate", diagnostic=True),
    _n("mechanics.static_shape_mass_kg", "effective mass (static shape)", "kg", "µg", 1e9,
       "∫ρh w² dA / w(0)² of the static deflection shape: the lumped model's mass"),
    _n("mechanics.static_shape_stiffness_n_per_m", "effective stiffness (static shape)", "N/m",
       "N/m", 1.0, "uniform-pressure stiffness referred to the centre deflection: the lumped "
       "model's spring"),
    _n("mechanics.static_shape_area_m2", "effective area (static shape)", "m²", "mm²", 1e6,
       "∫w dA / w(0): the lumped model's piston area"),
    # ---- electrostatics (rest gap)
    _n("electrostatics.rest_capacitance_f", "rest capacitance", "F", "pF", 1e12,
       "FE capacitance at rest (holes, rim fringing and open area included)"),
    _n("electrostatics.parallel_plate_capacitance_f", "parallel-plate capacitance", "F", "pF",
       1e12, "ε0·A/g over the electrode area, no holes, no fringing"),
    _n("electrostatics.capacitance_slope_f_per_m", "dC/dx at rest", "F/m", "pF/µm", 1e6,
       "capacitance change per centre displacement towards the backplate"),
    _n("electrostatics.perforation_factor", "perforation factor", "", "", 1.0,
       "capacitance of the perforated unit cell over a solid backplate"),
    _n("electrostatics.open_area_fraction", "open area fraction", "", "", 1.0,
       "hole area over backplate area"),
    _n("electrostatics.rim_fringing_capacitance_f", "rim fringing capacitance", "F", "pF", 1e12,
       "capacitance added by the field beyond the electrode rim"),
    _n("electrostatics.electrode_area_m2", "electrode area", "m²", "mm²", 1e6,
       "backplate electrode area"),
    _n("electrostatics.rest_gap_m", "gap at rest", "m", "µm", 1e6, "diaphragm-to-backplate gap"),
    _n("electrostatics.capacitance_fit_error", "C(x) fit error (relative)", "", "", 1.0,
       "largest relative misfit of the C(x) samples", diagnostic=True),
    _n("electrostatics.rest_capacitance_rel_error", "rest capacitance error (relative)", "", "",
       1.0, "estimated relative discretisation error", diagnostic=True),
    _n("electrostatics.capacitance_slope_rel_error", "dC/dx error (relative)", "", "", 1.0,
       "estimated relative discretisation error", diagnostic=True),
    # ---- dielectric layers on the electrodes (diagap.dielectrics)
    _n("electrostatics.layers.backplate_thickness_m", "backplate layer thickness", "m", "µm",
       1e6, "insulating layer on the gap side of the backplate electrode"),
    _n("electrostatics.layers.backplate_permittivity", "backplate layer permittivity", "", "",
       1.0, "relative permittivity of the backplate's layer"),
    _n("electrostatics.layers.diaphragm_thickness_m", "diaphragm layer thickness", "m", "µm",
       1e6, "insulating layer on the gap side of the diaphragm electrode"),
    _n("electrostatics.layers.diaphragm_permittivity", "diaphragm layer permittivity", "", "",
       1.0, "relative permittivity of the diaphragm's layer"),
    _n("electrostatics.layers.electrical_thickness_m", "layers' electrical thickness", "m",
       "µm", 1e6, "sum of thickness / permittivity of the layers: the electrical gap is the "
       "air gap plus this"),
    _n("coupled.electret_equivalent_bias_v", "electret equivalent bias", "V", "V", 1.0,
       "bias voltage equivalent to the electret charge (sigma t / (eps0 eps_r)), in series "
       "with the supply; it decays with temperature and humidity"),
    # ---- coupled (bias and pull-in)
    _n("coupled.pull_in_voltage_v", "pull-in voltage", "V", "V", 1.0,
       "bias voltage at which the FE diaphragm snaps to the backplate"),
    _n("coupled.pull_in_center_deflection_m", "centre deflection at pull-in", "m", "nm", 1e9,
       "centre deflection at the pull-in fold"),
    _n("coupled.bias_voltage_v", "bias voltage", "V", "V", 1.0, "the design's bias voltage "
       "(with an electret: supply plus the electret's equivalent bias)"),
    _n("coupled.bias_margin", "bias / pull-in voltage", "", "", 1.0,
       "bias voltage over pull-in voltage (1 or more: the diaphragm collapses)"),
    _n("coupled.collapsed", "collapsed", "", "", 1.0, "bias at or above pull-in",
       diagnostic=True),
    _n("coupled.bias_center_deflection_m", "centre deflection at bias", "m", "nm", 1e9,
       "static centre deflection under the bias voltage"),
    _n("coupled.resonance_at_bias_hz", "resonance at bias (vacuum)", "Hz", "kHz", 1e-3,
       "mode-1 frequency in vacuum with the electrostatic softening of the bias"),
    _n("coupled.center_compliance_at_bias_m_per_pa", "centre compliance at bias", "m/Pa",
       "nm/Pa", 1e9, "centre compliance with the electrostatic softening of the bias"),
    _n("coupled.softening_factor", "electrostatic softening (compliance ratio)", "", "", 1.0,
       "compliance without bias over compliance at bias"),
    _n("coupled.softened_stiffness_n_per_m", "effective stiffness at bias", "N/m", "N/m", 1.0,
       "mode-1 stiffness less the electrostatic stiffness"),
    _n("coupled.electrostatic_stiffness_n_per_m", "electrostatic (negative) stiffness", "N/m",
       "N/m", 1.0, "stiffness removed by the bias field"),
    _n("coupled.mode_1_electrostatic_stiffness_n_per_m", "electrostatic spring (mode 1)", "N/m",
       "N/m", 1.0, "the softening seen by mode 1 (from the bias shift of its frequency), for "
       "comparison with the static-shape spring"),
    # ---- compliant backplate (only with a backplate material)
    _n("mechanics.backplate_natural_frequencies_hz", "backplate natural frequencies (vacuum)",
       "Hz", "kHz", 1e-3, "FE natural frequencies of the homogenised perforated backplate, no "
       "bias"),
    _n("mechanics.backplate_center_compliance_m_per_pa", "backplate centre compliance", "m/Pa",
       "nm/Pa", 1e9, "backplate centre deflection per pascal of uniform pressure on it"),
    _n("mechanics.backplate_plate.open_fraction", "backplate open fraction", "", "", 1.0,
       "hole area over backplate area (homogenised plate)"),
    _n("mechanics.backplate_plate.bending_stiffness_ratio", "backplate bending stiffness ratio",
       "", "", 1.0, "homogenised (isotropic equivalent) over solid bending stiffness"),
    _n("mechanics.backplate_plate.bending_poisson_ratio", "backplate bending Poisson ratio", "",
       "", 1.0, "Poisson ratio of the homogenised bending law"),
    _n("mechanics.backplate_plate.membrane_modulus_ratio", "backplate membrane modulus ratio", "",
       "", 1.0, "homogenised in-plane Young's modulus over the solid's"),
    _n("mechanics.backplate_plate.membrane_poisson_ratio", "backplate membrane Poisson ratio",
       "", "", 1.0, "Poisson ratio of the homogenised in-plane law"),
    _n("mechanics.backplate_plate.tension_ratio", "backplate residual tension ratio", "", "",
       1.0, "residual tension of the perforated over the solid film (biaxial stiffness ratio)"),
    _n("mechanics.backplate_plate.bending_anisotropy", "backplate bending anisotropy", "", "",
       1.0, "directional bending stiffness at 45° over 0° (1: isotropic, hex lattices)"),
    _n("mechanics.backplate_plate.membrane_anisotropy", "backplate membrane anisotropy", "", "",
       1.0, "directional in-plane stiffness at 45° over 0° (1: isotropic, hex lattices)"),
    _n("coupled.backplate_center_deflection_m", "backplate centre deflection at bias", "m", "nm",
       1e9, "static backplate centre deflection towards the diaphragm under the bias voltage"),
    _n("coupled.backplate_pull_in_center_deflection_m", "backplate centre deflection at pull-in",
       "m", "nm", 1e9, "backplate centre deflection towards the diaphragm at the pull-in fold"),
    _n("coupled.backplate_compliance_at_bias_m_per_pa", "backplate motion per pascal at bias",
       "m/Pa", "nm/Pa", 1e9, "backplate centre motion towards the diaphragm per pascal on the "
       "diaphragm (through the electrostatic force)"),
    _n("coupled.backplate_slope_factor", "backplate slope factor", "", "", 1.0,
       "gap change over diaphragm motion at bias, weighted by the field (1: rigid backplate)"),
    _n("coupled.backplate_resonance_at_bias_hz", "backplate resonance at bias (vacuum)", "Hz",
       "kHz", 1e-3, "lowest coupled mode carried mainly by the backplate, with the bias"),
    # ---- damping (squeeze film)
    _n("damping.damping_n_s_per_m", "squeeze-film damping", "N·s/m", "µN·s/m", 1e6,
       "low-frequency damping of the air film referred to the centre velocity"),
    _n("damping.damping_relative_uncertainty", "damping error (relative)", "", "", 1.0,
       "estimated relative discretisation error", diagnostic=True),
    _n("damping.cutoff_frequency_hz", "film cut-off frequency", "Hz", "MHz", 1e-6,
       "frequency where the film's spring force equals its damping force"),
    _n("damping.cutoff_relative_uncertainty", "cut-off error (relative)", "", "", 1.0,
       "estimated relative discretisation error", diagnostic=True),
    _n("damping.gas_spring_stiffness_n_per_m", "gas-spring stiffness (sealed film)", "N/m", "N/m",
       1.0, "stiffness of the film if it could not escape"),
    _n("damping.film_viscosity_pa_s", "effective film viscosity", "Pa·s", "µPa·s", 1e6,
       "air viscosity with the rarefaction correction"),
    _n("damping.knudsen_number", "Knudsen number (mean free path / gap)", "", "", 1.0,
       "rarefaction of the air in the gap"),
    _n("damping.decay_length_m", "film decay length", "m", "µm", 1e6,
       "lateral length over which the film pressure decays through the holes"),
    _n("damping.squeeze_number_at_resonance", "squeeze number at resonance", "", "", 1.0,
       "film compressibility measure at the resonance"),
    _n("damping.resonance_to_cutoff_ratio", "resonance / film cut-off", "", "", 1.0,
       "resonance frequency over the film cut-off frequency"),
    _n("damping.mechanical_noise_dba_spl", "mechanical-thermal noise", "dB(A) SPL", "dB(A) SPL",
       1.0, "A-weighted equivalent SPL of the film damping's thermal noise alone"),
    _n("damping.force_noise_n_per_rthz", "thermal force noise density", "N/√Hz", "fN/√Hz",
       1e15, "√(4 k T b) of the film damping"),
    _n("damping.perforation.holes_per_m2", "hole density", "1/m²", "1/mm²", 1e-6,
       "holes per backplate area"),
    _n("damping.perforation.cell_radius_m", "unit-cell radius", "m", "µm", 1e6,
       "radius of the equal-area cell around one hole"),
    _n("damping.perforation.open_area_fraction", "open area fraction", "", "", 1.0,
       "hole area over backplate area"),
    _n("damping.perforation.hole_poiseuille_resistance_pa_s_per_m3", "hole flow resistance "
       "(Poiseuille)", "Pa·s/m³", "Pa·s/m³", 1.0, "viscous resistance of one hole's bore"),
    _n("damping.perforation.hole_end_resistance_pa_s_per_m3", "hole end resistance", "Pa·s/m³",
       "Pa·s/m³", 1.0, "entrance and exit resistance of one hole"),
    _n("damping.perforation.cell_resistance_pa_s_per_m3", "cell film resistance", "Pa·s/m³",
       "Pa·s/m³", 1.0, "resistance of the film flow into one hole"),
    _n("damping.perforation.resistance_per_hole_pa_s_per_m3", "resistance per hole", "Pa·s/m³",
       "Pa·s/m³", 1.0, "total flow resistance of one hole and its cell"),
    _n("damping.perforation.resistance_per_hole_closed_form_pa_s_per_m3",
       "resistance per hole (closed forms)", "Pa·s/m³", "Pa·s/m³", 1.0,
       "Škvor/Bao cell + Poiseuille hole + Sampson end term, for comparison with the Stokes FE"),
    _n("damping.perforation.resistance_per_hole_relative_uncertainty",
       "resistance per hole error (relative)", "", "", 1.0,
       "estimated relative discretisation error of the Stokes cell resistance", diagnostic=True),
    _n("damping.hole_resistance_pa_s_per_m3", "flow resistance per hole (Stokes FE)", "Pa·s/m³",
       "Pa·s/m³", 1.0, "cell-averaged film pressure to the open side, per hole, from the "
       "axisymmetric Stokes solve of the unit cell with slip walls"),
    _n("damping.hole_resistance_closed_form_pa_s_per_m3", "flow resistance per hole (closed forms)",
       "Pa·s/m³", "Pa·s/m³", 1.0, "the sum of closed forms the Stokes FE replaces"),
    _n("damping.perforation.hole_knudsen_number", "Knudsen number in the holes", "", "", 1.0,
       "rarefaction of the air in the holes"),
    # ---- response (lumped model)
    _n("response.sensitivity_db_v_per_pa", "sensitivity at 1 kHz", "dB re 1 V/Pa",
       "dB re 1 V/Pa", 1.0, "open-circuit output level at 1 kHz"),
    _n("response.sensitivity_v_per_pa", "sensitivity at 1 kHz (linear)", "V/Pa", "mV/Pa", 1e3,
       "output voltage per pascal at 1 kHz"),
    _n("response.highpass_corner_hz", "electrical high-pass corner", "Hz", "Hz", 1.0,
       "1/(2π R C) of the bias resistor and the capacitances"),
    _n("response.acoustic_corner_hz", "acoustic (vent) corner", "Hz", "Hz", 1.0,
       "corner of the static-pressure vent and the back volume"),
    _n("response.lowfreq_minus3db_hz", "low-frequency −3 dB point", "Hz", "Hz", 1.0,
       "where the response is 3 dB below its 1 kHz value"),
    _n("response.resonance_hz", "resonance in air (lumped model)", "Hz", "kHz", 1e-3,
       "resonance of the lumped model with film, back volume and bias"),
    _n("response.quality_factor", "quality factor of the resonance in air", "", "", 1.0,
       "Q of the lumped-model resonance"),
    _n("response.peak_frequency_hz", "peak of the response", "Hz", "kHz", 1e-3,
       "frequency of the largest diaphragm displacement per pascal"),
    _n("response.noise_dba_spl", "noise floor", "dB(A) SPL", "dB(A) SPL", 1.0,
       "A-weighted input-referred noise, 20 Hz – 20 kHz"),
    _n("response.snr_db", "SNR re 94 dB SPL", "dB(A)", "dB(A)", 1.0,
       "94 dB SPL minus the A-weighted noise floor"),
    _n("response.noise_contributions_dba_spl.mechanical_thermal",
       "noise: mechanical-thermal (film damping)", "dB(A) SPL", "dB(A) SPL", 1.0,
       "share of the film damping in the noise floor"),
    _n("response.noise_contributions_dba_spl.bias_resistor", "noise: bias resistor", "dB(A) SPL",
       "dB(A) SPL", 1.0, "share of the bias resistor in the noise floor"),
    _n("response.noise_contributions_dba_spl.vent", "noise: vent (leak) resistance", "dB(A) SPL",
       "dB(A) SPL", 1.0, "share of the vent in the noise floor"),
    _n("response.noise_breakdown_dba.mechanical_thermal", "noise source: film damping",
       "dB(A) SPL", "dB(A) SPL", 1.0, "A-weighted input-referred noise of the film damping"),
    _n("response.noise_breakdown_dba.bias_resistor", "noise source: bias resistor", "dB(A) SPL",
       "dB(A) SPL", 1.0, "A-weighted input-referred noise of the bias resistor"),
    _n("response.noise_breakdown_dba.vent", "noise source: vent (leak) resistance", "dB(A) SPL",
       "dB(A) SPL", 1.0, "A-weighted input-referred noise of the vent"),
    _n("response.noise_breakdown_dba.readout", "noise source: readout input noise",
       "dB(A) SPL", "dB(A) SPL", 1.0, "A-weighted input-referred noise of the readout's "
       "voltage noise (white and 1/f)"),
    _n("response.noise_breakdown_dba.bias_supply", "noise source: bias supply (charge pump)",
       "dB(A) SPL", "dB(A) SPL", 1.0, "A-weighted input-referred noise of the bias supply "
       "through the bias resistor"),
    _n("response.aop_db_spl", "acoustic overload point", "dB SPL", "dB SPL", 1.0,
       "lowest SPL at which the THD reaches 10 % or the readout clips or reaches full scale"),
    _n("response.capsule_aop_db_spl", "capsule overload point (10 % THD)", "dB SPL", "dB SPL",
       1.0, "lowest SPL at which the capsule's own THD reaches 10 % (or it meets the backplate)"),
    _n("response.dynamic_range_db", "dynamic range", "dB", "dB", 1.0,
       "acoustic overload point minus the A-weighted noise floor"),
    _n("response.readout_clip_spl_db", "readout clipping at", "dB SPL", "dB SPL", 1.0,
       "SPL at 1 kHz whose amplitude at the readout input reaches its clipping level"),
    _n("response.readout_gain_db", "readout gain", "dB", "dB", 1.0, "voltage gain of the readout"),
    _n("response.readout_sensitivity_db_v_per_pa", "sensitivity after the readout",
       "dB re 1 V/Pa", "dB re 1 V/Pa", 1.0, "output level of the readout at 1 kHz"),
    _n("response.sensitivity_dbfs", "digital sensitivity", "dBFS", "dBFS", 1.0,
       "digital level of 94 dB SPL at 1 kHz (a full-scale sine is 0 dBFS)"),
    _n("response.full_scale_spl_db", "full scale at", "dB SPL", "dB SPL", 1.0,
       "SPL at 1 kHz of a full-scale (0 dBFS) sine"),
    _n("response.noise_contributions_dba_spl.diaphragm_damping",
       "noise: mechanical-thermal (film damping)", "dB(A) SPL", "dB(A) SPL", 1.0,
       "share of the film damping in the noise floor (packaged model)"),
    _n("response.noise_contributions_dba_spl.back_volume", "noise: back volume (thermal loss)",
       "dB(A) SPL", "dB(A) SPL", 1.0, "share of the back volume's wall heat exchange"),
    _n("response.noise_contributions_dba_spl.port", "noise: sound port", "dB(A) SPL",
       "dB(A) SPL", 1.0, "share of the sound port's viscous and thermal losses"),
    _n("response.noise_contributions_dba_spl.front_chamber", "noise: front chamber (thermal loss)",
       "dB(A) SPL", "dB(A) SPL", 1.0, "share of the front chamber's wall heat exchange"),
    _n("response.noise_contributions_dba_spl.radiation", "noise: radiation", "dB(A) SPL",
       "dB(A) SPL", 1.0, "share of the radiation resistance (port opening or diaphragm)"),
    _n("response.helmholtz_resonance_hz", "Helmholtz resonance of port and front chamber", "Hz",
       "kHz", 1e-3, "peak of the pressure at the diaphragm per free-field pressure"),
    _n("response.helmholtz_lossless_hz", "Helmholtz resonance, lossless formula", "Hz", "kHz",
       1e-3, "(c/2π)·√(S/(V·L_eff)) of port and front chamber alone", diagnostic=True),
    _n("response.thd_1pct_spl_db", "1 % THD at", "dB SPL", "dB SPL", 1.0,
       "sound pressure level at which the THD reaches 1 %"),
    _n("response.aop_10pct_spl_db", "10 % THD (acoustic overload) at", "dB SPL", "dB SPL", 1.0,
       "sound pressure level at which the THD reaches 10 %"),
    _n("response.thd_frequency_hz", "THD test frequency", "Hz", "Hz", 1.0,
       "frequency of the distortion analysis"),
    _n("response.distributed_sensitivity_db_v_per_pa", "sensitivity at 1 kHz, distributed FE",
       "dB re 1 V/Pa", "dB re 1 V/Pa", 1.0, "the same output from the distributed frequency-domain "
       "solve (FE plate, film with holes, back volume, radiation, charge-fed node)"),
    _n("response.reduction_error_db", "single-mode reduction error at 1 kHz", "dB", "dB", 1.0,
       "lumped minus distributed sensitivity at 1 kHz"),
    _n("response.distributed_dofs", "distributed solve unknowns", "", "", 1.0,
       "unknowns of the two mesh levels of the distributed solve", diagnostic=True),
    _n("response.distributed_peak_frequency_hz", "peak of the response, distributed FE", "Hz",
       "kHz", 1e-3, "frequency of the largest output of the distributed solve"),
    _n("response.distributed_peak_db_v_per_pa", "peak output, distributed FE", "dB re 1 V/Pa",
       "dB re 1 V/Pa", 1.0, "largest output level of the distributed solve"),
    _n("response.lumped_peak_frequency_hz", "peak of the output, lumped model", "Hz", "kHz", 1e-3,
       "frequency of the largest output of the lumped model"),
    _n("response.lumped_peak_db_v_per_pa", "peak output, lumped model", "dB re 1 V/Pa",
       "dB re 1 V/Pa", 1.0, "largest output level of the lumped model"),
    _n("response.reduction_error_peak_frequency", "single-mode reduction error, peak frequency",
       "", "%", 100.0, "lumped / distributed peak frequency − 1"),
    _n("response.reduction_error_peak_db", "single-mode reduction error, peak height", "dB", "dB",
       1.0, "lumped minus distributed peak output"),
    # ---- large deflection (von Kármán plate, anchored edge)
    _n("large_deflection.pressures_pa", "static pressures", "Pa", "Pa", 1.0,
       "the design's analysis.static_pressures (+ toward the backplate)"),
    _n("large_deflection.center_deflection_m", "centre deflection (von Kármán, no bias)", "m",
       "µm", 1e6, "centre deflection at each static pressure; none past contact"),
    _n("large_deflection.linear_center_deflection_m", "centre deflection (linear, no bias)", "m",
       "µm", 1e6, "the small-deflection prediction at the same pressures"),
    _n("large_deflection.contact_pressure_pa", "contact pressure, no bias", "Pa", "Pa", 1.0,
       "uniform pressure at which the centre reaches the backplate or stopper"),
    _n("large_deflection.clearance_m", "travel to contact (gap or stopper)", "m", "µm", 1e6,
       "rest gap less the stopper height"),
    _n("large_deflection.mesh_dofs", "large-deflection unknowns", "", "", 1.0,
       "unknowns of the two mesh levels", diagnostic=True),
    _n("large_deflection.audit_spl_db", "level of the small-deflection check", "dB SPL", "dB SPL",
       1.0, "the largest level of interest (overload point, else 120 dB SPL)"),
    _n("large_deflection.audit_pressure_pa", "pressure of the small-deflection check", "Pa", "Pa",
       1.0, "sine peak of that level"),
    _n("large_deflection.audit_center_deflection_m", "centre deflection there (von Kármán)", "m",
       "nm", 1e9, "von Kármán centre deflection at the check pressure"),
    _n("large_deflection.audit_linear_center_deflection_m", "centre deflection there (linear)",
       "m", "nm", 1e9, "linear centre deflection at the check pressure"),
    _n("large_deflection.contact_pressure_at_bias_pa", "contact pressure at bias", "Pa", "Pa", 1.0,
       "pressure toward the backplate at which the biased diaphragm touches it"),
    _n("large_deflection.contact_spl_db_at_bias", "contact level at bias (sine peak)", "dB SPL",
       "dB SPL", 1.0, "sound pressure level whose peak reaches that pressure"),
    _n("large_deflection.thd_10pct_spl_db_quasistatic", "10 % THD point (quasi-static)", "dB SPL",
       "dB SPL", 1.0, "from the nonlinear quasi-static transfer: stiffening, electrostatic force "
       "and C(x) up to contact"),
    # ---- drift over the operating temperatures (one entry per temperature)
    _n("temperature_sweep.temperature_k", "temperature", "K", "K", 1.0,
       "operating temperature of the point (air and diaphragm)"),
    _n("temperature_sweep.residual_stress_pa", "residual stress at temperature", "Pa", "MPa",
       1e-6, "σ0 − E/(1−ν)(α_film − α_substrate)(T − T0), tensile positive"),
    _n("temperature_sweep.sensitivity_db_v_per_pa", "sensitivity at 1 kHz", "dB re 1 V/Pa",
       "dB re 1 V/Pa", 1.0, "open-circuit output level at 1 kHz at this temperature"),
    _n("temperature_sweep.resonance_hz", "resonance in air (lumped model)", "Hz", "kHz", 1e-3,
       "resonance of the lumped model at this temperature"),
    _n("temperature_sweep.pull_in_voltage_v", "pull-in voltage", "V", "V", 1.0,
       "FE pull-in voltage at this temperature"),
    _n("temperature_sweep.noise_dba_spl", "noise floor", "dB(A) SPL", "dB(A) SPL", 1.0,
       "A-weighted input-referred noise at this temperature"),
    _n("temperature_sweep.natural_frequency_hz", "natural frequency in vacuum (mode 1, no bias)",
       "Hz", "kHz", 1e-3, "FE mode-1 frequency at this temperature's stress"),
    _n("temperature_sweep.critical_stress_pa", "buckling stress (compressive)", "Pa", "MPa",
       1e-6, "compressive stress at which the flat diaphragm buckles (Timoshenko & Gere)"),
    # ---- response.csv columns
    _n("response_csv.frequency_hz", "frequency", "Hz", "Hz", 1.0, "frequency"),
    _n("response_csv.magnitude_db_v_per_pa", "response magnitude", "dB re 1 V/Pa", "dB re 1 V/Pa",
       1.0, "20·log10 |V_out/p|"),
    _n("response_csv.phase_deg", "response phase", "°", "°", 1.0,
       "arg(V_out/p), unwrapped along frequency"),
    _n("response_csv.magnitude_v_per_pa", "response magnitude (linear)", "V/Pa", "mV/Pa", 1e3,
       "|V_out/p|"),
]

#: every named output, by ``section.key``
NAMES: dict[str, Name] = {n.key: n for n in _ROWS}

#: the key results of a design, in this order: what a sweep plots against its inputs
KEY_OUTPUTS = (
    "response.sensitivity_db_v_per_pa", "response.snr_db", "response.noise_dba_spl",
    "coupled.pull_in_voltage_v", "coupled.bias_margin", "mechanics.natural_frequencies_hz_1",
    "coupled.resonance_at_bias_hz", "response.resonance_hz", "response.quality_factor",
    "response.highpass_corner_hz", "response.acoustic_corner_hz", "response.thd_1pct_spl_db",
    "response.aop_10pct_spl_db", "electrostatics.rest_capacitance_f",
    "electrostatics.capacitance_slope_f_per_m", "electrostatics.perforation_factor",
    "damping.damping_n_s_per_m", "damping.cutoff_frequency_hz",
    "mechanics.center_compliance_m_per_pa",
)

#: text (non-numeric) summary keys, shown as they are
TEXT_KEYS = ("mechanics.model", "mechanics.accuracy", "damping.perforation.lattice",
             "mechanics.backplate_plate.lattice",
             "response.thd_limit_note", "coupled.note", "response.scope",
             "response.aop_limited_by", "response.aop_note")

#: summary keys holding a list of numbers (a study or a sweep names one entry: ``_1``, ``_2``)
LIST_KEYS = ("mechanics.natural_frequencies_hz", "mechanics.distinct_frequencies_hz",
             "mechanics.backplate_natural_frequencies_hz", "mechanics.mesh_dofs",
             "response.distributed_dofs", "large_deflection.mesh_dofs",
             "large_deflection.linear_center_deflection_m", "large_deflection.pressures_pa",
             "large_deflection.center_deflection_m")

# design inputs (sweep axes): (section.key of the design file) → (label, SI unit, unit, scale)
_INPUTS = {
    "diaphragm.radius": ("diaphragm radius", "m", "µm", 1e6),
    "diaphragm.side": ("diaphragm side", "m", "µm", 1e6),
    "diaphragm.thickness": ("diaphragm thickness", "m", "µm", 1e6),
    "diaphragm.youngs_modulus": ("Young's modulus", "Pa", "GPa", 1e-9),
    "diaphragm.poisson_ratio": ("Poisson's ratio", "", "", 1.0),
    "diaphragm.density": ("diaphragm density", "kg/m³", "kg/m³", 1.0),
    "diaphragm.residual_stress": ("residual stress, tensile positive", "Pa", "MPa", 1e-6),
    "backplate.gap": ("gap at rest", "m", "µm", 1e6),
    "backplate.thickness": ("backplate thickness", "m", "µm", 1e6),
    "backplate.electrode_radius": ("electrode radius", "m", "µm", 1e6),
    "backplate.electrode_side": ("electrode side", "m", "µm", 1e6),
    "backplate.hole_radius": ("hole radius", "m", "µm", 1e6),
    "backplate.hole_pitch": ("hole pitch", "m", "µm", 1e6),
    "backplate.youngs_modulus": ("backplate Young's modulus", "Pa", "GPa", 1e-9),
    "backplate.residual_stress": ("backplate residual stress", "Pa", "MPa", 1e-6),
    "acoustics.back_volume": ("back volume", "m³", "mm³", 1e9),
    "acoustics.vent_resistance": ("vent resistance", "Pa·s/m³", "Pa·s/m³", 1.0),
    "acoustics.temperature": ("temperature", "K", "K", 1.0),
    "acoustics.static_pressure": ("static pressure", "Pa", "kPa", 1e-3),
    "acoustics.back_volume_area": ("back volume wall area", "m²", "mm²", 1e6),
    "acoustics.vent_radius": ("vent radius", "m", "µm", 1e6),
    "acoustics.vent_slot_width": ("vent slot width", "m", "µm", 1e6),
    "acoustics.vent_slot_height": ("vent slot height", "m", "µm", 1e6),
    "acoustics.vent_length": ("vent length", "m", "µm", 1e6),
    "port.radius": ("port radius", "m", "mm", 1e3),
    "port.slot_width": ("port slot width", "m", "mm", 1e3),
    "port.slot_height": ("port slot height", "m", "mm", 1e3),
    "port.length": ("port length", "m", "mm", 1e3),
    "front.volume": ("front chamber volume", "m³", "mm³", 1e9),
    "front.wall_area": ("front chamber wall area", "m²", "mm²", 1e6),
    "electrical.bias_voltage": ("bias voltage", "V", "V", 1.0),
    "electrical.bias_resistance": ("bias resistance", "Ω", "GΩ", 1e-9),
    "electrical.parasitic_capacitance": ("parasitic capacitance", "F", "pF", 1e12),
    "electrical.preamp_input_capacitance": ("preamp input capacitance", "F", "pF", 1e12),
    "readout.noise_density": ("readout noise density", "V/√Hz", "nV/√Hz", 1e9),
    "readout.noise_corner": ("readout 1/f corner", "Hz", "Hz", 1.0),
    "readout.gain": ("readout gain", "", "", 1.0),
    "readout.gain_db": ("readout gain", "dB", "dB", 1.0),
    "readout.input_capacitance": ("readout input capacitance", "F", "pF", 1e12),
    "readout.clip_amplitude": ("readout clipping amplitude (peak)", "V", "V", 1.0),
    "readout.full_scale_input": ("full-scale input amplitude (peak)", "V", "V", 1.0),
    "readout.full_scale_spl": ("full-scale SPL", "dB SPL", "dB SPL", 1.0),
    "readout.charge_pump_resistance": ("charge-pump source resistance", "Ω", "MΩ", 1e-6),
    "readout.charge_pump_noise": ("charge-pump noise density", "V/√Hz", "nV/√Hz", 1e9),
    "diaphragm.thermal_expansion": ("diaphragm thermal expansion", "1/K", "ppm/K", 1e6),
    "diaphragm.stress_reference_temperature": ("temperature of the given residual stress", "K",
                                               "K", 1.0),
    "substrate.thermal_expansion": ("substrate thermal expansion", "1/K", "ppm/K", 1e6),
    "layers.backplate_thickness": ("backplate layer thickness", "m", "µm", 1e6),
    "layers.backplate_permittivity": ("backplate layer permittivity", "", "", 1.0),
    "layers.diaphragm_thickness": ("diaphragm layer thickness", "m", "µm", 1e6),
    "layers.diaphragm_permittivity": ("diaphragm layer permittivity", "", "", 1.0),
    "electret.charge_density": ("electret charge density", "C/m²", "mC/m²", 1e3),
}
INPUT_NAMES: dict[str, Name] = {
    k: Name(k, label, si, unit, scale, f"design input {k}")
    for k, (label, si, unit, scale) in _INPUTS.items()}

_INDEXED = re.compile(r"(.*)_(\d+)$")
_BREAKDOWN = "response.noise_breakdown_dba."


def lookup(key: str) -> Name | None:
    """The :class:`Name` of a summary key, also of a flattened list element.

    ``"mechanics.natural_frequencies_hz_1"`` → "natural frequency in vacuum (mode 1, no bias)".
    """
    if key in NAMES:
        return NAMES[key]
    if key.startswith(_BREAKDOWN):  # a noise source without a row of its own
        source = key[len(_BREAKDOWN):]
        return Name(key, f"noise source: {source.replace('_', ' ')}", "dB(A) SPL", "dB(A) SPL",
                    1.0, f"A-weighted input-referred noise of {source.replace('_', ' ')}")
    m = _INDEXED.fullmatch(key)
    if m and m.group(1) in NAMES:
        base, i = NAMES[m.group(1)], int(m.group(2))
        if base.key == "mechanics.natural_frequencies_hz":
            label = f"natural frequency in vacuum (mode {i}, no bias)"
        elif base.key == "mechanics.distinct_frequencies_hz":
            label = f"natural frequency in vacuum (distinct mode {i}, no bias)"
        else:
            label = f"{base.label} ({i})"
        return Name(key, label, base.si_unit, base.unit, base.scale, base.description,
                    base.diagnostic)
    return None


def input_name(path: str) -> Name | None:
    """The :class:`Name` of a design input (``backplate.hole_radius``), None if unknown."""
    return INPUT_NAMES.get(path)


def format_display(value: float, digits: int = 5) -> str:
    """A display value as plain text with ``digits`` significant digits (``-`` for None)."""
    if value is None:
        return "-"
    x = float(value)
    if not math.isfinite(x):
        return "-"
    return f"{x:.{digits}g}"


def display_text(key: str, value: float, digits: int = 4) -> str:
    """``value`` (SI) of ``key`` in its display unit: ``"87.45 µN·s/m"``."""
    n = lookup(key)
    if n is None:
        return format_display(value, digits)
    text = format_display(None if value is None else n.display(value), digits)
    return f"{text} {n.unit}".rstrip()
