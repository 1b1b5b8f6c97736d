"""Convergence rates of the diaphragm solvers (fit log error against log h, assert the slope and
an absolute cap).

Expected orders:
- Argyris (P5) plate on the disk, rim-graded family refined as a whole: the polygonal boundary
  (vertices on the circle) dominates, error ∝ h_edge² (1/n_b²); reference T&W 1959 ch. 3
  (clamped w0 = pa⁴/64D; simply supported (5+ν)/(1+ν)·pa⁴/64D).
- Argyris on a straight-edged square, nested uniform meshes, smooth solution: point values
  O(h^(p+1)) = O(h⁶), eigenvalues O(h^(2(p−1))) = O(h⁸) (Ciarlet, The Finite Element Method for
  Elliptic Problems, 1978; Strang & Fix, An Analysis of the FEM, 1973 — general rates).
  Reference: the single Navier term w = p/(D k⁴)·cos(πx/a)cos(πy/a) (T&W ch. 5), ω² = D k⁴/ρ_s.
- Isoparametric P2 membrane on the curved disk: eigenvalue O(h⁴) (Strang & Fix 1973); reference
  ω = j01/a_eff·√(T/ρ_s)·√(1 + D k²/T) of the same model (j01 from scipy.special.jn_zeros).
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special
from skfem import MeshTri

from checks import kirchhoff_plate
from diagap.fem.levels import MeshSize, richardson
from diagap.fem.plate.membrane import build_membrane_system
from diagap.fem.plate.membrane import _mesh as membrane_mesh
from diagap.fem.plate.solver import PlateProblem, assemble_plate

POLY = dict(youngs_modulus_pa=160e9, poisson_ratio=0.22, thickness_m=1e-6, density_kg_m3=2330.0)


def slope(h, err):
    """Least-squares slope of log|err| against log h."""
    return float(np.polyfit(np.log(h), np.log(np.abs(err)), 1)[0])


def test_richardson_estimate_is_exact_for_a_power_law():
    # Richardson (Phil. Trans. R. Soc. A 210, 1911): if v(h) = v* + C h^p, then with levels h and
    # h/r the error of the fine value is |v_fine − v_coarse|/(r^p − 1), exactly. The helper's
    # relative estimate must reproduce it (plus its stated noise floor, below 1e-4).
    from diagap.fem.levels import RATIO

    v_star, c = 2.5e-9, 3e-10
    for p in (1.0, 4.0 / 3.0, 2.0, 4.0):
        for h in (0.4, 0.1):
            coarse, fine = v_star + c * h**p, v_star + c * (h / RATIO) ** p
            true = abs(fine - v_star) / fine
            est = float(richardson(np.array([coarse]), np.array([fine]), order=p)[0])
            assert true <= est <= true + 1e-4, (p, h, true, est)
            assert est - true < 0.01 * true + 1e-4


def _disk_errors(edge):
    pr = PlateProblem("circle", 0.5e-3, residual_stress_pa=0.0, edge=edge, **POLY)
    D = kirchhoff_plate(160e9, 1e-6, 0.22, 2330.0)[0]  # D = Eh³/(12(1 − ν²)) from raw inputs
    a, nu = 0.5e-3, 0.22
    factor = 1.0 if edge == "clamped" else (5 + nu) / (1 + nu)
    exact = factor * a**4 / (64 * D)  # T&W 1959, ch. 3
    base = MeshSize(0.3, 0.06, 0.3)
    h, values = [], []
    for f in (1.5, 1.0, 1 / 1.5, 1 / 2.25):
        size = base.scaled(f)
        system = assemble_plate(pr, size)
        values.append(system.center_deflection(system.solve(system.load_vector(1.0))))
        h.append(size.h_edge)
    return np.array(h), np.array(values), exact


def test_clamped_disk_order_two():
    h, w, exact = _disk_errors("clamped")
    err = w / exact - 1
    assert 1.8 < slope(h, err) < 2.4, err
    assert abs(err[-1]) < 3e-4
    # the two-level estimate (order 2) is honest at every step of the sequence
    est = richardson(w[:-1], w[1:], order=2.0)
    assert np.all(np.abs(err[1:]) <= 3 * est), (err, est)


def test_simply_supported_disk_converges_to_the_curved_limit():
    """With the curvature constraint w_tt = κ w_n the SS disk converges at O(h²) to the exact
    value (T&W ch. 3), not to a polygonal (Babuška) limit."""
    h, w, exact = _disk_errors("simply-supported")
    err = w / exact - 1
    assert 1.7 < slope(h, err) < 2.5, err
    assert abs(err[-1]) < 1e-4


def test_argyris_high_order_on_square():
    pr = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, 0.0, "simply-supported")
    D, _, rs = kirchhoff_plate(160e9, 1e-6, 0.3, 2330.0)  # from raw inputs
    a = 1e-3
    k2 = 2 * math.pi**2 / a**2
    w_exact = 1.0 / (D * k2 * k2)  # single Navier term, T&W ch. 5
    f_exact = math.sqrt(D * k2 * k2 / rs) / (2 * math.pi)
    n_cells = np.array([4, 6, 8])
    err_w, err_f = [], []
    for n in n_cells:
        grid = np.linspace(-1, 1, n + 1)
        system = assemble_plate(pr, MeshTri.init_tensor(grid, grid))
        load = system.load_vector(lambda x, y: np.cos(math.pi * x / a) * np.cos(math.pi * y / a))
        err_w.append(system.center_deflection(system.solve(load)) / w_exact - 1)
        omega2, _ = system.modes(1)
        err_f.append(math.sqrt(omega2[0]) / (2 * math.pi) / f_exact - 1)
    h = 2.0 / n_cells
    assert slope(h, err_w) > 5.5, err_w  # expected 6
    assert slope(h, err_f) > 7.0, err_f  # expected 8
    assert abs(err_w[-1]) < 1e-6 and abs(err_f[-1]) < 1e-8


def test_membrane_p2_order():
    pr = PlateProblem("circle", 0.5e-3, 1e3, 0.3, 1e-6, 2330.0, 10e6, "clamped")
    D, T, rs = kirchhoff_plate(1e3, 1e-6, 0.3, 2330.0, 10e6)  # from raw inputs
    a_eff = 0.5e-3 - math.sqrt(D / T)  # clamped edge moved inward by √(D/T) (module docstring)
    k = special.jn_zeros(0, 1)[0] / a_eff
    f_exact = k * math.sqrt(T / rs) * math.sqrt(1 + D * k * k / T) / (2 * math.pi)
    h = np.array([0.3, 0.2, 0.133])
    err = []
    for size in h:
        system = build_membrane_system(pr, membrane_mesh("circle", MeshSize(size, size, 0.3)))
        omega2, _ = system.modes(1)
        err.append(math.sqrt(omega2[0]) / (2 * math.pi) / f_exact - 1)
    assert slope(h, err) > 3.0, err  # expected 4 (frequency: half the eigenvalue's error)
    assert abs(err[-1]) < 2e-5
