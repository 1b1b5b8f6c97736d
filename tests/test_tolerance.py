"""Tolerance studies: sampling, statistics, yield and variance-based indices.

The statistics are checked with cheap evaluators injected in place of the FE pipeline; the
pipeline itself runs once, at draft accuracy, through the command line.
"""
import json
import math

import numpy as np
import pytest

from diagap.design import DesignError, demo_design
from diagap.studies.indices import binned_first_order, saltelli_indices, saltelli_matrices
from diagap.studies.sampling import joint_samples, parse_correlations, parse_inputs, unit_samples
from diagap.studies.tolerance import parse_tolerances, run_tolerance

EPS0 = 8.8541878128e-12  # F/m, CODATA 2018


def plate_capacitance(design):
    """Solid parallel plates over the electrode: C = ε0·π·r_e²/g (no fringing)."""
    g = design.backplate.gap_m
    r = design.backplate.electrode_size_m
    return {"electrostatics.parallel_plate_capacitance_f": EPS0 * math.pi * r**2 / g}


def ishigami(x, a=7.0, b=0.1):
    """Ishigami & Homma (1990): f = sin x1 + a sin² x2 + b x3⁴ sin x1, x_i ~ U(−π, π)."""
    return np.sin(x[:, 0]) + a * np.sin(x[:, 1]) ** 2 + b * x[:, 2] ** 4 * np.sin(x[:, 0])


def ishigami_first_order(a=7.0, b=0.1):
    """Analytic first-order indices (Saltelli et al., Global Sensitivity Analysis: The Primer,
    2008, sec. 4.9 / Ishigami & Homma 1990): V = a²/8 + bπ⁴/5 + b²π⁸/18 + 1/2,
    V1 = (1 + bπ⁴/5)²/2, V2 = a²/8, V3 = 0."""
    pi = math.pi
    V = a**2 / 8 + b * pi**4 / 5 + b**2 * pi**8 / 18 + 0.5
    return np.array([0.5 * (1 + b * pi**4 / 5) ** 2 / V, a**2 / 8 / V, 0.0])


def test_one_input_spread_matches_linear_propagation(tmp_path):
    """σ_C ≈ |dC/dg| σ_g (first-order propagation, e.g. JCGM 100:2008 (GUM) eq. 10) with the
    derivative by central finite differences; agreement within the sampling error of a standard
    deviation, σ/√(2(N−1)), plus the second-order term of the propagation."""
    design = demo_design()
    table = {"inputs": {"backplate.gap": "normal 1 %"}, "samples": 800, "seed": 3,
             "outputs": ["electrostatics.parallel_plate_capacitance_f"], "indices": "none"}
    spec = parse_tolerances(table, design)
    res = run_tolerance(design, spec, tmp_path, evaluate=plate_capacitance)
    y = res.outputs["electrostatics.parallel_plate_capacitance_f"]
    g0 = design.backplate.gap_m
    h = 1e-4 * g0
    key = "electrostatics.parallel_plate_capacitance_f"
    from diagap.design import with_override

    c_hi = plate_capacitance(with_override(design, "backplate.gap", g0 + h))[key]
    c_lo = plate_capacitance(with_override(design, "backplate.gap", g0 - h))[key]
    sigma_lin = abs(c_hi - c_lo) / (2 * h) * 0.01 * g0
    n = y.size
    assert n == 800 and res.failed == 0
    tol = 3.0 / math.sqrt(2 * (n - 1)) + 3 * 0.01**2  # sampling + curvature of 1/g
    assert np.std(y, ddof=1) == pytest.approx(sigma_lin, rel=tol, abs=0)
    # the mean of C = ε0A/g over a normal gap: C0 (1 + (σ/g)²) to second order
    c0 = plate_capacitance(design)[key]
    assert np.mean(y) == pytest.approx(c0 * (1 + 1e-4), rel=3 * sigma_lin / c0 / math.sqrt(n),
                                       abs=0)


