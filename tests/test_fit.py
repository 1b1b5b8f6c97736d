"""Fitting residual stress and gap to a capacitance-versus-bias curve.

Synthetic data: the FE C–V model (:class:`diagap.studies.cvmodel.CVModel`: the coupled plate
branch, the perforated-cell capacitance table and the rim model, at draft accuracy on the coarser
mesh level to keep the test affordable) at a known truth, plus Gaussian noise. Data and fit use
the same FE model, so these tests check the estimator and its intervals, not the discretisation.
"""
import math

import numpy as np
import pytest

from diagap.design import DesignError, demo_design
from diagap.studies.fit import confidence_intervals, fit_cv

TRUTH = {"diaphragm.residual_stress": 12e6, "backplate.gap": 4.1e-6}
NOISE_F = 2e-15  # 2 fF on about 1.7 pF


@pytest.fixture(scope="module")
def model():
    from diagap.studies.cvmodel import CVModel

    return CVModel(demo_design().with_accuracy("draft"), mesh="coarse")


@pytest.fixture(scope="module")
def clean(model):
    V = np.linspace(-20.0, 20.0, 17)
    return V, model.curve(TRUTH, V)


def test_model_pull_in_matches_the_coupled_stage(model):
    """The C–V model traces the same branch as the pipeline's coupled stage: its pull-in voltage
    for the design's own values agrees with that stage's FE value within the stage's error
    estimate of the two mesh levels (here the coarser one)."""
    from diagap.extract import plate_problem
    from diagap.fem.coupling.plate import solve_coupled

    d = model.design
    ref = solve_coupled(plate_problem(d), "draft", d.backplate.electrode_size_m,
                        d.backplate.gap_m, 0.0, model.density)
    tol = 3 * ref.uncertainty["pull_in_voltage_v"] + 1e-3  # +1e-3: wider capacitance table
    assert model.pull_in_voltage_v({}) == pytest.approx(ref.pull_in_voltage_v, rel=tol, abs=0)


def test_zero_bias_capacitance_is_parallel_plate_like(model):
    """At V = 0 the area term is ε0·A·P/g (P the perforation factor from the cell table at the
    rest gap; parallel plates, e.g. Jackson, Classical Electrodynamics, 1999, sec. 1.13) plus the
    rim fringing and the parasitic capacitance."""
    d = model.design
    g = d.backplate.gap_m
    area = float(np.sum(model.levels[-1].weights))  # the electrode as the FE mesh has it
    # straight-sided triangles: a polygon inscribed in the circle, O(h²) short of πr²
    assert area == pytest.approx(math.pi * d.backplate.electrode_size_m**2, rel=5e-3, abs=0)
    eps0 = 8.8541878128e-12
    expected = eps0 * area * model.density.perforation_factor(g) / g + float(model.rim(g)) \
        + d.electrical.parasitic_capacitance_f
    assert model.curve({}, [0.0])[0] == pytest.approx(expected, rel=1e-9, abs=0)


def test_fit_from_the_design_values_recovers_the_truth(model, clean):
    V, C = clean
    rng = np.random.default_rng(11)
    res = fit_cv(model, V, C + NOISE_F * rng.standard_normal(V.size), error_estimate=False)
    for path, (lo, hi) in zip(res.paths, res.ci95):
        assert lo < TRUTH[path] < hi
    assert res.values[0] == pytest.approx(TRUTH["diaphragm.residual_stress"], rel=0.05, abs=0)
    assert res.values[1] == pytest.approx(TRUTH["backplate.gap"], rel=0.005, abs=0)
    assert res.rms_residual == pytest.approx(NOISE_F, rel=0.5, abs=0)
    assert not res.warnings


def test_interval_formula_covers_95_percent_with_the_fe_jacobian(model, clean):
    """Many realisations on the model linearised at the truth (its FE Jacobian by central
    differences): for a linear model with Gaussian noise the Student-t intervals are exact, so the
    fraction covering the truth is 0.95 within the binomial sampling error 4·√(0.95·0.05/N)."""
    V, C = clean
    J = []
    for path, h in (("diaphragm.residual_stress", 12e3), ("backplate.gap", 4.1e-10)):
        J.append((model.curve({**TRUTH, path: TRUTH[path] + h}, V)
                  - model.curve({**TRUTH, path: TRUTH[path] - h}, V)) / (2 * h))
    J = np.array(J).T
    rng = np.random.default_rng(7)
    n, hits = 4000, np.zeros(2)
    truth = (TRUTH["diaphragm.residual_stress"], TRUTH["backplate.gap"])
    for _ in range(n):
        e = NOISE_F * rng.standard_normal(V.size)
        d = np.linalg.lstsq(J, e, rcond=None)[0]
        ci, *_ = confidence_intervals(J, J @ d - e, tuple(np.add(truth, d)), (1.0, 1.0))
        hits += [lo <= t <= hi for t, (lo, hi) in zip(truth, ci)]
    assert np.all(np.abs(hits / n - 0.95) < 4 * math.sqrt(0.95 * 0.05 / n)), hits / n


@pytest.mark.slow
def test_intervals_cover_the_truth_in_18_of_20_realisations(model, clean):
    """Nominal 95 % coverage: P(at least 18 of 20) = 0.92 for each parameter (binomial), so the
    criterion itself fails now and then for exact intervals; the noise seed is fixed for
    reproducibility (with seed 2024 both this fit and the exact linear theory above cover the
    gap 16 times: those draws, not the fit, fall outside). Each fit starts at the truth alone,
    without the start search (the minimiser does not depend on the start; the test above starts
    from the design's values and searches)."""
    V, C = clean
    rng = np.random.default_rng(1)
    hits = np.zeros(2, int)
    for _ in range(20):
        res = fit_cv(model, V, C + NOISE_F * rng.standard_normal(V.size), start=TRUTH,
                     error_estimate=False, starts=0)
        for i, (path, (lo, hi)) in enumerate(zip(res.paths, res.ci95)):
            hits[i] += lo <= TRUTH[path] <= hi
    assert hits.min() >= 18, hits


