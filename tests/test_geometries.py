"""The whole pipeline on invented variants of the demo (other shapes, edges, electrodes, holes):
every run completes and its numbers obey facts of the trade (common practice checks): pull-in of a
distributed diaphragm between g/3 and g/2 of centre travel, perforation factor between the
open-area rule and 1, a positive damping, a finite sensitivity below the piston limit's order."""
import math

import pytest

from diagap.design import demo_design, with_overrides
from diagap.pipeline import run_design

SQUARE = {"diaphragm.shape": "square", "diaphragm.radius": None, "diaphragm.side": "1 mm",
          "backplate.electrode_radius": None}
CASES = {
    "square-ss-electrode": {**SQUARE, "diaphragm.edge": "simply-supported",
                            "backplate.electrode_side": "0.8 mm"},
    "square-clamped-square-lattice": {**SQUARE, "backplate.hole_lattice": "square"},
    "disk-ss-small-electrode": {"diaphragm.edge": "simply-supported",
                                "backplate.electrode_radius": "0.25 mm"},
    "disk-solid-backplate": {"backplate.hole_lattice": "none", "backplate.hole_radius": None,
                             "backplate.hole_pitch": None},
    "disk-thick-unstressed": {"diaphragm.residual_stress": "0 MPa", "diaphragm.thickness": "3 um",
                              "electrical.bias_voltage": "30 V"},
}


@pytest.mark.parametrize("name", CASES)
def test_variant_runs_and_is_physical(name):
    d = with_overrides(demo_design().with_accuracy("draft"), CASES[name])
    res = run_design(d)
    s = res.summary()
    g = d.backplate.gap_m
    assert not res.collapsed
    assert g / 3 < s["coupled"]["pull_in_center_deflection_m"] < g / 2
    e = s["electrostatics"]
    if d.backplate.perforated:
        assert 1 - e["open_area_fraction"] < e["perforation_factor"] < 1
    else:
        assert e["perforation_factor"] == pytest.approx(1.0, abs=1e-9)
    assert e["rest_capacitance_f"] > e["parallel_plate_capacitance_f"] * e["perforation_factor"]
    assert s["damping"]["damping_n_s_per_m"] > 0
    r = s["response"]
    assert math.isfinite(r["sensitivity_db_v_per_pa"]) and r["snr_db"] > 0
    # the rigid-piston estimate (V/g)(x_c/p) bounds the FE sensitivity from above (common
    # practice: the real diaphragm's average motion is smaller than its centre motion)
    piston = d.electrical.bias_voltage_v / g * s["mechanics"]["center_compliance_m_per_pa"]
    assert r["sensitivity_v_per_pa"] < piston
    assert all(row["verdict"] in ("holds", "marginal", "fails") for row in s["audit"])