@pytest.mark.parametrize("method", ["saltelli", "given-data"])
def test_ishigami_first_order_indices(method):
    """Published first-order indices of the Ishigami function (a = 7, b = 0.1: S1 ≈ 0.314,
    S2 ≈ 0.442, S3 = 0; Saltelli et al. 2008), computed above from the analytic variances, are
    reproduced within 4 bootstrap standard errors (+0.01 for the estimators' own bias)."""
    ref = ishigami_first_order()
    assert ref[0] == pytest.approx(0.3139, rel=1e-3, abs=0)  # the Primer's rounded values
    assert ref[1] == pytest.approx(0.4424, rel=1e-3, abs=0)
    n = 4096
    if method == "saltelli":
        mats = [-math.pi + 2 * math.pi * m for m in saltelli_matrices(unit_samples(n, 6, "sobol",
                                                                                    seed=7))]
        f = [ishigami(m) for m in mats]
        out = saltelli_indices(f[0], f[1], f[2:])
        # total indices (Primer): S_T1 = (V1 + V13)/V, S_T3 = V13/V, V13 = b²π⁸(1/18 − 1/50)
        pi, b = math.pi, 0.1
        V = 49 / 8 + b * pi**4 / 5 + b**2 * pi**8 / 18 + 0.5
        v13 = b**2 * pi**8 * (1 / 18 - 1 / 50)
        st_ref = [ref[0] + v13 / V, ref[1], v13 / V]
        for s, se, r in zip(out["total"], out["total_se"], st_ref):
            assert abs(s - r) <= 4 * se + 0.01
    else:
        x = -math.pi + 2 * math.pi * unit_samples(n, 3, "lhs", seed=7)
        out = binned_first_order(x, ishigami(x))
    for s, se, r in zip(out["first"], out["first_se"], ref):
        assert 0 < se < 0.05
        assert abs(s - r) <= 4 * se + 0.01


def test_correlated_inputs_follow_the_copula():
    """Gaussian copula: the normal scores of two inputs correlate with the given r (Pearson
    correlation of the sampled normals, within 4/√N)."""
    design = demo_design()
    inputs = parse_inputs({"diaphragm.thickness": "normal 5 %",
                           "diaphragm.residual_stress": "normal 20 MPa"}, design)
    R = parse_correlations({"diaphragm.thickness, diaphragm.residual_stress": 0.6}, inputs)
    X = joint_samples(inputs, unit_samples(4000, 2, "lhs", 1), R)
    r = np.corrcoef(X.T)[0, 1]
    assert abs(r - 0.6) < 4 / math.sqrt(4000)
    assert np.std(X[:, 1], ddof=1) == pytest.approx(20e6, rel=0.05, abs=0)
    assert np.std(X[:, 0], ddof=1) == pytest.approx(0.05e-6, rel=0.05, abs=0)


def test_yield_counts_samples_meeting_every_limit(tmp_path):
    """Uniform gap ±10 %: C ∝ 1/g, so C ≤ C0 holds exactly when g ≥ g0, half the samples."""
    design = demo_design()
    c0 = plate_capacitance(design)["electrostatics.parallel_plate_capacitance_f"]
    table = {"inputs": {"backplate.gap": "uniform 10 %"}, "samples": 200, "indices": "none",
             "spec": [f"electrostatics.parallel_plate_capacitance_f <= {c0!r}"]}
    res = run_tolerance(design, parse_tolerances(table, design), tmp_path,
                        evaluate=plate_capacitance)
    assert res.yield_fraction == pytest.approx(0.5, rel=0.02, abs=0)  # LHS: stratified
    doc = res.to_json()
    assert set(doc["outputs"]["electrostatics.parallel_plate_capacitance_f"]) >= {
        "mean", "std", "p05", "p50", "p95"}
    assert doc["samples"] == 200


def test_resumes_without_computing_finished_samples(tmp_path):
    design = demo_design()
    table = {"inputs": {"backplate.gap": "uniform 10 %"}, "samples": 20, "indices": "none",
             "outputs": ["electrostatics.parallel_plate_capacitance_f"]}
    spec = parse_tolerances(table, design)
    first = run_tolerance(design, spec, tmp_path, evaluate=plate_capacitance)
    again = run_tolerance(design, spec, tmp_path, evaluate=plate_capacitance)
    assert first.computed == 20 and again.computed == 0
    y1 = first.outputs["electrostatics.parallel_plate_capacitance_f"]
    y2 = again.outputs["electrostatics.parallel_plate_capacitance_f"]
    assert np.array_equal(y1, y2)


