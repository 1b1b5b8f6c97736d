"""Constrained optimisation on a constructed problem with a known optimum.

The evaluator is injected (cheap, analytic) in place of the FE pipeline; it answers under two
real summary paths (a study accepts only outputs of summary.json), which here hold the test's
own quantities: minimise the squared
distance of (hole radius, hole pitch) from a target outside the feasible set r + p ≤ s. The
optimum is the Euclidean projection of the target on the line r + p = s (Karush–Kuhn–Tucker
conditions; e.g. Nocedal & Wright, Numerical Optimization, 2006, sec. 12.3): (r*, p*) =
target − ((r_t + p_t − s)/2)(1, 1), with the constraint active.
"""
import math

import pytest

from diagap.design import DesignError, demo_design
from diagap.studies.optimise import parse_optimise, run_optimise

R_T, P_T, S = 5e-6, 25e-6, 27e-6  # target radius, pitch; limit on their sum (m)


def cost(design):
    r, p = design.backplate.hole_radius_m, design.backplate.hole_pitch_m
    return {"mechanics.center_compliance_m_per_pa": ((r - R_T) * 1e6) ** 2 + ((p - P_T) * 1e6) ** 2,
            "electrostatics.rest_gap_m": r + p}


TABLE = {"minimise": "mechanics.center_compliance_m_per_pa",
         "constraints": [f"electrostatics.rest_gap_m <= {S!r}"], "starts": 3,
         "variables": {"backplate.hole_radius": "2 um .. 5.5 um",
                       "backplate.hole_pitch": "12 um .. 30 um"}}


def test_recovers_the_projection_optimum_and_verifies_it(tmp_path):
    spec = parse_optimise(TABLE)
    res = run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost)
    shift = (R_T + P_T - S) / 2
    assert res.optimum["backplate.hole_radius"] == pytest.approx(R_T - shift, rel=2e-3, abs=0)
    assert res.optimum["backplate.hole_pitch"] == pytest.approx(P_T - shift, rel=2e-3, abs=0)
    assert res.values["mechanics.center_compliance_m_per_pa"] == pytest.approx(2 * (shift * 1e6) ** 2,
                                                                  rel=5e-3, abs=0)
    # the verification's values satisfy every limit (a hair of tolerance is not allowed)
    assert res.feasible
    for c in spec.constraints:
        assert c.met(res.values[c.path])
    assert res.active == (spec.constraints[0].text,)
    doc = res.to_json()
    assert doc["constraints"][0]["active"] and doc["constraints"][0]["met"]


def test_a_rerun_replays_stored_evaluations(tmp_path):
    spec = parse_optimise({**TABLE, "starts": 1})
    first = run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost)
    again = run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost)
    assert first.evaluations > 0 and again.evaluations == 0
    assert again.optimum == first.optimum


def test_inactive_constraint_leaves_the_unconstrained_optimum(tmp_path):
    """With s above r_t + p_t the target itself is feasible and optimal."""
    table = {**TABLE, "constraints": ["electrostatics.rest_gap_m <= 40e-6"], "starts": 2}
    res = run_optimise(demo_design(), parse_optimise(table), tmp_path, evaluate=cost,
                       verify=cost)
    assert res.optimum["backplate.hole_radius"] == pytest.approx(R_T, rel=2e-3, abs=0)
    assert res.optimum["backplate.hole_pitch"] == pytest.approx(P_T, rel=2e-3, abs=0)
    assert res.active == ()


@pytest.mark.parametrize("change, match", [
    ({"minimise": None, "maximise": None}, "exactly one"),
    ({"variables": {"backplate.hole_radius": "6 um .. 2 um"}}, "below"),
    ({"variables": {"backplate.hole_lattice": "hex .. square"}}, "numeric"),
    ({"variables": {"backplate.hole_radius": "2 um"}}, "LOW .. HIGH"),
    ({"variables": {"backplate.gap": "-1 um .. 6 um"}}, r"LOW = -1e-06 m: must be positive"),
    ({"minimise": "response.snr_dbx"}, "did you mean 'response.snr_db'"),
    ({"starts": 0}, "starts"),
    ({"colour": 1}, "unknown key"),
])
def test_bad_sections_are_one_line_errors(change, match):
    table = {**TABLE, **change}
    table = {k: v for k, v in table.items() if v is not None}
    with pytest.raises(DesignError, match=match) as info:
        parse_optimise(table)
    assert "\n" not in str(info.value)


