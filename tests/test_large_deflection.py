"""Large deflection (von Kármán plate, anchored edge): checks against outside references.

- Small-load limit: the linear Argyris plate on the same mesh (Kirchhoff plate with tension,
  D∇⁴w − T∇²w = p; Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 1959, ch. 3).
- Thin-membrane limit: Hencky's power series for the clamped (anchored) circular membrane under
  uniform pressure (H. Hencky, Z. Math. Phys. 63, 1915, 311–317; numerical error corrected by
  W.-Z. Chien, 1948; coefficients tabulated in W. B. Fichter, NASA TP-3658, 1997), computed here
  from its recursion. Constants [from memory] of Fichter 1997 for ν = 0.3: b0 = 1.7244,
  w0 = 0.6534·a·(pa/(Eh))^(1/3) (0.662 is the older, uncorrected coefficient).
- Axisymmetric von Kármán equations (T&W 1959 §97; Föppl–von Kármán) as a 1D boundary-value
  problem solved with scipy.integrate.solve_bvp in scaled variables x = r/a, W = w/h, U = u·a/h²
  on [x0, 1], x0 = 1e-3 (regular behaviour W' ∝ x, U ∝ x imposed at x0).
- Convergence order under mesh refinement (disk: O(h_edge²) from the polygonal boundary, as the
  linear solver, tests/test_plate_convergence.py).
- Contact: the contact pressure against the crossing of the pressure-controlled deflection curve
  with the clearance.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_bvp
from scipy.optimize import brentq

from diagap.fem.levels import MeshSize
from diagap.fem.plate.large_deflection import (ElectrostaticBias, level_systems,
                                               solve_large_deflection)
from diagap.fem.plate.solver import PlateProblem, assemble_plate
from diagap.fem.plate.vonkarman import build_von_karman

POLY = dict(youngs_modulus_pa=160e9, poisson_ratio=0.22, thickness_m=1e-6, density_kg_m3=2330.0)


# --- references built here --------------------------------------------------------------------
def hencky_coefficient(nu: float, n_terms: int = 200) -> float:
    """w0/(a (pa/(Eh))^(1/3)) from Hencky's series (Hencky 1915, Chien 1948, Fichter 1997).

    σ_r = E q^(2/3) S(ρ), q = pa/(Eh), ρ = r/a; compatibility 3S' + ρS'' + ρ/(8S²) = 0 gives
    S = Σ b_k ρ^(2k) with b_k = −[1/S²]_(k−1)/(32k(k+1)); b0 from the anchored edge
    ε_θ(1) = 0: Σ b_k(2k + 1 − ν) = 0; w' = −pr/(2hσ_r) gives w0 = a q^(1/3) Σ [1/S]_k/(4k+4).
    """
    def series(b0):
        b, inv = np.zeros(n_terms), np.zeros(n_terms)
        b[0], inv[0] = b0, 1.0 / b0
        for k in range(1, n_terms):
            b[k] = -np.dot(inv[:k], inv[k - 1::-1]) / (32 * k * (k + 1))
            inv[k] = -np.dot(b[1:k + 1], inv[k - 1::-1]) / b0
        return b, inv

    k = np.arange(n_terms)
    b0 = brentq(lambda b0: np.sum(series(b0)[0] * (2 * k + 1 - nu)), 0.1, 2.0, xtol=1e-14)
    return float(np.sum(series(b0)[1] / (4 * k + 4)))


def axisymmetric_center_deflection(P: float, tau: float, nu: float, edge: str,
                                   guess=None, x0: float = 1e-3):
    """Centre W = w0/h of the axisymmetric von Kármán plate at P = pa⁴/(Dh), τ = σ0 h a²/D.

    First-order form, y = [W, φ = W', κ = ∇²W, U, N = n_r − τ]:
        W' = φ,  φ' = κ − φ/x,  κ' = (τ + N)φ + Px/2          (out of plane, integrated once)
        U' = N/12 − φ²/2 − νU/x,  N' = [12(1−ν²)U/x − (1−ν)N]/x  (in-plane (x n_r)' = n_θ)
    with n_r = τ + 12(U' + φ²/2 + νU/x). Centre regularity at x0: φ = κx/2, N = 12(1+ν)U/x.
    Edge x = 1: W = 0, U = 0, and φ = 0 (clamped) or κ − (1−ν)φ = 0 (zero moment).
    """
    def rhs(x, y):
        W, f, k, U, N = y
        return np.vstack([f, k - f / x, (tau + N) * f + 0.5 * P * x,
                          N / 12 - 0.5 * f**2 - nu * U / x,
                          (12 * (1 - nu**2) * U / x - (1 - nu) * N) / x])

    def bc(ya, yb):
        edge_slope = yb[1] if edge == "clamped" else yb[2] - (1 - nu) * yb[1]
        return np.array([ya[1] - 0.5 * x0 * ya[2], ya[4] - 12 * (1 + nu) * ya[3] / x0,
                         yb[0], edge_slope, yb[3]])

    if guess is None:
        x = np.unique(np.concatenate([np.geomspace(x0, 1.0, 60), np.linspace(x0, 1.0, 100)]))
        y = np.zeros((5, x.size))
        y[0] = P / 64 * (1 - x**2) ** 2
        y[1] = -P / 16 * x * (1 - x**2)
        y[2] = -P / 8 * (1 - 2 * x**2)
    else:
        x, y = guess
    sol = solve_bvp(rhs, bc, x, y, tol=1e-7, max_nodes=100000)
    assert sol.success, sol.message
    W0 = sol.y[0, 0] - 0.25 * sol.y[2, 0] * x0**2  # W(x0) = W(0) + ¼κ(0)x0²
    xs = np.unique(np.concatenate([np.geomspace(x0, 1.0, 80), np.linspace(x0, 1.0, 200)]))
    return float(W0), (xs, sol.sol(xs))


def axisymmetric_curve(Ps, tau, nu, edge):
    out, guess = [], None
    for P in Ps:
        W, guess = axisymmetric_center_deflection(P, tau, nu, edge, guess)
        out.append(W)
    return np.array(out)


def _disk(sigma=0.0, edge="clamped", **kw):
    mat = dict(POLY, **kw)
    return PlateProblem("circle", 0.5e-3, residual_stress_pa=sigma, edge=edge, **mat)


# --- tests ------------------------------------------------------------------------------------
def test_hencky_reference_matches_tabulated_constant():
    """The series of Hencky (1915) as corrected (Chien 1948): Fichter 1997 gives 0.6534 for
    ν = 0.3 [from memory]."""
    assert hencky_coefficient(0.3) == pytest.approx(0.6534, rel=2e-4, abs=0)


@pytest.mark.parametrize("shape,edge,sigma", [("circle", "clamped", 10e6),
                                              ("circle", "simply-supported", 0.0),
                                              ("square", "clamped", 0.0),
                                              ("square", "simply-supported", 5e6)])
def test_small_load_limit_is_the_linear_plate(shape, edge, sigma):
    pr = PlateProblem(shape, 0.5e-3, residual_stress_pa=sigma, edge=edge, **POLY)
    plate = assemble_plate(pr, MeshSize(0.4, 0.1, 0.3))
    vk = build_von_karman(plate, pr.thickness_m)
    p_pa = 1e-4 * vk.pressure_scale_pa  # W ~ 1e-6: nonlinear terms ~ W² negligible
    x, _ = vk.solve_pressure(p_pa / vk.pressure_scale_pa, vk.zero())
    nonlinear = vk.center_deflection_m(x)
    linear = plate.center_deflection(plate.solve(plate.load_vector(p_pa)))
    assert nonlinear == pytest.approx(linear, rel=1e-4, abs=0)
    # reported linear prediction against the linear solver's compliance on the same mesh
    res = solve_large_deflection(pr, [1.0], "draft")
    plate_f = level_systems(pr, "draft")[-1].plate
    c_lin = plate_f.center_deflection(plate_f.solve(plate_f.load_vector(1.0)))
    assert res.compliance_m_per_pa == pytest.approx(c_lin, rel=1e-4, abs=0)


@pytest.mark.parametrize("edge", ["simply-supported", "clamped"])
def test_thin_membrane_limit_hencky(edge):
    """At w0 = 60 h the bending stiffness is a small correction (boundary layer of relative width
    ~h/w0): the plate approaches Hencky's anchored membrane within 1 %."""
    pr = _disk(0.0, edge, poisson_ratio=0.3)
    vk = level_systems(pr, "normal")[-1]
    x, P = vk.zero(), 0.0
    for W in (2.0, 5.0, 10.0, 20.0, 35.0, 60.0):
        x, P, _ = vk.solve_deflection(W, x, P)
    p_pa = P * vk.pressure_scale_pa
    a, E, h = pr.size_m, pr.youngs_modulus_pa, pr.thickness_m
    w_hencky = hencky_coefficient(0.3) * a * (p_pa * a / (E * h)) ** (1 / 3)
    err = 60.0 * h / w_hencky - 1
    print(f"Hencky ({edge}): relative error {err:.2e}")
    assert abs(err) <= 1e-2


@pytest.mark.parametrize("edge,sigma", [("clamped", 10e6), ("clamped", 0.0),
                                        ("simply-supported", 2e6)])
def test_axisymmetric_boundary_value_problem(edge, sigma):
    """Centre deflection up to 5 thicknesses, finest level of the "fine" setting, against the
    1D boundary-value problem at the same pressures."""
    pr = _disk(sigma, edge)
    vk = level_systems(pr, "fine")[-1]
    x, P = vk.zero(), 0.0
    W_fe, P_fe = [0.5, 1.0, 2.0, 3.5, 5.0], []
    for W in W_fe:
        x, P, _ = vk.solve_deflection(W, x, P)
        P_fe.append(P)
    W_ref = axisymmetric_curve(P_fe, pr.tension_ratio, pr.poisson_ratio, edge)
    err = np.array(W_fe) / W_ref - 1
    print(f"BVP ({edge}, σ0={sigma:g}): relative deviations {np.array2string(err, precision=2)}")
    assert np.max(np.abs(err)) <= 1e-3
    # the stiffening is real: at 5 thicknesses well below the linear prediction
    plate = vk.plate
    c_lin = plate.center_deflection(plate.solve(plate.load_vector(vk.pressure_scale_pa)))
    assert W_fe[-1] < 0.8 * c_lin * P_fe[-1] / pr.thickness_m
    # away from the backplate: the mirror image (unbiased plate: p → −p gives w → −w)
    xn, Pn = vk.solve_pressure(-P_fe[1], vk.zero())
    assert vk.center_deflection_m(xn) == pytest.approx(-W_fe[1] * pr.thickness_m, rel=1e-8,
                                                       abs=0)


def test_convergence_order_disk():
    pr = _disk(0.0, "clamped")
    P = 1500.0  # W0 ≈ 2.9
    W_ref, _ = axisymmetric_center_deflection(P, 0.0, pr.poisson_ratio, "clamped")
    base = MeshSize(0.3, 0.06, 0.3)
    h, err = [], []
    for f in (1.5, 1.0, 1 / 1.5, 1 / 2.25):
        size = base.scaled(f)
        vk = build_von_karman(assemble_plate(pr, size), pr.thickness_m)
        x, _ = vk.solve_pressure(P / 2, vk.zero())
        x, _ = vk.solve_pressure(P, x)
        err.append(vk.center_deflection_m(x) / pr.thickness_m / W_ref - 1)
        h.append(size.h_edge)
    order = float(np.polyfit(np.log(h), np.log(np.abs(err)), 1)[0])
    print(f"observed order {order:.2f}, errors {err}")
    assert 1.7 < order < 2.6, err
    assert abs(err[-1]) < 2e-4


def test_contact_pressure_is_the_crossing_of_the_curve():
    pr = _disk(10e6, "clamped")
    gap, stopper = 4e-6, 1e-6
    clearance = gap - stopper
    first = solve_large_deflection(pr, [], "draft", clearance_m=clearance)
    pc = first.contact_pressure_pa
    ps = pc * np.linspace(0.9, 0.999, 8)
    res = solve_large_deflection(pr, list(ps) + [1.01 * pc], "draft", clearance_m=clearance)
    w = np.array(res.center_deflection_m[:-1], dtype=float)
    assert res.center_deflection_m[-1] is None  # past contact
    # crossing of the pressure-controlled curve (cubic through the points) with the clearance
    poly = np.polynomial.Polynomial.fit(w, ps, 3)
    crossing = float(poly(clearance))
    print(f"contact {pc:.6g} Pa, curve crossing {crossing:.6g} Pa")
    assert res.contact_pressure_pa == pytest.approx(crossing, rel=1e-3, abs=0)
    assert res.uncertainty["contact_pressure_pa"] < 1e-3


def test_bias_lowers_the_contact_pressure():
    """With the electrostatic attraction of a bias (parallel plates, ε0/ĝ²) the diaphragm snaps
    to the backplate before the sound pressure alone would push it there."""
    from diagap.fem.coupling.branch import ElectrostaticLoad

    pr = _disk(10e6, "clamped")
    gap = 4e-6
    bias = ElectrostaticBias(0.45e-3, gap, 10.0, ElectrostaticLoad.parallel_plate())
    plain = solve_large_deflection(pr, [], "draft", clearance_m=gap)
    biased = solve_large_deflection(pr, [0.0, -100.0], "draft", clearance_m=gap, bias=bias)
    assert 0 < biased.contact_pressure_pa < plain.contact_pressure_pa
    w_bias, w_neg = biased.center_deflection_m
    # rest deflection under bias: the electrostatic pressure ε0V²/(2g²) on the electrode,
    # to first order (linear compliance of the electrode load < uniform load compliance)
    p_e = 8.8541878128e-12 * 100.0 / (2 * gap**2)
    assert 0 < w_bias < 1.2 * p_e * plain.compliance_m_per_pa
    assert w_neg < 0 < w_bias


def test_quasistatic_thd_of_a_reciprocal_transfer():
    """C(p) = C0(1 + a p) under constant charge gives v ∝ 1/(1 + ε sin θ) − 1, ε = a p̂, whose
    harmonics fall as r^k, r = (1 − √(1−ε²))/ε (Fourier series of 1/(1 + ε sin θ), Gradshteyn &
    Ryzhik, Table of Integrals, 1.447 [from memory]); hence THD = r/√(1 − r²)."""
    from diagap.lumped.quasistatic import QuasiStaticTransfer, spl_to_pa

    a = 1e-3  # 1/Pa
    p = np.linspace(-900.0, 900.0, 61)
    tr = QuasiStaticTransfer(tuple(p), tuple(1e-12 * (1 + a * p)), 10.0)
    for eps in (0.05, 0.3, 0.6):
        r = (1 - math.sqrt(1 - eps**2)) / eps
        assert tr.thd(eps / a) == pytest.approx(r / math.sqrt(1 - r**2), rel=1e-6, abs=0)
    r10 = 0.1 / math.sqrt(1.01)  # THD = 10 %
    eps10 = 2 * r10 / (1 + r10**2)
    assert spl_to_pa(tr.thd_point_spl_db(0.10)) == pytest.approx(eps10 / a, rel=1e-5, abs=0)
    # a linear transfer under constant charge: C ∝ 1/(1 − p/p0) (piston on a linear spring)
    lin = QuasiStaticTransfer(tuple(p), tuple(1e-12 / (1 - p / 2000.0)), 10.0)
    assert lin.thd(800.0) < 1e-6  # interpolation of the samples only
    assert lin.thd_point_spl_db(0.10) is None


def test_summary_contract_and_plot():
    """static_pressures → large_deflection.pressures_pa / center_deflection_m (same order, null
    past contact, no bias) and contact_pressure_pa with its uncertainty; the report plot."""
    from diagap.design import demo_design, with_overrides
    from diagap.pipeline import run_design
    from diagap.report.plots import report_plots

    d = with_overrides(demo_design().with_accuracy("draft"), {
        "analysis.static_pressures": ["100 Pa", "-0.3 kPa", "5 kPa", "0.5 kPa"],
        "backplate.stopper_height": "1 um"})
    res = run_design(d)
    s = res.summary()
    ld = s["large_deflection"]
    assert ld["pressures_pa"] == [100.0, -300.0, 5000.0, 500.0]
    w = ld["center_deflection_m"]
    assert w[2] is None and w[1] < 0 < w[0] < w[3] < 3e-6
    pc = ld["contact_pressure_pa"]
    assert 500.0 < pc < 5000.0 and ld["clearance_m"] == pytest.approx(3e-6, rel=1e-12, abs=0)
    assert 0 < s["uncertainty"]["large_deflection.contact_pressure_pa"] < 1e-2
    # stiffening: below the linear prediction toward and away from the backplate
    lin = ld["linear_center_deflection_m"]
    assert abs(w[3]) < abs(lin[3]) and abs(w[1]) < abs(lin[1])
    # with bias the diaphragm reaches the stopper at a lower sound pressure
    assert 0 < ld["contact_pressure_at_bias_pa"] < pc
    rows = {r["assumption"]: r for r in s["audit"]}
    assert "von Karman" in rows["small deflection"]["note"]
    assert any(p.name == "large_deflection" for p in report_plots(res))
