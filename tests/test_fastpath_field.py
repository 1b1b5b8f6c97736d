"""The electrostatics section from the scaled cell and rim tables (diagap.fastpath.field).

References: the full electrostatics stage itself (diaphragm FE, cell FE samples, rim FE, run in
the test on the same design at the same accuracy); the closed-form static shape of the clamped
plate, w = p(a² − r²)²/(64 D) (Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd
ed. 1959, §62, eq. 62) and of the membrane, w ∝ a² − r² (ibid., §94 limit [from memory]);
Kirchhoff's formula for two thin coaxial disks of radius R at distance d,
C = ε0πR²/d + ε0R[ln(16πR/d) − 1] (G. Kirchhoff, "Zur Theorie des Condensators", Monatsber.
Akad. Wiss. Berlin 1877, 144–162 [from memory]); and the parallel-plate limit of a perforated
plate, c → ε0(1 − φ_open)/g as g/p → 0 (the solid part of the plate faces the diaphragm; common
practice). The 50-design check at "normal" accuracy is tests/bench/bench_fastpath_field.py.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.fastpath import FastPathUnavailable
from diagap.fastpath.field import OUTPUTS, electrostatics_outputs, static_shape

TOL = 1e-3
EPS0 = 8.8541878128e-12  # CODATA 2018 vacuum permittivity, F/m


def full_electrostatics(design) -> dict:
    """The flat ``electrostatics`` outputs of the stage (diaphragm FE + cell + rim FE)."""
    from diagap.extract import plate_problem
    from diagap.fem.plate.solver import solve_plate
    from diagap.stages import electrostatics_stage
    from diagap.sweep.point import flatten_summary

    acc = design.analysis.accuracy
    mech = solve_plate(plate_problem(design), acc)
    section = electrostatics_stage(design, mech)
    flat, _ = flatten_summary({"electrostatics": section.to_summary()})
    return flat


def random_design(rng, base):
    """A clamped disk with a random hole pattern, gap, electrode and stress inside the tables'
    validated range (diagap.fastpath.cells.CELL_RANGE, diagap.fastpath.fringe.RIM_RANGE)."""
    lattice = rng.choice(["hex", "square", "hex", "square", "none"])
    radius = 10 ** rng.uniform(math.log10(0.4e-3), math.log10(3e-3))
    gap = radius / 10 ** rng.uniform(math.log10(110), math.log10(400))
    pitch = gap / 10 ** rng.uniform(math.log10(0.03), math.log10(0.9))
    pitch = min(pitch, 0.3 * radius)
    changes = {
        "diaphragm.radius": radius, "diaphragm.thickness": radius / rng.uniform(100, 400),
        "diaphragm.residual_stress": rng.uniform(0.0, 40e6),
        "backplate.gap": gap, "backplate.electrode_radius": radius * rng.uniform(0.6, 1.0),
        "backplate.thickness": pitch * 10 ** rng.uniform(math.log10(0.07), math.log10(2.5)),
        "backplate.hole_lattice": str(lattice),
        "backplate.hole_radius": None if lattice == "none" else max(
            pitch * rng.uniform(0.07, 0.43), 0.2e-6),  # slip flow: a > 2 mean free paths
        "backplate.hole_pitch": None if lattice == "none" else pitch,
    }
    changes["backplate.thickness"] = min(changes["backplate.thickness"], 90 * gap)
    return with_overrides(base, changes)


@pytest.fixture(scope="module")
def draft_base():
    return demo_design().with_accuracy("draft")


@pytest.mark.tables
def test_random_designs_match_the_stage(draft_base):
    """Every output within 1e-3 of the full stage at the same ("draft") accuracy."""
    rng = np.random.default_rng(20261202)
    worst = 0.0
    for _ in range(10):
        design = random_design(rng, draft_base)
        fast = electrostatics_outputs(design)
        full = full_electrostatics(design)
        assert set(fast) == {f"electrostatics.{n}" for n in OUTPUTS}
        for key, value in fast.items():
            assert value == pytest.approx(full[key], rel=TOL, abs=0), (key, design.backplate)
            if full[key] != 0.0:  # the open-area fraction of a solid plate is 0
                worst = max(worst, abs(value / full[key] - 1.0))
    assert worst > 0.0  # the fast path is an approximation, not the stage itself


def test_static_shape_closed_forms():
    """∫φ dA/(πa²) = 1/3 for the plate, (1 − ρ²)² (Timoshenko & Woinowsky-Krieger 1959, §62,
    eq. 62), and → 1/2 for the membrane, 1 − ρ², as τ grows (ibid. [from memory])."""
    x, wx = np.polynomial.legendre.leggauss(60)
    rho, w = 0.5 * (x + 1), 0.5 * wx

    def mean(tau):
        return 2 * np.sum(w * rho * static_shape(rho, tau))

    assert mean(0.0) == pytest.approx(1.0 / 3.0, rel=1e-12, abs=0)
    assert mean(1e-5) == pytest.approx(1.0 / 3.0, rel=1e-5, abs=0)
    assert mean(1e6) == pytest.approx(0.5, rel=3e-3, abs=0)


def test_static_shape_tends_to_the_buckling_mode():
    """Near the buckling load of the clamped disk, N a²/D → j₁,₁² = 14.68, the static shape
    becomes the buckling mode (J0(kρ) − J0(k))/(1 − J0(k)), k = j₁,₁ (Timoshenko & Gere,
    Theory of Elastic Stability, 2nd ed. 1961, §9.2 [from memory])."""
    from scipy.special import j0, jn_zeros

    k = float(jn_zeros(1, 1)[0])
    rho = np.linspace(0.0, 1.0, 21)
    mode = (j0(k * rho) - j0(k)) / (1.0 - j0(k))
    assert np.max(np.abs(static_shape(rho, -0.9999 * k * k) - mode)) < 1e-4
    assert np.max(np.abs(static_shape(rho, -0.99 * k * k) - mode)) > 1e-4  # not yet there


@pytest.mark.tables
def test_solid_thin_pair_follows_kirchhoffs_disk_formula(draft_base):
    """No holes, electrode = diaphragm, thin electrode: C(0) is Kirchhoff's two-disk formula
    (Kirchhoff 1877 [from memory]) within its O(d/R) accuracy and the electrode's thickness."""
    radius, gap = 1e-3, 2e-6
    design = with_overrides(draft_base, {
        "diaphragm.radius": radius, "diaphragm.thickness": 5e-6, "backplate.gap": gap,
        "backplate.electrode_radius": radius, "backplate.thickness": 0.1e-6,
        "backplate.hole_lattice": "none", "backplate.hole_radius": None,
        "backplate.hole_pitch": None})
    fast = electrostatics_outputs(design)
    area = EPS0 * math.pi * radius**2 / gap
    kirchhoff = EPS0 * radius * (math.log(16 * math.pi * radius / gap) - 1.0)
    assert fast["electrostatics.parallel_plate_capacitance_f"] == pytest.approx(
        area, rel=1e-9, abs=0)
    assert fast["electrostatics.perforation_factor"] == pytest.approx(1.0, rel=1e-12, abs=0)
    assert fast["electrostatics.rim_fringing_capacitance_f"] == pytest.approx(
        kirchhoff, rel=0.03, abs=0)
    assert fast["electrostatics.rest_capacitance_f"] == pytest.approx(
        area + kirchhoff, rel=1e-3, abs=0)