def test_objective_sense_is_kept():
    assert parse_optimise({**{k: v for k, v in TABLE.items() if k != "minimise"},
                           "maximise": "response.snr_db"}).sense == 1.0
    assert math.isclose(parse_optimise(TABLE).sense, -1.0)


class Interrupting:
    """The cost above, counting its calls; raises KeyboardInterrupt (as Ctrl-C does) once
    ``after`` evaluations are done."""

    def __init__(self, after=None):
        self.after, self.calls = after, 0

    def __call__(self, design):
        if self.after is not None and self.calls >= self.after:
            raise KeyboardInterrupt
        self.calls += 1
        return cost(design)


def test_an_interrupted_run_resumes_without_recomputing(tmp_path):
    """Interrupted after k evaluations and run again into the same folder: only the missing
    evaluations are computed, and the optimum is that of a run without interruption."""
    import json

    spec = parse_optimise({**TABLE, "starts": 2})
    whole = Interrupting()
    full = run_optimise(demo_design(), spec, tmp_path / "whole", evaluate=whole, verify=cost)
    total = full.evaluations
    assert whole.calls == total > 10
    k = total // 2
    with pytest.raises(KeyboardInterrupt):
        run_optimise(demo_design(), spec, tmp_path / "cut", evaluate=Interrupting(k),
                     verify=cost)
    lines = (tmp_path / "cut" / "evaluations.jsonl").read_text().splitlines()
    assert len(lines) == k and all(json.loads(x)["status"] == "ok" for x in lines)
    rest = Interrupting()
    resumed = run_optimise(demo_design(), spec, tmp_path / "cut", evaluate=rest, verify=cost)
    assert rest.calls == resumed.evaluations == total - k
    for path, x in full.optimum.items():
        assert resumed.optimum[path] == pytest.approx(x, rel=1e-12, abs=0)
    assert resumed.values == full.values and resumed.active == full.active


class Tty:
    """A stream that says it is a terminal."""

    def __init__(self):
        import io

        self.buf = io.StringIO()

    def isatty(self):
        return True

    def write(self, text):
        self.buf.write(text)

    def flush(self):
        pass


def test_progress_reports_start_iteration_and_best_feasible(tmp_path, capsys):
    """Without a terminal: one line per batch on stderr, nothing on stdout; the last best
    feasible value is the optimum's (the projection's cost)."""
    spec = parse_optimise({**TABLE, "starts": 2})
    res = run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost, progress=True)
    out, err = capsys.readouterr()
    assert out == ""
    lines = err.splitlines()
    batches = [x for x in lines if x.startswith("optimise start")]
    assert batches[0].startswith("optimise start 1/2, iteration 1: 5 points | 5 computed")
    assert any(x.startswith("optimise start 2/2, iteration 3") for x in batches)
    assert sum(int(x.split(": ")[1].split()[0]) for x in batches) == res.evaluations
    best = float(batches[-1].split("best feasible mechanics.center_compliance_m_per_pa = ")[1].split()[0])
    assert best == pytest.approx(res.values["mechanics.center_compliance_m_per_pa"], rel=1e-5, abs=0)
    assert lines[-1] == "optimise: checking the optimum with the full FE pipeline"
    # again: every point is replayed from the log
    run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost, progress=True)
    err = capsys.readouterr().err
    assert f"0 computed, {res.evaluations} replayed" in err


def test_progress_on_a_terminal_redraws_one_line(tmp_path):
    from diagap.studies.progress import StudyProgress

    tty = Tty()
    spec = parse_optimise({**TABLE, "starts": 1})
    run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost,
                 progress=StudyProgress("optimise", tty))
    text = tty.buf.getvalue()
    assert text.count("\r") > 5 and "[################] 5/5" in text
    assert "\n" in text and "best feasible" in text


def test_no_progress_draws_nothing(tmp_path, capsys):
    spec = parse_optimise({**TABLE, "starts": 1})
    run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost, progress=False)
    assert capsys.readouterr() == ("", "")
