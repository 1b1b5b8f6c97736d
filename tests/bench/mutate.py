"""Mutation testing of the physics core: plant one physics bug at a time, run the tests that
should notice it, count how many go red.

Usage (from the repository root, in the development venv; not part of CI)::

    python tests/bench/mutate.py             # every mutation, table + kill rate
    python tests/bench/mutate.py -k noise,air  # only mutations whose id contains "noise" or "air"
    python tests/bench/mutate.py --list      # the mutations and their tests, nothing run

Each mutation is a textual replacement in one source file (the original text must occur exactly
once). The repository is copied to a temporary folder laid out as the installed package
(``pkg/diagap`` = app/, ``pkg/diagap/fem`` = fem/, …) and the tests run there with
``PYTHONPATH`` pointing at that copy, so the working tree is never modified; each mutation is
undone in the copy before the next. The named tests run with ``-x -q``; tests/conftest.py gives
every run a fresh on-disk cache, so no cached solution can hide a mutation.

A mutation is *killed* when its tests fail, *survives* when they pass, and is a *timeout* when
they run longer than ``--timeout`` seconds (counted as not killed). The baseline (no mutation)
must pass first. The kill rate and the survivors (with the reason) are recorded in DEVELOPERS.md
("Mutation testing").
"""
from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
ROOMS = {"app": "diagap", "fem": "diagap/fem", "lumped": "diagap/lumped",
         "meshes": "diagap/meshes"}


@dataclass(frozen=True)
class Mutation:
    id: str
    path: str          # repository path of the mutated file
    old: str
    new: str
    tests: tuple[str, ...]
    what: str


def M(id, path, old, new, tests, what):  # noqa: N802  (table helper)
    return Mutation(id, path, old, new, tuple(tests.split()), what)


