"""The compliant backplate: two-plate electrostatic coupling, its limits and the pipeline.

References are derived in the tests from raw inputs (named where they come from).
"""
import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp

from diagap.design import DesignError, demo_design, load_design, with_overrides
from diagap.fem.coupling.branch import CouplingSystem, ElectrostaticLoad
from diagap.fem.coupling.twoplate import pair_system, solve_pair

EPS0 = 8.8541878128e-12  # CODATA 2018 vacuum permittivity, F/m
EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "compliant_backplate.toml"


def _piston(k, m):
    return CouplingSystem(K=sp.csc_matrix([[k]]), B=sp.csr_matrix([[1.0]]),
                          weights=np.array([1e-6]), center=np.array([1.0]),
                          M=sp.csc_matrix([[m]]))


def test_two_rigid_pistons_on_springs_pull_in_as_springs_in_series():
    """Two rigid parallel plates of area A on springs k1, k2, gap g, voltage V.

    Equilibrium: k1 x1 = k2 x2 = F = ε0 A V² / (2 (g − s)²), s = x1 + x2 the closure, so
    s = F/k1 + F/k2 = F/k with k = k1 k2/(k1 + k2) (springs in series): the one-spring problem
    k s = ε0 A V²/(2(g − s)²). V²(s) = 2 k s (g − s)²/(ε0 A) is largest where
    d/ds[s (g − s)²] = (g − s)(g − 3s) = 0, s = g/3: V_PI² = 2k(g/3)(2g/3)²/(ε0 A)
    = 8 k g³/(27 ε0 A). Each plate moves in proportion to its compliance: x_i = s k/k_i.
    """
    k1, k2, m1, m2, g, A = 3.0, 7.0, 1e-9, 3e-9, 2e-6, 1e-6
    k = k1 * k2 / (k1 + k2)
    lv = solve_pair(_piston(k1, m1), _piston(k2, m2), ElectrostaticLoad.parallel_plate(), g,
                    0.5, np.array([A]))
    v_pi = math.sqrt(8 * k * g**3 / (27 * EPS0 * A))
    assert lv.branch.pull_in_voltage_v == pytest.approx(v_pi, rel=1e-8, abs=0)
    assert lv.pull_in.diaphragm_center_m == pytest.approx(g / 3 * k / k1, rel=1e-6, abs=0)
    assert lv.pull_in.backplate_center_m == pytest.approx(g / 3 * k / k2, rel=1e-6, abs=0)
    # bias point: s solves k s (g − s)² = ε0 A V²/2 on its stable root (s < g/3)
    V = 0.5
    roots = np.roots([k, -2 * k * g, k * g * g, -EPS0 * A * V * V / 2]).real
    s = min(r for r in roots if 0 < r < g / 3)
    assert lv.bias.diaphragm_center_m + lv.bias.backplate_center_m == \
        pytest.approx(s, rel=1e-9, abs=0)
    # small signal: electrostatic spring k_e = ε0 A V²/(g − s)³ couples the pistons;
    # modes of [[k1 − ke, −ke], [−ke, k2 − ke]] with diag(m1, m2)
    ke = EPS0 * A * V * V / (g - s) ** 3
    Kt = np.array([[k1 - ke, -ke], [-ke, k2 - ke]])
    lam = np.sort(np.linalg.eigvals(np.diag([1 / m1, 1 / m2]) @ Kt).real)
    assert np.asarray(lv.frequencies_hz[:2]) == pytest.approx(np.sqrt(lam) / (2 * np.pi),
                                                               rel=1e-8, abs=0)
    # pressure on the first plate only: δx2/δx1 = ke/(k2 − ke), slope factor k2/(k2 − ke)
    c_d, c_b, factor = lv.compliance_m_per_pa
    assert c_b / c_d == pytest.approx(ke / (k2 - ke), rel=1e-8, abs=0)
    assert factor == pytest.approx(k2 / (k2 - ke), rel=1e-8, abs=0)


def test_pair_needs_shared_quadrature_points():
    a = _piston(1.0, 1.0)
    b = dataclasses.replace(_piston(1.0, 1.0), weights=np.array([2e-6]))
    with pytest.raises(ValueError, match="same mesh"):
        pair_system(a, b)


@pytest.fixture(scope="module")
def results():
    from diagap.pipeline import run_design

    rigid = demo_design().with_accuracy("draft")
    compliant = with_overrides(rigid, {"backplate.material": "polysilicon",
                                       "backplate.residual_stress": "50 MPa"})
    b = compliant.backplate
    stiff = dataclasses.replace(compliant, backplate=dataclasses.replace(
        b, plate=dataclasses.replace(b.plate, youngs_modulus_pa=1e22)))
    return {k: run_design(d) for k, d in
            (("rigid", rigid), ("compliant", compliant), ("stiff", stiff))}


@pytest.fixture(scope="module")
def runs(results):
    return {k: json.loads(json.dumps(v.summary())) for k, v in results.items()}


