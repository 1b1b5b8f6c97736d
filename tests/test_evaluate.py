"""Values of summary paths for one design: the fast tables or the pipeline, and the fallback."""
import math

import pytest

import diagap.evaluate as ev
from diagap.design import DesignError, demo_design


def test_exact_path_gives_the_pipeline_values():
    """The pipeline stopped after the coupled stage gives the same numbers as the whole run
    (same stages, same inputs: equal to rounding)."""
    from diagap.pipeline import run_design
    from diagap.sweep.point import flatten_summary

    design = demo_design().with_accuracy("draft")
    keys = ["coupled.pull_in_voltage_v", "mechanics.natural_frequencies_hz_1",
            "electrostatics.rest_capacitance_f"]
    values, path = ev.evaluate_with_path(design, keys, exact=True)
    assert path == ev.EXACT
    full, _ = flatten_summary(run_design(design).summary())
    for k in keys:
        assert values[k] == pytest.approx(full[k], rel=1e-12, abs=0)


def test_fast_path_is_used_when_it_covers_the_keys(monkeypatch):
    monkeypatch.setattr(ev, "fast_summary", lambda d: {"coupled.pull_in_voltage_v": 30.0})
    monkeypatch.setattr(ev, "exact_summary", lambda d, k: pytest.fail("exact path used"))
    values, path = ev.evaluate_with_path(demo_design(), ["coupled.pull_in_voltage_v"])
    assert path == ev.FAST and values == {"coupled.pull_in_voltage_v": 30.0}


def test_falls_back_to_the_pipeline_outside_the_tables(monkeypatch):
    def outside(design):
        raise ev.FastPathUnavailable("outside the tables")

    monkeypatch.setattr(ev, "fast_summary", outside)
    monkeypatch.setattr(ev, "exact_summary", lambda d, k: {"coupled.pull_in_voltage_v": 31.0})
    values, path = ev.evaluate_with_path(demo_design(), ["coupled.pull_in_voltage_v",
                                                         "response.snr_db"])
    assert path == ev.EXACT
    assert values["coupled.pull_in_voltage_v"] == 31.0 and math.isnan(values["response.snr_db"])
    # a key the tables do not hold also goes to the pipeline
    monkeypatch.setattr(ev, "fast_summary", lambda d: {"coupled.pull_in_voltage_v": 30.0})
    assert ev.evaluate_with_path(demo_design(), ["response.snr_db"])[1] == ev.EXACT


@pytest.mark.parametrize("key", ["snr_db", "answer.snr_db", ""])
def test_bad_summary_paths_are_refused(key):
    with pytest.raises(DesignError, match="section.key"):
        ev.evaluate(demo_design(), [key])


@pytest.mark.parametrize("margin,fast", [(1.3, True), (1.005, False)])
def test_response_of_a_design_collapsed_beyond_doubt_is_nan_without_the_pipeline(
        monkeypatch, margin, fast):
    """The pipeline skips the response of a collapsed design, so its response paths are NaN;
    when the fast path finds the bias at least COLLAPSE_MARGIN times pull-in (its bias margin
    is certified within 1e-3) no full FE run is needed for that. Closer to pull-in the
    pipeline decides."""
    collapsed = {"coupled.bias_margin": margin, "coupled.collapsed": 1.0,
                 "coupled.pull_in_voltage_v": 30.0}
    monkeypatch.setattr(ev, "fast_summary", lambda d: dict(collapsed))
    monkeypatch.setattr(ev, "exact_summary", lambda d, k: {"coupled.pull_in_voltage_v": 30.5})
    values, path = ev.evaluate_with_path(demo_design(), ["coupled.pull_in_voltage_v",
                                                         "response.snr_db"])
    assert (path == ev.FAST) is fast
    assert math.isnan(values["response.snr_db"])
    assert values["coupled.pull_in_voltage_v"] == (30.0 if fast else 30.5)
    # not collapsed: a missing response is a gap of the tables, not an absent section
    collapsed.update({"coupled.collapsed": 0.0, "coupled.bias_margin": 0.5})
    assert ev.evaluate_with_path(demo_design(), ["response.snr_db"])[1] == ev.EXACT