@pytest.mark.tables
@pytest.mark.parametrize("lattice,kappa", [("hex", math.sqrt(3) / 2), ("square", 1.0)])
def test_small_gap_limit_is_the_solid_area(lattice, kappa):
    """As s = g/p → 0 the perforation factor tends to 1 − φ_open, φ_open = πa²/(κp²) (common
    practice). The hole rims add an edge fringing whose capacitance per length grows like
    (ε0/π)ln(1/g) for a plate edge over a plane (conformal mapping: Palmer, "The capacitance of a
    parallel-plate capacitor by the Schwartz-Christoffel transformation", Trans. AIEE 56, 1937
    [from memory]), so P = 1 − φ_open + s(A + B ln s) + …: the three coefficients from
    g/p = 0.005, 0.01, 0.014 give the limit."""
    from diagap.fastpath.cells import cell_table, table_point

    table, facts = cell_table(lattice, "draft")
    assert facts["uncertified"] == []
    s = np.array([0.005, 0.01, 0.014])
    for a in (0.1, 0.25, 0.4):
        P = np.array([table(table_point(a, 1.0, 0.5, x))[0] for x in s])
        limit = np.linalg.solve(np.column_stack([np.ones(3), s, s * np.log(s)]), P)[0]
        assert limit == pytest.approx(1 - math.pi * a * a / kappa, rel=1e-3, abs=0)
        assert P[0] > 1 - math.pi * a * a / kappa  # the fringing only adds


def test_outside_the_tables_is_refused_in_one_line(draft_base):
    cases = [
        ({"backplate.gap": "8 um"}, "backplate.gap: diaphragm radius/gap"),  # R/g = 62.5
        ({"diaphragm.edge": "simply-supported"}, "clamped circles"),
    ]
    for changes, text in cases:
        design = with_overrides(draft_base, changes)
        with pytest.raises(FastPathUnavailable, match=text) as err:
            electrostatics_outputs(design)
        assert "\n" not in str(err.value)
    tiny = with_overrides(draft_base, {"backplate.hole_radius": "0.8 um"})
    with pytest.raises(FastPathUnavailable, match=r"backplate.hole_radius: .*0\.04.*\[0\.05, "):
        electrostatics_outputs(tiny)


@pytest.mark.tables
def test_fast_summary_adds_the_section(draft_base):
    from diagap.fastpath import fast_summary, mapper_for

    built = electrostatics_outputs(draft_base, mapper_for())  # builds the cell and rim tables
    out = fast_summary(draft_base)  # reads them (the film tables are not built here)
    assert "mechanics.center_compliance_m_per_pa" in out
    assert {k: v for k, v in out.items() if k.startswith("electrostatics.")} == built
    layered = with_overrides(draft_base, {"layers.backplate_thickness": "0.2 um",
                                          "layers.backplate_permittivity": 7.5})
    with pytest.raises(FastPathUnavailable, match="layers"):
        electrostatics_outputs(layered)
    out = fast_summary(layered)  # mechanics still answered, the section left out
    assert "mechanics.center_compliance_m_per_pa" in out
    assert not any(k.startswith("electrostatics.") for k in out)


def test_summary_calls_only_read_the_electrostatics_tables(draft_base, tmp_path, monkeypatch):
    """Without a mapper a summary never builds the cell or rim tables (minutes): with an empty
    cache the section is left out and the mechanics still answered."""
    from diagap.fastpath import fast_summary, store

    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(store, "_HELD", {})
    out = fast_summary(draft_base)
    assert "mechanics.center_compliance_m_per_pa" in out
    assert not any(k.startswith("electrostatics.") for k in out)
    assert not any(k.startswith("damping.") for k in out)