@pytest.mark.parametrize("table, match", [
    ({"inputs": {"backplate.gap": "gauss 1 %"}}, "normal or uniform"),
    ({"inputs": {"backplate.gapp": "normal 1 %"}}, "not a design key"),
    ({"inputs": {"backplate.gap": "normal 1 MPa"}}, "dimension"),
    ({"inputs": {"backplate.gap": "uniform 5 um .. 3 um"}}, "empty"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "spec": ["response.snr_db ~ 3"]}, "PATH"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "spec": ["resp.snr_db <= 3"]}, "section"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "spec": ["response.snr_db = 3"]}, "tolerance"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "method": "grid",
      "outputs": ["response.snr_db"]}, "method"),
    ({"inputs": {"backplate.gap": "normal 1 %", "diaphragm.thickness": "normal 1 %"},
      "correlations": {"backplate.gap, diaphragm.thickness": 1.5},
      "outputs": ["response.snr_db"]}, "-1, 1"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "samplez": 3}, "unknown key"),
    ({"inputs": {"backplate.gap": "normal -1 %"}}, "σ must be positive"),
    ({"inputs": {"backplate.gap": "uniform 0 um"}}, "half-width must be positive"),
    # the demo's 4 µm gap: ±10 pc (a length unit of pint) and a 40 % σ reach below zero
    ({"inputs": {"backplate.gap": "uniform 10 parsec"}},
     r"low end = -3\.0\d*e\+17 m: must be positive \(the allowed range of backplate.gap\)"),
    ({"inputs": {"backplate.gap": "normal 40 %"}},
     r"mean ± 3σ, low end = -8e-07 m: must be positive"),
    ({"inputs": {"backplate.gap": "normal 1 %"}, "outputs": ["response.snr_dbx"]},
     "did you mean 'response.snr_db'"),
])
def test_bad_sections_are_one_line_errors(table, match):
    with pytest.raises(DesignError, match=match) as info:
        parse_tolerances(table, demo_design())
    assert "\n" not in str(info.value)


STUDY_TOML = """
name = "invented tolerance case"
[diaphragm]
radius = "0.5 mm"
thickness = "1 um"
material = "polysilicon"
residual_stress = "10 MPa"
[backplate]
gap = "4 um"
thickness = "2 um"
electrode_radius = "0.45 mm"
hole_lattice = "hex"
hole_radius = "4 um"
hole_pitch = "20 um"
[electrical]
bias_voltage = "10 V"
bias_resistance = "10 Gohm"
[analysis]
accuracy = "draft"
[tolerances]
samples = 2
spec = ["coupled.pull_in_voltage_v >= 1 V"]
[tolerances.inputs]
"backplate.gap" = "uniform 2 %"
"""


def test_command_end_to_end_with_the_pipeline(tmp_path):
    """Two samples through the full FE pipeline at draft accuracy: the output contract."""
    from diagap.cli import main

    f = tmp_path / "d.toml"
    f.write_text(STUDY_TOML, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["tolerance", str(f), "-o", str(out), "--exact", "--no-progress"]) == 0
    doc = json.loads((out / "tolerance.json").read_text())
    assert doc["samples"] == 2 and doc["yield"] == 1.0
    s = doc["outputs"]["coupled.pull_in_voltage_v"]
    assert s["p05"] <= s["p50"] <= s["p95"] and s["mean"] > 1.0
    assert doc["evaluator"] == "exact"
    assert (out / "plots" / "coupled.pull_in_voltage_v.png").is_file()


@pytest.mark.parametrize("section, match", [
    ('[tolerances]\nsamples = 2\n[tolerances.inputs]\n"backplate.gap" = "wide 2 %"\n',
     "normal or uniform"),
    ("", "no \\[tolerances\\] section"),
])
def test_command_bad_section_exits_2_without_outputs(tmp_path, capsys, section, match):
    from diagap.cli import main

    head = STUDY_TOML.split("[tolerances]")[0]
    f = tmp_path / "d.toml"
    f.write_text(head + section, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["tolerance", str(f), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    import re

    assert re.search(match, err)
    assert not out.exists()


def test_example_study_sections_parse():
    """The invented example carries both study sections beside a valid design."""
    from pathlib import Path

    from diagap.studies.optimise import parse_optimise
    from diagap.studies.spec import load_study

    path = Path(__file__).resolve().parent.parent / "examples" / "process_spread.toml"
    design, table = load_study(path, "tolerances")
    spec = parse_tolerances(table, design)
    assert spec.correlation is not None and len(spec.limits) == 3
    design, table = load_study(path, "optimise")
    assert len(parse_optimise(table, design).variables) == 3
