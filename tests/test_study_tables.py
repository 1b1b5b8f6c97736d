"""Studies on the certified fast path: the box of a study, one table build, exact fallback.

References: the full FE analysis of the same design, run in the test through the exact path
(:func:`diagap.evaluate.evaluate_with_path` with ``exact=True``); the tables are certified to
1e-3 relative, 0.01 dB for levels (their held-out tolerance, :mod:`diagap.fastpath`). The
fraction of a normal distribution beyond ±4σ, 2 Φ(−4) = 6.334e-5 (Abramowitz & Stegun,
Handbook of Mathematical Functions, 1964, Table 26.1) [from memory], is checked with
scipy.stats.norm.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.evaluate import EXACT, FAST, PATH_KEY, KeyEvaluator, evaluate_with_path
from diagap.studies.sampling import Varied
from diagap.studies.tables import NORMAL_SIGMAS, tolerance_ranges
from diagap.studies.tolerance import ToleranceSpec, run_tolerance

#: the gap box and small table options of tests/test_fastpath.py: one table for both files
GAP_LO, GAP_HI = 3.6e-6, 4.4e-6
SMALL = {"nodes": 3, "max_nodes": 5, "validate": 2}
KEYS = ("response.sensitivity_db_v_per_pa", "coupled.pull_in_voltage_v")
TOL, TOL_DB = 1e-3, 0.01


def _agree(key, fast, full):
    if key.endswith("_db") or "_db_" in key:
        assert fast == pytest.approx(full, rel=0, abs=TOL_DB), key   # levels: 0.01 dB
    else:
        assert fast == pytest.approx(full, rel=TOL, abs=0), key


@pytest.fixture(scope="module")
def draft():
    return demo_design().with_accuracy("draft")


@pytest.fixture(scope="module")
def gap_study(draft, tmp_path_factory):
    """Three LHS samples of a uniform gap in [3.6, 4.4] µm, evaluated through the table."""
    spec = ToleranceSpec((Varied("backplate.gap", "uniform", draft.backplate.gap_m, GAP_LO,
                                 GAP_HI),), (), KEYS, samples=3, seed=3, indices="none")
    return run_tolerance(draft, spec, tmp_path_factory.mktemp("tol"), table_options=SMALL)


def test_tolerance_samples_inside_the_box_use_the_table(draft, gap_study):
    res = gap_study
    assert res.tables["used"] is True and res.tables["seconds"] > 0
    assert res.evaluator == "fast" and res.failed == 0
    assert res.to_json()["study_table"]["used"] is True
    gaps = res.inputs[:, 0]
    assert np.all((gaps >= GAP_LO) & (gaps <= GAP_HI))
    for j in range(2):  # two samples against the full FE of the same design
        design = with_overrides(draft, {"backplate.gap": float(gaps[j])})
        full, path = evaluate_with_path(design, KEYS, exact=True)
        assert path == EXACT
        for key in KEYS:
            _agree(key, res.outputs[key][j], full[key])


def test_a_point_outside_the_box_falls_back_to_the_full_fe(draft, gap_study):
    from diagap.fastpath import StudyBox

    from diagap.response_stage import is_distributed_output

    box = StudyBox(draft, (("backplate.gap", GAP_LO, GAP_HI),))
    options = dict(SMALL, distributed=any(is_distributed_output(k) for k in KEYS),
                   drive=tuple(sorted(KEYS)))  # the options the study's table was built with
    evaluator = KeyEvaluator(KEYS, False, box, tuple(sorted(options.items())))
    inside = evaluator(with_overrides(draft, {"backplate.gap": 4.1e-6}))
    assert inside[PATH_KEY] is False
    outside = with_overrides(draft, {"backplate.gap": 4.6e-6})
    values, path = evaluate_with_path(outside, KEYS, box=box, build=False,
                                      table_options=SMALL)
    assert path == EXACT
    full, _ = evaluate_with_path(outside, KEYS, exact=True)
    for key in KEYS:
        assert values[key] == pytest.approx(full[key], rel=1e-12, abs=0), key
    # pull-in grows with the gap (V_pi ∝ g^(3/2) for a rigid piston, Senturia, Microsystem
    # Design, 2001, eq. 6.26): the fallback is not the box's edge value
    assert values["coupled.pull_in_voltage_v"] > inside["coupled.pull_in_voltage_v"]


def test_evaluators_never_build_a_missing_table(draft, gap_study):
    """A table that was not built (other options) means the exact path, not a build in the
    worker."""
    from diagap.fastpath import StudyBox

    box = StudyBox(draft, (("backplate.gap", GAP_LO, GAP_HI),))
    values, path = evaluate_with_path(draft, ("mechanics.natural_frequencies_hz_1",), box=box,
                                      build=False, table_options={**SMALL, "nodes": 5})
    assert path == EXACT and math.isfinite(values["mechanics.natural_frequencies_hz_1"])


def test_tolerance_box_uniform_bounds_and_normal_four_sigma_clipped():
    from scipy.stats import norm

    from diagap.schema import SCHEMA

    g = 4e-6
    ranges = tolerance_ranges([
        Varied("backplate.gap", "uniform", g, 0.9 * g, 1.1 * g),
        Varied("diaphragm.thickness", "normal", 1e-6, 1e-6, 0.05e-6),
        Varied("backplate.gap", "normal", g, g, 0.5 * g),  # mean − 4σ < 0: clipped
    ])
    assert ranges[0] == ("backplate.gap", 0.9 * g, 1.1 * g)
    assert ranges[1][1] == pytest.approx(0.8e-6, rel=1e-12, abs=0)
    assert ranges[1][2] == pytest.approx(1.2e-6, rel=1e-12, abs=0)
    assert ranges[2][1] == SCHEMA["backplate"]["gap"].low
    assert ranges[2][2] == pytest.approx(3 * g, rel=1e-12, abs=0)
    # Abramowitz & Stegun 1964, Table 26.1: 2 Φ(−4) = 6.334e-5 of the samples lie outside
    assert 2 * norm.cdf(-NORMAL_SIGMAS) == pytest.approx(6.334e-5, rel=1e-3, abs=0)


def test_exact_tolerance_builds_no_table(draft, tmp_path):
    def cheap(design):
        return {"electrostatics.parallel_plate_capacitance_f":
                8.854e-12 * math.pi * design.diaphragm.size_m**2 / design.backplate.gap_m}

    spec = ToleranceSpec((Varied("backplate.gap", "uniform", 4e-6, 3.9e-6, 4.1e-6),), (),
                         ("electrostatics.parallel_plate_capacitance_f",), samples=2,
                         indices="none")
    res = run_tolerance(draft, spec, tmp_path, evaluate=cheap)
    assert res.tables == {}


def test_optimise_searches_the_table_and_verifies_with_the_full_fe(draft, gap_study, tmp_path):
    """Sensitivity ∝ bias / gap for a parallel-plate transducer (Senturia, Microsystem Design,
    2001, ch. 6) [from memory]: the best gap in the box is its lower bound."""
    from diagap.studies.optimise import OptimiseSpec, run_optimise
    from diagap.studies.spec import parse_limit

    spec = OptimiseSpec("response.sensitivity_db_v_per_pa", 1.0,
                        (("backplate.gap", GAP_LO, GAP_HI),),
                        (parse_limit("coupled.pull_in_voltage_v >= 1 V", "c"),), starts=1)
    res = run_optimise(draft, spec, tmp_path, table_options=SMALL)
    assert res.tables["used"] is True and res.evaluator == "fast"
    assert res.verified_exact and res.feasible
    assert res.optimum["backplate.gap"] == pytest.approx(GAP_LO, rel=1e-6, abs=0)
    fast = [v for z, v in res.history if z[0] == 0.0][0]
    for key in spec.keys:  # the search's table values against the full-FE verification
        _agree(key, fast[key], res.values[key])
