"""The start search of the C–V fit: a slack nominal diaphragm no longer traps the fit.

Scenario (invented): a polysilicon diaphragm, 0.5 mm radius, 1 µm thick, over a hex-perforated
backplate at a nominal gap of 4 µm with a nominal residual stress of 0 — a slack diaphragm whose
model collapses (pull-in) near ±7 V — while the "measured" curve comes from a diaphragm with
2 MPa and 4.1 µm and stays below its pull-in (about 13 V) up to ±10 V. Without the search the
local fit from the slack start ends in a wrong minimum (measured on these data: stress 0.03 MPa
with a 95 % interval of ±0.9 kPa, gap 4.26 µm, rms residual 79 fF against the 2 fF noise).

The data are the FE C–V curve of the true design itself: its own coupled plate branch, its own
perforated-cell capacitance table and rim model built about 4.1 µm (draft accuracy, the coarser
mesh level, as the fitted model), plus 2 fF Gaussian noise. Against the fitted model — the
nominal design's tables evaluated at those values — the noise-free curves differ by at most
0.07 fF, far below the noise, so the 95 % intervals must hold the truth. Intervals: asymptotic,
Jacobian-based (Seber & Wild, Nonlinear Regression, 1989, sec. 5.1).
"""
import math

import numpy as np
import pytest

from diagap.design import load_design, with_overrides
from diagap.studies.fitstart import choose_starts, start_points

DESIGN = ("[diaphragm]\nradius = \"0.5 mm\"\nthickness = \"1 um\"\nmaterial = \"polysilicon\"\n"
          "[backplate]\ngap = \"4 um\"\nthickness = \"2 um\"\nelectrode_radius = \"0.45 mm\"\n"
          "hole_lattice = \"hex\"\nhole_radius = \"4 um\"\nhole_pitch = \"20 um\"\n"
          "[analysis]\naccuracy = \"draft\"\n")
TRUTH = {"diaphragm.residual_stress": 2e6, "backplate.gap": 4.1e-6}
NOISE_F = 2e-15


@pytest.fixture(scope="module")
def slack(tmp_path_factory):
    from diagap.studies.cvmodel import CVModel

    path = tmp_path_factory.mktemp("slack") / "d.toml"
    path.write_text(DESIGN, encoding="utf-8")
    nominal = load_design(path)
    true_model = CVModel(with_overrides(nominal, TRUTH), mesh="coarse")
    return CVModel(nominal, mesh="coarse"), true_model


def test_slack_start_recovers_stress_and_gap(slack):
    from diagap.studies.fit import fit_cv

    model, true_model = slack
    V = np.linspace(-10.0, 10.0, 7)
    assert model.pull_in_voltage_v({}) < 8.0 < 10.0 < true_model.pull_in_voltage_v({})
    clean = true_model.curve({}, V)
    assert np.max(np.abs(clean - model.curve(TRUTH, V))) < 0.1 * NOISE_F
    data = clean + NOISE_F * np.random.default_rng(4).standard_normal(V.size)
    res = fit_cv(model, V, data, error_estimate=False)
    for path, (lo, hi) in zip(res.paths, res.ci95):
        assert lo < TRUTH[path] < hi, (path, lo, hi)
    assert res.values[1] == pytest.approx(TRUTH["backplate.gap"], rel=5e-3, abs=0)
    assert res.rms_residual == pytest.approx(NOISE_F, rel=0.6, abs=0)
    assert not res.warnings
    doc = res.to_json()
    for path in res.paths:  # the output contract
        assert set(doc["parameters"][path]) == {"value", "unit", "ci95"}
    facts = doc["start_search"]
    assert facts["space_filling_starts"] == 8 and facts["collapsing_starts"] >= 1
    # the slack start collapses inside the data's range: it is discarded, the winner is sampled
    assert all(run["origin"] == "space-filling" for run in facts["local_fits"])
    winner = facts["local_fits"][facts["winner"]]
    assert winner["start"] == facts["winning_start"] and winner["start_pull_in_v"] > 10.0
    assert winner["rms_residual"] == pytest.approx(res.rms_residual, rel=1e-9, abs=0)


def test_start_points_fill_the_box_reproducibly():
    lo, hi = np.array([-5.0, 0.75]), np.array([5.0, 1.25])
    pts = start_points(np.array([0.0, 1.0]), lo, hi, 8)
    assert pts[0][1] == "given" and len(pts) == 9
    x = np.array([p for p, _ in pts[1:]])
    assert np.all(x > lo) and np.all(x < hi)
    # a Latin hypercube: one point in each of the 8 equal slices of every axis (McKay,
    # Beckman & Conover, Technometrics 21, 1979), inside the box pulled in by 2 % a side
    a, b = lo + 0.02 * (hi - lo), hi - 0.02 * (hi - lo)
    slices = np.floor((x - a) / (b - a) * 8).astype(int)
    for k in range(2):
        assert sorted(slices[:, k]) == list(range(8))
    again = start_points(np.array([0.0, 1.0]), lo, hi, 8)
    assert all(np.array_equal(p, q) for (p, _), (q, _) in zip(pts, again))


def test_collapsing_and_failed_starts_are_discarded():
    pts = [(np.array([float(i)]), "given" if i == 0 else "space-filling") for i in range(5)]
    costs = [0.1, 5.0, math.inf, 2.0, 1.0]
    pull = [6.0, 20.0, None, 15.0, 12.0]
    chosen, cands, none_left = choose_starts(pts, costs, pull, 10.0, 2)
    assert [c.status for c in cands] == ["collapses", "usable", "failed", "usable", "usable"]
    assert [float(c.x[0]) for c in chosen] == [4.0, 3.0] and not none_left
    chosen, _, none_left = choose_starts(pts, costs, [1.0] * 5, 10.0, 2)
    assert none_left and [float(c.x[0]) for c in chosen] == [0.0, 4.0]
