"""Constrained optimisation on a constructed problem with a known optimum.

The evaluator is injected (cheap, analytic) in place of the FE pipeline: minimise the squared
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
    return {"mechanics.test_cost_um2": ((r - R_T) * 1e6) ** 2 + ((p - P_T) * 1e6) ** 2,
            "electrostatics.test_sum_m": r + p}


TABLE = {"minimise": "mechanics.test_cost_um2",
         "constraints": [f"electrostatics.test_sum_m <= {S!r}"], "starts": 3,
         "variables": {"backplate.hole_radius": "2 um .. 5.5 um",
                       "backplate.hole_pitch": "12 um .. 30 um"}}


def test_recovers_the_projection_optimum_and_verifies_it(tmp_path):
    spec = parse_optimise(TABLE)
    res = run_optimise(demo_design(), spec, tmp_path, evaluate=cost, verify=cost)
    shift = (R_T + P_T - S) / 2
    assert res.optimum["backplate.hole_radius"] == pytest.approx(R_T - shift, rel=2e-3, abs=0)
    assert res.optimum["backplate.hole_pitch"] == pytest.approx(P_T - shift, rel=2e-3, abs=0)
    assert res.values["mechanics.test_cost_um2"] == pytest.approx(2 * (shift * 1e6) ** 2,
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
    table = {**TABLE, "constraints": ["electrostatics.test_sum_m <= 40e-6"], "starts": 2}
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