def test_unidentifiable_parameters_are_reported():
    """Two columns of J that are proportional: the data cannot separate them."""
    x = np.linspace(0, 1, 10)
    J = np.column_stack([x, 2 * x])
    ci, _, cond, warnings = confidence_intervals(J, 0.01 * np.sin(7 * x), (1.0, 1.0), (1.0, 1.0))
    assert cond > 1e8 and warnings and ci[0] == (None, None)


def test_intervals_of_a_straight_line_match_the_textbook_formula():
    """Linear least squares y = a + b x: the 95 % interval of b is b ± t·s/√Σ(x − x̄)²
    (e.g. Montgomery & Runger, Applied Statistics and Probability for Engineers, 2003,
    eq. 11-21); J = [1, x] gives the same."""
    from scipy.stats import t as student

    rng = np.random.default_rng(0)
    x = np.linspace(0, 5, 12)
    y = 1.0 + 0.5 * x + 0.1 * rng.standard_normal(x.size)
    A = np.column_stack([np.ones_like(x), x])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    r = A @ coef - y
    ci, _, _, _ = confidence_intervals(A, r, tuple(coef), (1.0, 1.0))
    s = math.sqrt(r @ r / (x.size - 2))
    half = student.ppf(0.975, x.size - 2) * s / math.sqrt(np.sum((x - x.mean()) ** 2))
    assert ci[1][1] - coef[1] == pytest.approx(half, rel=1e-9, abs=0)


def test_unknown_free_value_is_refused(model, clean):
    V, C = clean
    with pytest.raises(DesignError, match="can vary"):
        fit_cv(model, V, C, free=("backplate.hole_radius",))


@pytest.mark.parametrize("text, match", [
    ("bias (V),capacitance (pF)\n0,1.7\n5,abc\n", "not a number"),
    ("bias (V),charge (pC)\n0,1.7\n", "no column 'capacitance"),
    ("bias (V),capacitance (m)\n0,1.7\n", "dimension"),
    ("", "empty"),
    ("bias (V),capacitance (pF)\n0,1.7\n5,-1.8\n", r"cv.csv:3: capacitance \(pF\) = '-1.8': "
     "must be positive"),
])
def test_fit_command_bad_csv_exits_2_without_outputs(tmp_path, capsys, text, match):
    import re

    from diagap.cli import main

    csv_file = tmp_path / "cv.csv"
    csv_file.write_text(text, encoding="utf-8")
    design = tmp_path / "d.toml"
    design.write_text("[diaphragm]\nradius = \"0.5 mm\"\nthickness = \"1 um\"\n"
                      "material = \"polysilicon\"\n[backplate]\ngap = \"4 um\"\n"
                      "thickness = \"2 um\"\nelectrode_radius = \"0.45 mm\"\n"
                      "hole_lattice = \"hex\"\nhole_radius = \"4 um\"\nhole_pitch = \"20 um\"\n",
                      encoding="utf-8")
    out = tmp_path / "out"
    assert main(["fit", str(design), "--cv", str(csv_file), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and re.search(match, err)
    assert not out.exists()


def test_csv_units_are_converted_to_si(tmp_path):
    from diagap.studies.files import read_curve

    f = tmp_path / "cv.csv"
    f.write_text("# measured\ncapacitance (pF),bias (mV)\n1.5,2000\n1.6,-3000\n", encoding="utf-8")
    d = read_curve(f, {"bias": "V", "capacitance": "F"})
    assert d["bias"].tolist() == pytest.approx([2.0, -3.0], rel=1e-12, abs=0)
    assert d["capacitance"].tolist() == pytest.approx([1.5e-12, 1.6e-12], rel=1e-12, abs=0)


def flat_level(values, freqs_hz):
    """An invented smooth level (dB) falling with stress and gap, flat in frequency: the test
    checks the weighting and the joint fit, not the physics of the response."""
    s = values.get("diaphragm.residual_stress", 10e6)
    g = values.get("backplate.gap", 4e-6)
    return np.full(np.size(freqs_hz), 20 * np.log10(1e-2 * (10e6 / s) * (4e-6 / g)))


def test_joint_fit_with_a_response_narrows_the_intervals(model, clean):
    """Adding independent data on the same parameters cannot widen the asymptotic intervals
    (the information matrices add: JᵀJ grows); both fits bracket the truth."""
    V, C = clean
    rng = np.random.default_rng(5)
    data = C + NOISE_F * rng.standard_normal(V.size)
    f = np.logspace(2, 4, 12)
    level = flat_level(TRUTH, f) + 0.02 * rng.standard_normal(f.size)
    alone = fit_cv(model, V, data, start=TRUTH, error_estimate=False, starts=0)
    joint = fit_cv(model, V, data, start=TRUTH, error_estimate=False, response=(f, level),
                   response_model=flat_level, starts=0)
    for res in (alone, joint):
        for path, (lo, hi) in zip(res.paths, res.ci95):
            assert lo < TRUTH[path] < hi
    w_alone = alone.ci95[0][1] - alone.ci95[0][0]
    w_joint = joint.ci95[0][1] - joint.ci95[0][0]
    assert w_joint < w_alone
    doc = joint.to_json()
    assert doc["response"]["rms_residual_db"] == pytest.approx(0.02, rel=0.6, abs=0)
