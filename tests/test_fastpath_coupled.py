"""The coupled section from the radial Hermite FE (diagap.fastpath.coupled, diagap.fastpath.axisym).

References: the stage's own FE (diagap.fem.coupling.plate.solve_coupled, Argyris plate) run in
the test with the same load; the uniformly loaded clamped disk w(0) = pa⁴/(64D) (Timoshenko &
Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, §62, eq. 62); the clamped disk with
tension w(0) = (pa⁴/D)[1/(4τ) − (I0(k) − 1)/(2τkI1(k))], k = √τ, and its membrane limit
pa²/(4T) (ibid. §21 and §94 [from memory]; the closed form is also checked in
tests/test_fastpath_field.py); the fundamental frequency of the clamped disk,
ωa²√(ρh/D) = 10.2158 (A. W. Leissa, Vibration of Plates, NASA SP-160, 1969, Table 2.1 [from
memory]); the parallel-plate pull-in of the clamped disk from an independent collocation solve
of the same ODE (scipy.integrate.solve_bvp, written here). The random-design comparison with
the full pipeline at "draft" runs with ``-m tables`` (it builds the cell and rim tables);
speed: tests/bench/bench_fastpath_coupled.py.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import replace

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.fastpath import FastPathUnavailable
from diagap.fastpath.axisym import DiskSystem, disk_nodes, solve_branch
from diagap.fastpath.coupled import coupled_outputs, disk_coupled

TOL = 1e-3
QUANTITIES = ("pull_in_voltage_v", "pull_in_center_deflection_m", "bias_center_deflection_m",
              "resonance_at_bias_hz", "resonance_no_bias_hz",
              "center_compliance_at_bias_m_per_pa", "center_compliance_no_bias_m_per_pa")


def parallel(s):
    return 1.0 / s**2


def parallel_slope(s):
    return -2.0 / s**3


def branch(tau, rho_e, refine, beta_b=None):
    sys_ = DiskSystem.build(disk_nodes(rho_e, tau, refine), tau, rho_e)
    return solve_branch(sys_, parallel, parallel_slope, beta_b)


@pytest.fixture(scope="module")
def draft_base():
    return demo_design().with_accuracy("draft")


def test_radial_fe_converges_at_fourth_order():
    """Cubic Hermite elements: each bisection cuts the error of the branch, bias-point and
    compliance values about 16-fold (fourth order; the eigenvalues reach eigh's round-off
    floor, ~1e-9, after one bisection, so only their size is checked); the reported level's
    estimate |fine − coarse|/15 stays ≪ 1e-4, also near buckling."""
    for tau, rho_e, rate in ((178.0, 0.7, True), (0.0, 0.5, True), (-8.0, 1.0, False)):
        beta_b = 0.6 * branch(tau, rho_e, 2).beta_pi
        rows = [branch(tau, rho_e, k, beta_b) for k in range(3)]
        for name in ("beta_pi", "w_pi", "w_b", "c_b", "c0", "mu_b", "mu0"):
            v = np.array([getattr(r, name) for r in rows])
            d = np.abs(np.diff(v))
            if rate and not name.startswith("mu"):
                assert d[0] / d[1] == pytest.approx(16.0, rel=0.25, abs=0), (tau, name, d)
            assert d[0] / 15 / abs(v[1]) < 3e-6, (tau, name)


def test_uniform_pressure_compliance_and_mode_closed_forms():
    from scipy.special import i0e, i1e

    r = branch(0.0, 1.0, 1)
    assert r.c0 == pytest.approx(1.0 / 64.0, rel=1e-6, abs=0)  # Timoshenko §62
    assert math.sqrt(r.mu0) == pytest.approx(10.2158, rel=2e-5, abs=0)  # Leissa
    for tau in (100.0, 1e4):
        k = math.sqrt(tau)
        exact = 1 / (4 * tau) - (i0e(k) - math.exp(-k)) / (2 * tau * k * i1e(k))  # I0 = e^k i0e
        assert branch(tau, 1.0, 1).c0 == pytest.approx(exact, rel=5e-6, abs=0)
    tau = 1e8  # membrane: pa²/(4T), the edge layer changes it by 2/√τ = 2e-4
    assert branch(tau, 1.0, 1).c0 == pytest.approx(1 / (4 * tau), rel=3e-4, abs=0)


def test_parallel_plate_pull_in_against_an_independent_collocation_solve():
    """Clamped disk, no tension, full electrode, solid parallel plates: ∇⁴ŵ = β/(1 − ŵ)².
    Reference: scipy.integrate.solve_bvp of the ODE as a first-order system with the centre's
    singular term, β as the unknown parameter at a prescribed centre deflection, maximised."""
    from scipy.integrate import solve_bvp
    from scipy.optimize import minimize_scalar

    S = np.zeros((4, 4))
    S[1, 1] = S[3, 3] = -1.0  # y = (w, w', ∇²w, (∇²w)'): y2' = y3 − y2/ρ, y4' = f − y4/ρ

    def fun(x, y, p):
        return np.vstack([y[1], y[2], y[3], p[0] / (1 - y[0]) ** 2])

    x = np.linspace(0, 1, 201)
    guess = {"y": None, "p": 10.0}

    def beta(w0):
        y0 = guess["y"] if guess["y"] is not None else np.vstack([
            w0 * (1 - x**2) ** 2, -4 * w0 * x * (1 - x**2), w0 * (16 * x**2 - 8),
            32 * w0 * x])
        bc = lambda ya, yb, p: np.array([ya[1], ya[3], yb[0], yb[1], ya[0] - w0])
        sol = solve_bvp(fun, bc, x, y0, p=[guess["p"]], S=S, tol=1e-9, max_nodes=100000)
        assert sol.success
        guess.update(y=sol.sol(x), p=sol.p[0])
        return sol.p[0]

    opt = minimize_scalar(lambda w: -beta(w), bounds=(0.35, 0.55), method="bounded",
                          options={"xatol": 1e-7})
    fast = branch(0.0, 1.0, 1)
    assert fast.beta_pi == pytest.approx(-opt.fun, rel=1e-6, abs=0)
    assert fast.w_pi == pytest.approx(opt.x, rel=1e-4, abs=0)


def _designs():
    return [
        {"diaphragm.residual_stress": "-0.5 MPa", "backplate.electrode_radius": "350 um"},
        {"diaphragm.residual_stress": "0 MPa", "backplate.electrode_radius": "500 um"},
        {"diaphragm.residual_stress": "80 MPa", "backplate.electrode_radius": "250 um"},
    ]


def test_matches_the_coupled_fe_on_the_same_load(draft_base):
    """The stage's FE (same PlateProblem, electrode, gap, bias and load) within 1e-3; the demo
    with its perforated cell's c(g) (as the electrostatics stage builds it), others with solid
    parallel plates (slack, compressive and tensioned, electrode radius 0.5 … 1.0 of the
    diaphragm's), and the demo at "normal" (whose coupled FE runs on the "draft" meshes)."""
    from diagap.extract import plate_problem
    from diagap.fem.coupling.plate import solve_coupled
    from diagap.fem.field.cell_table import capacitance_density_table
    from diagap.stages import GAP_TABLE

    warnings.simplefilter("ignore")
    b = draft_base.backplate
    demo_density = capacitance_density_table(GAP_TABLE[0] * b.gap_m, GAP_TABLE[1] * b.gap_m,
                                             b.hole_radius_m, b.hole_pitch_m, b.hole_lattice,
                                             b.thickness_m, "draft")
    cases = [(draft_base, demo_density, 10.0)] + [
        (with_overrides(draft_base, c), None, v) for c, v in zip(_designs(),
                                                                 (2.0, 6.0, 40.0))]
    cases = [(d, dens, v, "draft") for d, dens, v in cases] + [(draft_base, None, 10.0, "normal")]
    worst = 0.0
    for design, density, bias, acc in cases:
        p, b = plate_problem(design), design.backplate
        fe = solve_coupled(p, acc, b.electrode_size_m, b.gap_m, bias, density)
        fast = disk_coupled(p, b.electrode_size_m, b.gap_m, bias, density, fe_accuracy=acc)
        assert not fe.collapsed and not fast.collapsed
        for q in QUANTITIES:
            assert getattr(fast, q) == pytest.approx(getattr(fe, q), rel=TOL, abs=0), (q, p)
            worst = max(worst, abs(getattr(fast, q) / getattr(fe, q) - 1))
            assert fast.rel_error[q] < 1e-5
    assert worst > 0.0


def test_collapsed_bias_and_pull_in_only(draft_base):
    from diagap.extract import plate_problem

    p, b = plate_problem(draft_base), draft_base.backplate
    ok = disk_coupled(p, b.electrode_size_m, b.gap_m, 0.0)
    over = disk_coupled(p, b.electrode_size_m, b.gap_m, 1.01 * ok.pull_in_voltage_v)
    assert over.collapsed and over.bias_center_deflection_m is None
    assert "softening_factor" not in over.to_summary()
    assert ok.to_summary()["softening_factor"] == pytest.approx(1.0, rel=1e-12, abs=0)


def test_outside_the_coverage_is_refused_in_one_line(draft_base):
    square = with_overrides(draft_base, {"diaphragm.shape": "square", "diaphragm.radius": None,
                                         "diaphragm.side": "1 mm",
                                         "backplate.electrode_radius": None,
                                         "backplate.electrode_side": "0.9 mm"})
    cases = [
        (square, "diaphragm: shape 'square'"),
        (with_overrides(draft_base, {"diaphragm.edge": "simply-supported"}),
         "diaphragm: .*edge 'simply-supported'"),
        (with_overrides(draft_base, {"backplate.material": "polysilicon",
                                     "backplate.residual_stress": "50 MPa"}),
         "backplate: a compliant backplate"),
        (with_overrides(draft_base, {"layers.backplate_thickness": "0.2 um",
                                     "layers.backplate_permittivity": 7.5}), "layers: "),
    ]
    for design, text in cases:
        with pytest.raises(FastPathUnavailable, match=text) as err:
            coupled_outputs(design, {})
        assert "\n" not in str(err.value)
    with pytest.raises(ValueError, match="diaphragm: shape 'square'"):
        from diagap.extract import plate_problem

        disk_coupled(plate_problem(square), 1e-4, 4e-6, 1.0)


@pytest.mark.tables
def test_fast_summary_matches_the_pipeline(draft_base):
    """``fast_summary`` (cell and rim tables, radial solve) against the full pipeline's coupled
    section on random clamped circles inside the tables' range, every output within 1e-3."""
    import sys
    from pathlib import Path

    from diagap.fastpath import fast_summary, mapper_for
    from diagap.fastpath.field import electrostatics_outputs
    from diagap.pipeline import run_design
    from diagap.sweep.point import flatten_summary

    sys.path.insert(0, str(Path(__file__).parent))
    from test_fastpath_field import random_design

    electrostatics_outputs(draft_base, mapper_for())  # builds the cell and rim tables
    rng = np.random.default_rng(20261203)
    for k, design in enumerate([draft_base] + [random_design(rng, draft_base) for _ in range(4)]):
        if k > 1:  # the bias at 0.6 of pull-in; the first random design keeps its own 10 V,
            # beyond its pull-in (4.0 V): the collapsed outputs are compared too
            v_pi = fast_summary(design)["coupled.pull_in_voltage_v"]
            design = with_overrides(design, {"electrical.bias_voltage": 0.6 * v_pi})
        fast = {k: v for k, v in fast_summary(design).items() if k.startswith("coupled.")}
        full, _ = flatten_summary(run_design(design).summary())
        if not fast["coupled.collapsed"]:
            assert "coupled.softened_stiffness_n_per_m" in fast
        for key, value in fast.items():
            assert value == pytest.approx(float(full[key]), rel=TOL, abs=0), (key, design)