T = "tests/"
PLATE = T + "test_plate_validation.py"
MUTATIONS = [
    # ------------------------------------------------------------------ plate (fem/plate)
    M("plate-rigidity-1-nu", "fem/plate/solver.py", "(12.0 * (1.0 - nu * nu))", "(12.0 * (1.0 - nu))",
      PLATE + "::test_clamped_disk_published_values", "D = Eh³/12(1−ν) instead of 12(1−ν²)"),
    M("plate-tension-half", "fem/plate/solver.py",
      "return self.residual_stress_pa * self.thickness_m", "return 0.5 * self.residual_stress_pa * self.thickness_m",
      PLATE + "::test_clamped_disk_exact", "T = σh/2"),
    M("plate-areal-density", "fem/plate/solver.py",
      "return self.density_kg_m3 * self.thickness_m", "return 1.02 * self.density_kg_m3 * self.thickness_m",
      PLATE + "::test_clamped_disk_published_values", "ρh 2 % high"),
    M("plate-gauss-term-sign", "fem/plate/system.py",
      'P["lap"] - (1 - self.poisson_ratio) * P["gauss"]', 'P["lap"] - (1 + self.poisson_ratio) * P["gauss"]',
      PLATE + "::test_simply_supported_disk", "(1+ν) on the Gauss-curvature term"),
    M("plate-stiffness-tension-form", "fem/plate/system.py",
      'self.tension_n_per_m * P["tension"]', '0.5 * self.tension_n_per_m * P["tension"]',
      PLATE + "::test_clamped_disk_exact", "half the tension in the stiffness"),
    M("plate-mass-matrix", "fem/plate/system.py",
      'M = self.areal_density_kg_m2 * self.length_m**2 * self.parts["mass"]',
      'M = 1.01 * self.areal_density_kg_m2 * self.length_m**2 * self.parts["mass"]',
      PLATE + "::test_clamped_disk_published_values", "mass matrix 1 % high"),
    M("plate-ss-curvature-constraint", "fem/plate/bc.py",
      "return x / r, 1.0 / r,", "return x / r, 0.0 / r,",
      PLATE + "::test_simply_supported_disk", "curved simply supported edge without w_tt = κ w_n"),
    M("membrane-edge-shrink", "fem/plate/membrane.py",
      "return math.sqrt(problem.bending_stiffness / problem.tension_n_per_m)",
      "return math.sqrt(2.0 * problem.bending_stiffness / problem.tension_n_per_m)",
      PLATE + "::test_membrane_dominated_disk_against_plate_with_tension", "edge layer √(2D/T)"),
    M("membrane-bending-correction", "fem/plate/membrane.py",
      "lam = lam * (1.0 + self.bending_stiffness_nm", "lam = lam * (1.0 + 0.0 * self.bending_stiffness_nm",
      PLATE + "::test_membrane_model_near_its_threshold",
      "no (1 + D k²/T) frequency correction"),
    # ------------------------------------------------------- electrostatics (fem/field)
    M("cell-axisymmetric-weight", "fem/forms.py",
      "return dot(grad(u), grad(v)) * (2.0 * np.pi) * w.x[0]", "return dot(grad(u), grad(v)) * (2.0 * np.pi)",
      T + "test_cell_capacitance.py::test_axisymmetric_cell_matches_3d_cell",
      "axisymmetric energy without the r weight"),
    M("cell-hex-area", "fem/field/cell.py", "math.sqrt(3.0) / 2.0 if lattice", "math.sqrt(3.0) / 3.0 if lattice",
      T + "test_cell_capacitance.py::test_demo_cell_loss_is_plausible", "hexagonal cell area √3/3 p²"),
    M("cell-density-drops-factor", "fem/field/cell.py",
      "capacitance_density_f_per_m2=EPSILON_0_F_PER_M / gap_m * pf,", "capacitance_density_f_per_m2=EPSILON_0_F_PER_M / gap_m,",
      T + "test_cell_capacitance.py::test_perforated_cell_between_variational_bounds",
      "capacitance density without the perforation factor"),
    M("cell-table-density", "fem/field/cell_table.py",
      "return EPSILON_0_F_PER_M * self.perforation_factor(g) / g", "return EPSILON_0_F_PER_M * self.perforation_factor(g) / g * 1.002",
      T + "test_device_capacitance.py::test_table_fit_and_slope", "c(g) 0.2 % high"),
    M("cell-table-derivative", "fem/field/cell_table.py",
      "(-A / gh**2 + k1 / gh + k2)", "(-A / gh**2 + k1 / gh)",
      T + "test_device_capacitance.py::test_table_fit_and_slope", "dc/dg drops the linear term"),
    M("rim-subtracts-overlap", "fem/field/rim.py",
      "return EPSILON_0_F_PER_M * g * (energy - math.pi * overlap**2)", "return EPSILON_0_F_PER_M * g * energy",
      T + "test_kirchhoff_disks.py::test_rim_fringing_of_equal_thin_disks_is_kirchhoffs_edge_term",
      "rim fringing includes the parallel-plate part"),
    M("rim-log-extension", "fem/field/rim.py",
      "extra = EPSILON_0_F_PER_M / (2 * math.pi) * math.log(1.0 / f) * perimeter",
      "extra = EPSILON_0_F_PER_M / math.pi * math.log(1.0 / f) * perimeter",
      T + "test_rim_scaling.py", "edge law ε0/π ln instead of ε0/(2π) ln"),
    M("device-slope-shape", "fem/field/device.py",
      "dC = -(c_density.derivative(g_local) * phi) @ w", "dC = -(c_density.derivative(g_local)) @ w",
      T + "test_device_capacitance.py::test_clamped_shape_matches_closed_form",
      "dC/dx without the mode shape"),
    M("device-capacitance-shape", "fem/field/device.py",
      "g_local = gap - np.outer(xs, phi)", "g_local = gap - np.outer(xs, np.sqrt(np.abs(phi)))",
      T + "test_device_capacitance.py::test_clamped_shape_matches_closed_form",
      "local gap with √φ"),
    # ------------------------------------------------------------ coupling (fem/coupling)
    M("coupling-force-factor", "fem/coupling/branch.py",
      "self.W * 0.5 * self.load.pressure_per_v2(gl)", "self.W * self.load.pressure_per_v2(gl)",
      T + "test_coupled_piston.py::test_piston_pull_in_matches_nathanson", "electrostatic pressure ε0V²/g²"),
    M("coupling-load-slope", "fem/coupling/branch.py",
      "lambda g: -2.0 * eps0 / g**3", "lambda g: -1.0 * eps0 / g**3",
      T + "test_coupled_piston.py::test_piston_equilibrium_and_softening", "dπ/dg off by 2"),
    M("coupling-modes-2pi", "fem/coupling/branch.py",
      "return np.sqrt(np.maximum(vals, 0.0)) / (2 * np.pi)", "return np.sqrt(np.maximum(vals, 0.0)) / np.pi",
      T + "test_coupled_piston.py::test_piston_equilibrium_and_softening", "f = ω/π"),
    M("coupling-plate-weights", "fem/coupling/plate.py",
      "weights = (basis.dx[elems] * L**2).ravel()", "weights = (basis.dx[elems] * L**2 * 0.9).ravel()",
      T + "test_coupled_plate.py::test_membrane_limit_pull_in_parameter", "electrode area 10 % low"),
    # ------------------------------------------------------------------- film (fem/film)
    M("squeeze-z0", "fem/film/squeeze.py", "z0 = 12.0 * mu * scale**4 / g**3", "z0 = 6.0 * mu * scale**4 / g**3",
      T + "test_squeeze.py::test_rigid_disk_matches_griffin", "Reynolds prefactor 6μ"),
    M("squeeze-sink", "fem/film/squeeze.py",
      "alpha = 12.0 * mu * scale**2 * sink / g**3", "alpha = 6.0 * mu * scale**2 * sink / g**3",
      T + "test_squeeze.py::test_clamped_shape_with_sink_matches_bessel_solution", "hole sink halved"),
    M("squeeze-number", "fem/film/squeeze.py",
      "sigma_per_omega = 12.0 * mu * scale**2 / (p0 * g**2)", "sigma_per_omega = 12.0 * mu * scale**2 / (p0 * g**2) * 1.1",
      T + "test_squeeze.py::test_disk_cutoff_matches_bessel_crossing", "squeeze number 10 % high"),
    M("squeeze-gas-spring", "fem/film/squeeze.py",
      "gas_spring_stiffness_n_per_m=p0 * scale**2 * levels[2].phi_sq / g",
      "gas_spring_stiffness_n_per_m=1.4 * p0 * scale**2 * levels[2].phi_sq / g",
      T + "test_squeeze.py::test_disk_spectrum_matches_bessel_solution_and_limits", "adiabatic gas spring"),
    M("perforation-veijola-exponent", "fem/film/perforation.py",
      "return 1.0 + 9.638 * kn**1.159", "return 1.0 + 9.638 * kn**1.5",
      T + "test_squeeze.py::test_rarefaction_factor_veijola", "Veijola exponent"),
    M("perforation-poiseuille", "fem/film/perforation.py",
      "return 8.0 * mu * ell / (math.pi * r**4)", "return 8.0 * mu * ell / (math.pi * r**3)",
      T + "test_squeeze.py::test_hole_resistance_limits", "Hagen–Poiseuille r³"),
    M("perforation-sampson", "fem/film/perforation.py", "return 3.0 * mu / r**3", "return 2.0 * mu / r**3",
      T + "test_squeeze.py::test_hole_resistance_limits", "Sampson 2μ/r³"),
    M("perforation-bao-cell", "fem/film/perforation.py",
      "(4 * a - a * a - 2 * math.log(a) - 3)", "(4 * a - a * a - math.log(a) - 3)",
      T + "test_squeeze.py::test_annulus_cell_damping_is_bao_formula", "cell damping log term"),
    M("perforation-hex-area", "fem/film/perforation.py",
      "return 0.5 * math.sqrt(3.0) * p * p", "return math.sqrt(3.0) * p * p",
      T + "test_squeeze.py::test_demo_perforation_numbers", "hexagonal cell area √3 p²"),
    # ------------------------------------------------------------------------ air (fem/air)
    M("air-mean-free-path", "fem/air.py", "math.sqrt(math.pi * r * t / 2.0)", "math.sqrt(math.pi * r * t)",
      T + "test_air.py", "mean free path √2 high"),
    M("air-sutherland", "fem/air.py", "(t / _T_REF_K) ** 1.5", "(t / _T_REF_K) ** 1.4",
      T + "test_air.py", "Sutherland exponent"),
    M("air-sound-speed", "fem/air.py", "math.sqrt(HEAT_CAPACITY_RATIO * r * t)", "math.sqrt(r * t)",
      T + "test_air.py", "isothermal sound speed"),
    # -------------------------------------------------------------- lumped model / circuit
    M("model-back-volume-isothermal", "lumped/model.py",
      "return self.back_volume_m3 / (self.gamma * self.static_pressure_pa)",
      "return self.back_volume_m3 / self.static_pressure_pa",
      T + "test_response.py::test_acoustic_corner_from_vent", "back-volume compliance V/p0"),
    M("model-transduction", "lumped/model.py",
      "return self.bias_voltage_v * self.capacitance_slope_f_per_m",
      "return 0.9 * self.bias_voltage_v * self.capacitance_slope_f_per_m",
      T + "test_response.py::test_matches_independent_state_space_model", "Γ = 0.9 V dC/dx"),
    M("model-piston-ke", "lumped/model.py",
      "electrostatic_stiffness_n_per_m=bias_voltage_v**2 * eps_a / d**3,",
      "electrostatic_stiffness_n_per_m=0.5 * bias_voltage_v**2 * eps_a / d**3,",
      T + "test_response.py::test_matches_independent_state_space_model", "k_e halved (piston)"),
    M("model-curve-ke", "lumped/model.py",
      "electrostatic_stiffness_n_per_m=float(0.5 * bias_voltage_v**2 * cc.curvature(xb)),",
      "electrostatic_stiffness_n_per_m=float(bias_voltage_v**2 * cc.curvature(xb)),",
      T + "test_response.py::test_capacitance_curve_model_matches_piston", "k_e = V²C'' (from C(x))"),
    M("circuit-damping", "lumped/circuit.py", "+ b / a**2 + k_branch", "+ 1.1 * b / a**2 + k_branch",
      T + "test_response.py::test_matches_independent_state_space_model", "damping 10 % high"),
    M("circuit-vent", "lumped/circuit.py", "y_b = 1j * w * c_bv + 1.0 / r_v", "y_b = 1j * w * c_bv + 0.5 / r_v",
      T + "test_response.py::test_matches_independent_state_space_model", "vent conductance halved"),
    M("circuit-electrical-branch", "lumped/circuit.py", "z = z_d + model.radiation_impedance(f) + 1.0 / y_b + g**2 / y_e",
      "z = z_d + model.radiation_impedance(f) + 1.0 / y_b + 0.5 * g**2 / y_e",
      T + "test_response.py::test_matches_independent_state_space_model", "electrical branch halved"),
    M("circuit-readout-parasitic", "lumped/circuit.py", "return q / ct, -q * c1 / ct**2, 1.0 / ct",
      "return q / (ct + self.cpar), -q * c1 / ct**2, 1.0 / ct",
      T + "test_distortion.py::test_harmonic_balance_matches_independent_time_integration",
      "nonlinear readout counts the parasitic twice"),
    M("circuit-linear-force", "lumped/circuit.py",
      "self.k_lin = 0.5 * self.vb**2 * c2 - self.vb**2 * c1**2 / self.ct0",
      "self.k_lin = 0.5 * self.vb**2 * c2",
      T + "test_distortion.py::test_readout_second_harmonic_matches_taylor_expansion",
      "linearised force without the charge term"),
    # ----------------------------------------------------------------- response and noise
    M("response-resistor-noise", "lumped/response.py",
      "return 4.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.bias_resistance_ohm",
      "return 2.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.bias_resistance_ohm",
      T + "test_response.py::test_output_noise_obeys_nyquist", "resistor noise 2kTR"),
    M("response-damping-noise", "lumped/response.py",
      "return 4.0 * BOLTZMANN_J_PER_K * model.temperature_k * b * np.abs(h) ** 2",
      "return 2.0 * BOLTZMANN_J_PER_K * model.temperature_k * b * np.abs(h) ** 2",
      T + "test_response.py::test_output_noise_obeys_nyquist", "halved mechanical-thermal noise"),
    M("response-vent-noise", "lumped/response.py",
      "return (4.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.vent_resistance_pa_s_per_m3",
      "return (2.0 * BOLTZMANN_J_PER_K * model.temperature_k * model.vent_resistance_pa_s_per_m3",
      T + "test_response.py::test_output_noise_obeys_nyquist", "vent noise 2kTR"),
    M("response-rc-corner", "lumped/response.py",
      "f_e = 1.0 / (2.0 * np.pi * model.electrical_time_constant_s)",
      "f_e = 1.0 / (np.pi * model.electrical_time_constant_s)",
      T + "test_response.py::test_electrical_corner_is_rc_of_node_capacitance", "RC corner 1/(πRC)"),
    M("noise-4kT-halved", "lumped/noise.py", "force = 4.0 * BOLTZMANN_J_PER_K", "force = 2.0 * BOLTZMANN_J_PER_K",
      T + "test_noise.py::test_force_noise_is_4kTb", "halved thermal-noise factor 2kTb"),
    M("noise-weighting-not-squared", "lumped/noise.py",
      "simpson(sg * a_weighting_gain(grid) ** 2 * grid", "simpson(sg * a_weighting_gain(grid) * grid",
      T + "test_noise.py::test_a_weighted_level_vs_quadrature", "|A| instead of |A|² in the integral"),
    M("noise-spl-reference", "fem/constants.py", "P_REF_PA: float = 20e-6", "P_REF_PA: float = 2e-5 * 1.01",
      T + "test_noise.py::test_spl_reference", "p_ref 1 % high"),
    # ------------------------------------------------------------------------ distortion
    M("distortion-rms-amplitude", "lumped/distortion.py",
      "return math.sqrt(2.0) * P_REF_PA * 10.0 ** (spl_db / 20.0)", "return P_REF_PA * 10.0 ** (spl_db / 20.0)",
      T + "test_distortion.py::test_readout_second_harmonic_matches_taylor_expansion",
      "SPL taken as the amplitude (no √2)"),
    M("distortion-back-volume", "lumped/distortion.py",
      "+ model.area_m2**2 / model.back_volume_compliance_m3_per_pa * h_v)",
      "+ model.area_m2**2 / model.back_volume_compliance_m3_per_pa)",
      T + "test_distortion.py::test_fundamental_matches_linear_response", "back volume without the vent"),
    M("distortion-thd-sum", "lumped/distortion.py",
      "return float(np.sqrt(np.sum(np.abs(vh[2:]) ** 2)) / np.abs(vh[1]))",
      "return float(np.sqrt(np.sum(np.abs(vh[3:]) ** 2)) / np.abs(vh[1]))",
      T + "test_distortion.py::test_thd_grows_with_pressure_at_small_spl", "THD without HD2"),
    # ------------------------------------------------------------------------- weighting
    M("weighting-normalisation", "lumped/weighting.py", "_A1000_DB = 2.00", "_A1000_DB = 1.90",
      T + "test_noise.py::test_a_weighting_normalisation_and_gain", "A(1 kHz) = −0.1 dB"),
    M("weighting-pole", "lumped/weighting.py", "(20.599, 107.653, 737.862, 12194.217)",
      "(20.599, 107.653, 737.862, 10194.217)",
      T + "test_noise.py::test_a_weighting_matches_iec_table", "upper pole 10.2 kHz"),
    # -------------------------------------------------------------------------- analytic
    M("analytic-piston-pull-in", "lumped/analytic.py", "math.sqrt(8.0 * stiffness_n_per_m * gap_m**3 / (27.0",
      "math.sqrt(4.0 * stiffness_n_per_m * gap_m**3 / (27.0",
      T + "test_analytic.py", "V_PI with 4/27"),
    M("analytic-ss-plate", "lumped/analytic.py", "w * (5.0 + poisson_ratio) / (1.0 + poisson_ratio)",
      "w * (3.0 + poisson_ratio) / (1.0 + poisson_ratio)", T + "test_analytic.py",
      "simply supported (3+ν)/(1+ν)"),
    M("analytic-griffin", "lumped/analytic.py", "radius_m**4 / (2.0 * gap_m**3)", "radius_m**4 / (gap_m**3)",
      T + "test_analytic.py", "Griffin without the 1/2"),
    M("analytic-membrane-square", "lumped/analytic.py", "total += sign * 16.0 / (math.pi**4",
      "total += sign * 8.0 / (math.pi**4", T + "test_closed_forms.py", "square membrane series 8/π⁴"),
    M("buckling-clamped-square", "lumped/buckling.py", "k = 5.30 if edge", "k = 4.00 if edge",
      T + "test_closed_forms.py", "clamped-square buckling coefficient 4"),
    # ------------------------------ second round: subtler changes, error estimates, helpers
    M("levels-richardson-order", "fem/richardson.py", "est = est / (ratio ** np.asarray(order, dtype=float) - 1.0)",
      "est = est / (ratio ** (2.0 * np.asarray(order, dtype=float)) - 1.0)",
      T + "test_plate_convergence.py::test_richardson_estimate_is_exact_for_a_power_law "
      + PLATE + "::test_clamped_disk_exact",
      "Richardson estimate with twice the order (too optimistic)"),
    M("cell-corner-order", "fem/field/cell.py", "CORNER_ORDER = 4.0 / 3.0", "CORNER_ORDER = 3.0",
      T + "test_cell_capacitance.py::test_convergence_under_rim_refinement",
      "cell error estimate assumes order 3"),
    M("membrane-model-error", "fem/plate/membrane.py", "return 3.0 / tau", "return 0.3 / tau",
      PLATE + "::test_membrane_dominated_disk_against_plate_with_tension "
      + PLATE + "::test_membrane_model_near_its_threshold", "membrane model error 10× too small"),
    M("device-error-estimate", "fem/field/device.py", "rel_error=(c_rel * area_part + rim_err) / C0",
      "rel_error=0.1 * (c_rel * area_part + rim_err) / C0",
      T + "test_device_capacitance.py::test_perforated_device_curve",
      "device C error estimate 10× too small"),
    M("plate-effective-stiffness", "fem/plate/solver.py",
      '"effective_stiffness_n_per_m": float(omega2[0]) * m_eff',
      '"effective_stiffness_n_per_m": 1.01 * float(omega2[0]) * m_eff',
      PLATE + "::test_clamped_disk_exact", "effective stiffness 1 % high"),
    M("rim-square-perimeter", "fem/field/rim.py",
      "perimeter = 2 * math.pi * electrode_radius_m if circle else 8 * electrode_radius_m",
      "perimeter = 2 * math.pi * electrode_radius_m if circle else 4 * electrode_radius_m",
      T + "test_device_capacitance.py::test_square_rim_uses_perimeter", "square electrode perimeter 4a"),
    M("air-density", "fem/air.py", "density_kg_per_m3=p / (r * t),", "density_kg_per_m3=1.002 * p / (r * t),",
      T + "test_air.py", "density 0.2 % high"),
    M("film-viscosity-knudsen", "fem/film/perforation.py", "return mu / rarefaction_factor(lam / g)",
      "return mu / rarefaction_factor(2.0 * lam / g)",
      T + "test_squeeze.py::test_rarefaction_factor_veijola", "Knudsen number on half the gap"),
    M("squeeze-film-stiffness-sign", "fem/film/squeeze.py", "film_stiffness_n_per_m=-omega * z0 * spectra[2].imag",
      "film_stiffness_n_per_m=omega * z0 * spectra[2].imag",
      T + "test_squeeze.py::test_disk_spectrum_matches_bessel_solution_and_limits", "film stiffness sign"),
    M("model-elastance-slope", "lumped/model.py", "        return -s1 / s**2\n", "        return s1 / s**2\n",
      T + "test_distortion.py", "C'(x) sign from the elastance spline"),
    M("transducer-bias-force", "lumped/circuit.py", "self.f0 = 0.5 * self.vb**2 * c1",
      "self.f0 = 0.5 * self.vb**2 * c1 * 1.01",
      T + "test_distortion.py::test_harmonic_balance_matches_independent_time_integration",
      "bias force 1 % off (static offset)"),
    M("response-minus-3db", "lumped/response.py", "target = _h_abs(model, f_ref) / np.sqrt(2.0)",
      "target = _h_abs(model, f_ref) / 2.0", T + "test_response.py", "−6 dB taken as the corner"),
    M("response-q-step", "lumped/response.py", "h = 1e-5 * fr", "h = 3e-2 * fr",
      T + "test_response.py::test_resonance_and_q_closed_form", "coarse difference step for Q"),
    M("distortion-truncation-estimate", "lumped/distortion.py",
      "upper = np.sqrt(np.sum(np.abs(vh[n_harm // 2 + 1:]) ** 2))",
      "upper = np.sqrt(np.sum(np.abs(vh[n_harm - 1:]) ** 2))",
      T + "test_distortion.py", "harmonic truncation estimate from the last harmonics only"),
    M("weighting-band", "lumped/weighting.py", "AUDIO_BAND_HZ = (20.0, 20000.0)",
      "AUDIO_BAND_HZ = (20.0, 16000.0)", T + "test_noise.py", "noise band to 16 kHz"),
    M("coupling-pull-in-estimate", "fem/coupling/plate.py",
      "relative_error(coarse[key], fine[key], 2.0, ratio, floor=NOISE_FLOOR)",
      "relative_error(coarse[key], fine[key], 4.0, ratio, floor=NOISE_FLOOR)",
      T + "test_coupled_plate.py::test_pull_in_converges_under_refinement",
      "pull-in error estimate with twice the order (too optimistic)"),
    # ------------------------------------------------------- package: tubes, cavities, noise
    M("tube-viscous-function", "lumped/tubes.py",
      "return -special.jve(2, z) / special.jve(0, z)", "return -special.jve(2, z) / special.jve(1, z)",
      T + "test_tubes.py", "J2/J1 instead of J2/J0"),
    M("tube-flanged-end", "lumped/tubes.py",
      "return 8.0 * a / (3.0 * math.pi) if flanged", "return 0.8 * a if flanged",
      T + "test_packaged.py::test_lossless_helmholtz_resonance", "end correction 0.80a"),
    M("tube-thermal-shunt", "lumped/tubes.py",
      "(gas.gamma - (gas.gamma - 1) * ft)", "(gas.gamma - (gas.gamma - 1) * fv)",
      T + "test_tubes.py", "thermal function replaced by the viscous one"),
    M("slit-end-resistance", "lumped/tubes.py",
      "return 32.0 * mu / (math.pi * h * h * w)", "return 16.0 * mu / (math.pi * h * h * w)",
      T + "test_tubes.py::test_viscous_end_resistances", "Hasimoto's slit resistance halved"),
    M("cavity-box-shape-factor", "lumped/cavity.py",
      "m = 8.0 * k0 / (2.0 * self.half_thickness_m) ** 2", "m = 4.0 * k0 / (2.0 * self.half_thickness_m) ** 2",
      T + "test_cavity.py", "Lafarge's M' halved"),
    M("cavity-isothermal-limit", "lumped/cavity.py",
      "* (g - (g - 1.0) * self.thermal_function(omega, gas)))",
      "* (1.0 + 0.0 * self.thermal_function(omega, gas)))",
      T + "test_cavity.py", "adiabatic at every frequency"),
    M("package-end-loss", "lumped/package.py",
      "ends = 0.5 * r_end * (np.abs(j_in) ** 2 + np.abs(j_o) ** 2)",
      "ends = 0.5 * r_end * np.abs(j_in) ** 2",
      T + "test_packaged.py", "outer end's loss missing from the port's noise"),
    M("package-back-volume-noise", "lumped/circuit.py",
      'psd["back_volume"] = kt4 * self.back_volume_admittance.real',
      'psd["back_volume"] = 0.5 * kt4 * self.back_volume_admittance.real',
      T + "test_packaged.py::test_noise_sources_add_to_nyquist_of_output_impedance",
      "half the back volume's thermal noise"),
]


