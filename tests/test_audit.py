"""The assumption audit flags designs built to violate each simple-model assumption and passes
the demo's sound ones. Thresholds are stated in each row (engineering judgement, common practice).
Designs are invented variants of the demo, run at draft accuracy."""
import pytest

from diagap.design import demo_design, with_overrides
from diagap.pipeline import run_design

_CACHE = {}


def audit_of(**overrides):
    key = tuple(sorted(overrides.items()))
    if key not in _CACHE:
        d = with_overrides(demo_design().with_accuracy("draft"),
                           {p.replace("__", "."): v for p, v in overrides.items()})
        _CACHE[key] = {r["assumption"]: r for r in run_design(d).summary()["audit"]}
    return _CACHE[key]


def verdict(name, **overrides):
    return audit_of(**overrides)[name]["verdict"]


def test_demo_sound_assumptions_hold():
    rows = audit_of()
    for name in ("small deflection", "parallel-plate capacitance", "pull-in margin",
                 "incompressible film", "high-pass corner below 20 Hz"):
        assert rows[name]["verdict"] == "holds", (name, rows[name])
    for row in rows.values():
        assert row["threshold"]["holds"] <= row["threshold"]["marginal"]


def test_rigid_piston_fails_for_a_clamped_diaphragm():
    # A clamped diaphragm's mode-1 effective area is about a third of its area (common practice),
    # far from the piston's full area.
    row = audit_of()["rigid piston"]
    assert row["verdict"] == "fails" and row["deviation"] > 1.0


def test_parallel_plate_fails_with_large_holes():
    assert verdict("parallel-plate capacitance", backplate__hole_radius="9 um") == "fails"


def test_open_area_rule_fails_at_hole_radius_near_gap():
    assert verdict("open-area capacitance rule") == "fails"


def test_linear_capacitance_fails_for_a_soft_diaphragm_in_a_small_gap():
    assert verdict("linear C(x)", diaphragm__residual_stress="1 MPa", backplate__gap="1.5 um",
                   electrical__bias_voltage="1 V") == "fails"


def test_bias_near_pull_in_is_flagged():
    rows = audit_of(electrical__bias_voltage="22 V")  # ~0.9 of the demo's pull-in voltage
    assert rows["pull-in margin"]["verdict"] == "fails"
    assert rows["negligible bias deflection"]["verdict"] == "fails"


def test_small_deflection_fails_for_a_thin_unstressed_plate():
    rows = audit_of(diaphragm__residual_stress="0 MPa", diaphragm__thickness="0.4 um",
                    electrical__bias_voltage="0.2 V")
    assert rows["small deflection"]["verdict"] == "fails"
    # a pure plate is exactly the plate closed form (Timoshenko & Woinowsky-Krieger 1959)
    assert rows["membrane vs plate"]["verdict"] == "holds"


def test_membrane_model_fails_between_plate_and_membrane():
    assert verdict("membrane vs plate", diaphragm__residual_stress="1 MPa",
                   diaphragm__thickness="2 um", electrical__bias_voltage="5 V") == "fails"


def test_incompressible_film_fails_without_holes():
    assert verdict("incompressible film", backplate__hole_lattice="none",
                   backplate__hole_radius=None, backplate__hole_pitch=None) in ("marginal", "fails")


def test_continuum_gas_fails_in_a_sub_micron_gap():
    assert verdict("continuum gas", backplate__gap="0.5 um", electrical__bias_voltage="0.5 V") == "fails"


def test_highpass_corner_fails_with_a_small_bias_resistor():
    assert verdict("high-pass corner below 20 Hz", electrical__bias_resistance="0.1 Gohm") == "fails"
