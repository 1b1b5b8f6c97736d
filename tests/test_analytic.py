"""Closed forms of the simple capsule model (diagap.lumped.analytic) against their sources.

Each reference is computed here from raw inputs: the force balance of a parallel-plate piston
(Nathanson et al., IEEE Trans. Electron Devices 14, 1967), the incompressible Reynolds film
under a rigid disk integrated numerically (Griffin, Richardson & Yamanami, J. Basic Eng. 1966),
Navier's double series of the simply supported square plate (Timoshenko & Woinowsky-Krieger,
*Theory of Plates and Shells*, 1959, §30, eq. 139 and Table 8: α = 0.00406), the Poisson problem
of the square membrane by scikit-fem P2 (a general-purpose FE library), and Hencky's exact
membrane solution of the clamped circular plate at large deflection (Hencky 1915: w0 =
0.662·a·(p a/(E h))^(1/3) for ν = 0.3 [from memory]; the corrected series gives 0.653, see
tests/test_large_deflection.py, well inside this energy estimate's 10 % tolerance).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import minimize_scalar
from skfem import Basis, ElementTriP2, LinearForm, MeshTri, asm, condense, solve
from skfem.models.poisson import laplace

from diagap.lumped import analytic

EPS0 = 8.8541878188e-12  # CODATA 2022, F/m
E, H, NU = 160e9, 1e-6, 0.3
D = E * H**3 / (12 * (1 - NU**2))


def test_parallel_plate_capacitance():
    assert analytic.parallel_plate_capacitance(1e-6, 4e-6) == pytest.approx(
        EPS0 * 1e-6 / 4e-6, rel=1e-9, abs=0)


def test_piston_pull_in_is_the_fold_of_the_force_balance():
    # static balance k x = ε0 A V² / (2 (g − x)²): V²(x) = 2 k x (g − x)² / (ε0 A) peaks at pull-in
    k, g, area = 50.0, 4e-6, 7.85e-7
    v2 = minimize_scalar(lambda x: -2 * k * x * (g - x) ** 2 / (EPS0 * area), bounds=(0, g),
                         method="bounded", options={"xatol": 1e-16})
    assert v2.x == pytest.approx(g / 3, rel=1e-5, abs=0)
    assert analytic.piston_pull_in_voltage(k, g, area) == pytest.approx(math.sqrt(-v2.fun),
                                                                        rel=1e-9, abs=0)


def test_griffin_damping_is_the_integrated_reynolds_film():
    # −∇·(g³/(12μ)∇P) = v on the disk, P(a) = 0: P = 3μv(a² − r²)/g³; b = ∫ P 2πr dr / v
    mu, a, g = 1.8e-5, 0.5e-3, 4e-6
    b, _ = quad(lambda r: 3 * mu * (a**2 - r**2) / g**3 * 2 * math.pi * r, 0, a,
                epsabs=0, epsrel=1e-12)
    assert analytic.griffin_damping(mu, a, g) == pytest.approx(b, rel=1e-9, abs=0)


def test_plate_centre_compliances():
    a = 0.5e-3
    assert analytic.plate_center_compliance("circle", "clamped", a, D, NU) == pytest.approx(
        a**4 / (64 * D), rel=1e-12, abs=0)  # Timoshenko §62, eq. 62
    assert analytic.plate_center_compliance("circle", "simply-supported", a, D, NU) == \
        pytest.approx((5 + NU) / (1 + NU) * a**4 / (64 * D), rel=1e-12, abs=0)  # §63
    # simply supported square of side s: Navier series at the centre
    s = 1e-3
    odd = np.arange(1, 400, 2)
    m, n = np.meshgrid(odd, odd)
    navier = 16 / (math.pi**6 * D) * np.sum(
        np.sin(m * math.pi / 2) * np.sin(n * math.pi / 2) / (m * n * (m**2 / s**2 + n**2 / s**2)
                                                           ** 2))
    assert analytic.plate_center_compliance("square", "simply-supported", s, D, NU) == \
        pytest.approx(navier, rel=2e-3, abs=0)  # table value 0.00406 rounds 0.0040624


def test_membrane_centre_compliances():
    a, t = 0.5e-3, 30.0
    # −T ∇²w = p on the disk: w = p (a² − r²) / (4T)
    assert analytic.membrane_center_compliance("circle", a, t) == pytest.approx(
        a**2 / (4 * t), rel=1e-12, abs=0)
    # square of side s: scikit-fem P2 solution of −∇²u = 1 on the unit square (u(½, ½) = 0.07367)
    mesh = MeshTri.init_sqsymmetric().refined(5)
    basis = Basis(mesh, ElementTriP2())
    u = solve(*condense(asm(laplace, basis), asm(LinearForm(lambda v, w: v), basis),
                        D=basis.get_dofs()))
    centre = u[np.argmin(np.hypot(*(basis.doflocs - 0.5)))]
    s = 1e-3
    assert analytic.membrane_center_compliance("square", s, t) == pytest.approx(
        centre * s**2 / t, rel=1e-4, abs=0)


def test_stretching_ratio_limits():
    a = 0.5e-3
    # small deflection: cubic over linear pressure grows as w0²
    r1 = analytic.clamped_plate_stretching_ratio(E, H, NU, a, 0.0, 1e-9)
    r2 = analytic.clamped_plate_stretching_ratio(E, H, NU, a, 0.0, 2e-9)
    assert r2 / r1 == pytest.approx(4.0, rel=1e-12, abs=0)
    # large deflection: the linear part is the clamped plate's 64 D w0 / a⁴ (Timoshenko §62), the
    # cubic one compared with Hencky's membrane, p = E h w0³ / (0.662³ a⁴)
    w0 = 50 * H
    cubic = analytic.clamped_plate_stretching_ratio(E, H, NU, a, 0.0, w0) * 64 * D * w0 / a**4
    hencky = E * H * w0**3 / (0.662**3 * a**4)
    assert cubic == pytest.approx(hencky, rel=0.1, abs=0)  # an energy estimate: within 10 %
    # tension adds the membrane's 4 T w0 / a² to the linear pressure
    t = 20.0
    r_t = analytic.clamped_plate_stretching_ratio(E, H, NU, a, t, w0)
    r_0 = analytic.clamped_plate_stretching_ratio(E, H, NU, a, 0.0, w0)
    plate = 64 * D * w0 / a**4
    assert r_t / r_0 == pytest.approx(plate / (plate + 4 * t * w0 / a**2), rel=1e-12, abs=0)


def test_open_area_rule_and_rarefaction():
    assert analytic.open_area_perforation_factor(0.25) == pytest.approx(0.75, rel=1e-15, abs=0)
    # Veijola et al., Sensors and Actuators A 48 (1995): Q = 1 + 9.638 Kn^1.159
    assert analytic.rarefaction_factor(0.1) == pytest.approx(1 + 9.638 * 0.1**1.159, rel=1e-12,
                                                             abs=0)