def _copy_tree(dest: Path) -> None:
    """The repository as an installed layout: dest/pkg/diagap (+ fem, lumped, meshes), tests."""
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", ".pytest_cache")
    pkg = dest / "pkg"
    for room, target in ROOMS.items():
        shutil.copytree(REPO / room, pkg / target, ignore=ignore, dirs_exist_ok=True)
    shutil.copytree(REPO / "tests", dest / "tests", ignore=ignore)
    shutil.copytree(REPO / "examples", dest / "examples", ignore=ignore)
    shutil.copy2(REPO / "pyproject.toml", dest / "pyproject.toml")


def _copy_path(dest: Path, repo_path: str) -> Path:
    room, _, rest = repo_path.partition("/")
    return dest / "pkg" / ROOMS[room] / rest


def _run(dest: Path, tests, timeout: float) -> tuple[str, float, str]:
    env = dict(os.environ, PYTHONPATH=str(dest / "pkg"), PYTHONDONTWRITEBYTECODE="1")
    env.pop("DIAGAP_CACHE_DIR", None)  # tests/conftest.py sets a fresh one per run
    cmd = [sys.executable, "-m", "pytest", "-x", "-q", "-p", "no:cacheprovider", *tests]
    t0 = time.perf_counter()
    try:
        proc = subprocess.run(cmd, cwd=dest, env=env, capture_output=True, text=True,
                              timeout=timeout)
    except subprocess.TimeoutExpired:
        return "timeout", time.perf_counter() - t0, ""
    tail = (proc.stdout.strip().splitlines() or [""])[-1]
    if proc.returncode == 0:
        return "passed", time.perf_counter() - t0, tail
    if proc.returncode == 1:
        return "failed", time.perf_counter() - t0, tail
    return f"error({proc.returncode})", time.perf_counter() - t0, proc.stdout[-2000:] + proc.stderr[-2000:]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("-k", default="", help="run only mutations whose id contains this text "
                    "(several texts separated by commas)")
    ap.add_argument("--list", action="store_true", help="list the mutations and exit")
    ap.add_argument("--timeout", type=float, default=900.0, help="seconds per mutation run")
    ap.add_argument("--no-baseline", action="store_true", help="skip the unmutated run")
    args = ap.parse_args(argv)
    keys = [k for k in args.k.split(",") if k] or [""]
    chosen = [m for m in MUTATIONS if any(k in m.id for k in keys)]
    modules = sorted({m.path for m in MUTATIONS})
    if args.list:
        for m in chosen:
            print(f"{m.id:32s} {m.path:28s} {m.what}  ->  {' '.join(m.tests)}")
        print(f"{len(chosen)} mutations over {len(modules)} modules")
        return 0
    for m in chosen:  # every mutation must apply to exactly one place
        n = (REPO / m.path).read_text(encoding="utf-8").count(m.old)
        if n != 1:
            print(f"{m.id}: the original text occurs {n} times in {m.path}", file=sys.stderr)
            return 2
    with tempfile.TemporaryDirectory(prefix="diagap-mutate-") as tmp:
        dest = Path(tmp)
        _copy_tree(dest)
        probe = subprocess.run([sys.executable, "-c", "import diagap; print(diagap.__file__)"],
                               cwd=dest, env=dict(os.environ, PYTHONPATH=str(dest / "pkg")),
                               capture_output=True, text=True)
        if not probe.stdout.strip().startswith(str(dest)):
            print(f"the copy is not what gets imported: {probe.stdout}{probe.stderr}",
                  file=sys.stderr)
            return 2
        if not args.no_baseline:
            tests = sorted({t for m in chosen for t in m.tests})
            status, secs, tail = _run(dest, tests, args.timeout * 3)
            print(f"baseline (no mutation): {status} in {secs:.0f} s  {tail}", flush=True)
            if status != "passed":
                return 2
        results = []
        for m in chosen:
            target = _copy_path(dest, m.path)
            original = target.read_text(encoding="utf-8")
            target.write_text(original.replace(m.old, m.new), encoding="utf-8")
            try:
                status, secs, tail = _run(dest, m.tests, args.timeout)
            finally:
                target.write_text(original, encoding="utf-8")
            verdict = {"failed": "killed", "passed": "SURVIVED"}.get(status, status)
            results.append((m, verdict))
            print(f"{verdict:9s} {secs:5.0f} s  {m.id:32s} {m.what}", flush=True)
            if verdict.startswith("error"):
                print(tail)
    killed = sum(v == "killed" for _, v in results)
    print(f"\nkill rate: {killed}/{len(results)} = {100.0 * killed / max(len(results), 1):.0f} % "
          f"over {len({m.path for m, _ in results})} modules")
    for m, v in results:
        if v != "killed":
            print(f"  not killed: {m.id} ({m.path}): {m.what} [{v}]")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