def test_very_stiff_backplate_reproduces_the_rigid_backplate(runs):
    # E = 1e22 Pa: the backplate moves ~1e-11 of the diaphragm, so the two-plate solve must
    # give today's rigid-backplate pull-in, bias deflection and sensitivity within 1e-4
    r, s = runs["rigid"], runs["stiff"]
    for key in ("pull_in_voltage_v", "bias_center_deflection_m", "pull_in_center_deflection_m",
                "center_compliance_at_bias_m_per_pa", "resonance_at_bias_hz"):
        assert s["coupled"][key] == pytest.approx(r["coupled"][key], rel=1e-4, abs=0), key
    sens = 10 ** (np.array([s["response"]["sensitivity_db_v_per_pa"],
                            r["response"]["sensitivity_db_v_per_pa"]]) / 20)
    assert sens[0] == pytest.approx(sens[1], rel=1e-4, abs=0)
    assert abs(s["coupled"]["backplate_center_deflection_m"]) < 1e-9 * \
        r["coupled"]["bias_center_deflection_m"]


def test_compliant_backplate_lowers_pull_in_and_moves_with_the_diaphragm(runs):
    r, c = runs["rigid"]["coupled"], runs["compliant"]["coupled"]
    assert c["pull_in_voltage_v"] < r["pull_in_voltage_v"]
    assert c["backplate_center_deflection_m"] > 0  # pulled towards the diaphragm
    assert c["backplate_slope_factor"] > 1
    # series springs bound the pull-in from below: the closure stiffness is less than the
    # diaphragm's but the backplate is stiffer, so the drop is less than half the √k factor
    assert c["pull_in_voltage_v"] > 0.5 * r["pull_in_voltage_v"]
    mech = runs["compliant"]["mechanics"]
    assert mech["backplate_natural_frequencies_hz"][0] > 0
    assert "backplate_natural_frequencies_hz" not in runs["rigid"]["mechanics"]
    assert "plate" not in runs["rigid"]["design"]["backplate"]
    assert "response.distributed" in runs["compliant"]["skipped"]


def test_compliant_backplate_design_keys():
    d = load_design(EXAMPLE)
    assert d.backplate.plate is not None and d.backplate.plate.edge == "clamped"
    assert d.backplate.plate.youngs_modulus_pa == pytest.approx(160e9, rel=1e-12, abs=0)
    assert demo_design().backplate.plate is None
    with pytest.raises(DesignError, match="backplate.youngs_modulus"):
        with_overrides(demo_design(), {"backplate.residual_stress": "50 MPa"})
    with pytest.raises(DesignError, match="backplate.edge"):
        with_overrides(demo_design(), {"backplate.material": "polysilicon",
                                       "backplate.edge": "hinged"})


def test_backplate_outputs_are_named_and_reported(results, runs, tmp_path):
    from diagap.names import lookup
    from diagap.writer import write_outputs

    def numeric(d, prefix):
        for k, v in d.items():
            if isinstance(v, dict):
                yield from numeric(v, f"{prefix}{k}.")
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                yield f"{prefix}{k}"
            elif isinstance(v, list) and v and all(isinstance(x, (int, float)) for x in v):
                yield f"{prefix}{k}"

    s = runs["compliant"]
    keys = [k for sec in ("mechanics", "coupled") for k in numeric(s[sec], sec + ".")]
    assert "coupled.backplate_center_deflection_m" in keys
    assert "mechanics.backplate_natural_frequencies_hz" in keys
    assert not [k for k in keys if lookup(k) is None]
    write_outputs(results["compliant"], tmp_path / "out")
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert lookup("coupled.backplate_center_deflection_m").label in html
    assert lookup("mechanics.backplate_natural_frequencies_hz").label in html


def test_buckled_backplate_is_a_one_line_design_error():
    from diagap.pipeline import run_design

    d = with_overrides(demo_design().with_accuracy("draft"),
                       {"backplate.material": "polysilicon", "backplate.residual_stress": "-2 GPa"})
    with pytest.raises(DesignError, match="backplate.residual_stress"):
        run_design(d)


def test_backplate_plate_carries_the_homogenised_properties():
    # the PlateProblem handed to the plate solver reproduces D_eq, ν_eq, the scaled residual
    # tension σ0·h·(biaxial stiffness ratio) and ρh(1 − φ) exactly
    from diagap.backplate import backplate_plate, backplate_problem

    d = load_design(EXAMPLE)
    hp = backplate_plate(d, "draft")
    pr = backplate_problem(d, hp)
    b = d.backplate
    assert pr.bending_stiffness == pytest.approx(hp.bending_stiffness_nm, rel=1e-12, abs=0)
    assert pr.poisson_ratio == hp.bending_poisson_ratio
    assert pr.tension_n_per_m == pytest.approx(
        b.plate.residual_stress_pa * b.thickness_m * hp.tension_ratio, rel=1e-12, abs=0)
    phi = 2 * math.pi * (b.hole_radius_m / b.hole_pitch_m) ** 2 / math.sqrt(3)  # hex cell
    assert pr.areal_density == pytest.approx(b.plate.density_kg_m3 * b.thickness_m * (1 - phi),
                                             rel=1e-12, abs=0)
    assert pr.size_m == d.diaphragm.size_m and pr.edge == "clamped"
