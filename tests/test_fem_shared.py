"""Shared fem building blocks: weak forms, Richardson estimate, validators, constants.

References: CODATA 2022 (ε0 = 8.8541878188e-12 F/m; k_B = 1.380649e-23 J/K exact in the 2019 SI),
IEC 61672-1 (20 µPa reference), ISO 2533 standard atmosphere 101 325 Pa; integrals of polynomials
over the unit square and of 2πr over a cylinder written out by hand; Richardson, Phil. Trans. R.
Soc. A 210 (1911) for the extrapolation formula, checked on sequences with a known error term.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from skfem import Basis, ElementTriP1, ElementTriP2, MeshTri

from diagap.fem import constants
from diagap.fem.forms import (laplace, laplace_axisymmetric, mass, source, squared,
                              weighted_mass)
from diagap.fem.richardson import observed_estimate, relative_error, richardson_error
from diagap.fem.validate import Checks


def test_constants_match_codata_and_standards():
    # CODATA 2022: 8.8541878188e-12 F/m (2018: 8.8541878128e-12), relative uncertainty 1.6e-10
    assert constants.EPSILON_0_F_PER_M == pytest.approx(8.8541878188e-12, rel=1e-9, abs=0)
    assert constants.BOLTZMANN_J_PER_K == 1.380649e-23  # exact (SI 2019)
    assert constants.P_REF_PA == 20e-6  # IEC 61672-1
    assert constants.STANDARD_PRESSURE_PA == 101325.0  # ISO 2533
    assert constants.ROOM_TEMPERATURE_K == pytest.approx(293.15, rel=1e-15, abs=0)


@pytest.fixture(scope="module")
def square():
    return Basis(MeshTri.init_sqsymmetric().refined(3), ElementTriP2())


def test_forms_integrate_polynomials_exactly(square):
    x, y = square.doflocs
    u = x**2 + y  # P2 interpolation is exact
    one = np.ones(square.N)
    # ∫ u over [0,1]² = 1/3 + 1/2; ∫ |∇u|² = ∫ 4x² + 1 = 4/3 + 1
    assert one @ mass.assemble(square) @ u == pytest.approx(5 / 6, rel=1e-12, abs=0)
    assert u @ laplace.assemble(square) @ u == pytest.approx(7 / 3, rel=1e-12, abs=0)
    xq, yq = square.global_coordinates()
    c = 1.0 + xq
    # ∫ (1 + x) u = 5/6 + ∫ x³ + x y = 5/6 + 1/4 + 1/4
    Mc = weighted_mass.assemble(square, c=c)
    assert one @ Mc @ u == pytest.approx(5 / 6 + 0.5, rel=1e-12, abs=0)
    f = source.assemble(square, f=c)
    assert f @ u == pytest.approx(5 / 6 + 0.5, rel=1e-12, abs=0)
    assert squared.assemble(square, f=c) == pytest.approx(7 / 3, rel=1e-12, abs=0)  # ∫(1+x)²


def test_axisymmetric_laplace_is_the_cylinder_energy():
    # u = z on 0 <= r <= 1, 0 <= z <= 2: ∫ |∇u|² 2πr dr dz = 2π · 1/2 · 2 = 2π
    mesh = MeshTri.init_tensor(np.linspace(0, 1, 9), np.linspace(0, 2, 9))
    basis = Basis(mesh, ElementTriP1())
    u = basis.doflocs[1]
    assert u @ laplace_axisymmetric.assemble(basis) @ u == pytest.approx(2 * math.pi, rel=1e-12,
                                                                          abs=0)


def test_richardson_recovers_a_known_error_term():
    # Q(h) = Q + C h^p: the two-level estimate equals the true error of the finer value
    q, c, p, h = 3.0, 0.7, 2.0, 0.1
    coarse, fine = q + c * (2 * h) ** p, q + c * h**p
    assert richardson_error(coarse, fine, p, 2.0) == pytest.approx(c * h**p, rel=1e-10, abs=0)
    assert relative_error(coarse, fine, p, 2.0) == pytest.approx(c * h**p / fine, rel=1e-10,
                                                                 abs=0)
    assert relative_error(coarse, fine, p, 2.0, floor=1e-3) == pytest.approx(
        c * h**p / fine + 1e-3, rel=1e-10, abs=0)
    # ratio 1.5, arrays
    est = relative_error([q + c * 0.15**p] * 2, [fine] * 2, p, 1.5)
    assert np.allclose(est, c * h**p / fine, rtol=1e-10, atol=0)
    # zero on both levels: no relative error; zero only on the finer one: unbounded
    assert relative_error(0.0, 0.0, 2.0) == 0.0
    assert relative_error(1.0, 0.0, 2.0) == math.inf


def test_observed_order_from_three_levels():
    p = 1.5
    values = np.array([2.0 + 0.3 * h**p for h in (0.4, 0.2, 0.1)])
    order, err = observed_estimate(values)
    assert order == pytest.approx(p, rel=1e-10, abs=0)
    assert err == pytest.approx(0.3 * 0.1**p, rel=1e-10, abs=0)
    # no change between the finer levels: order at the upper bound, error at the floor
    order, err = observed_estimate(np.array([1.1, 1.0, 1.0]))
    assert order == 4.0 and err == pytest.approx(1e-12, rel=1e-12, abs=0)


class _Bad(ValueError):
    pass


@pytest.mark.parametrize("call, match", [
    (lambda c: c.positive("gap_m", -1e-6), r"^gap_m = -1e-06 must be a finite number > 0$"),
    (lambda c: c.positive("gap_m", float("nan")), r"gap_m = nan"),
    (lambda c: c.positive("gap_m", "4um"), r"gap_m = '4um'"),
    (lambda c: c.positive("length_m", -1.0, allow_zero=True), r"length_m = -1.0 .* >= 0"),
    (lambda c: c.number("stress_pa", float("inf")), r"stress_pa = inf must be a finite number"),
    (lambda c: c.choice("shape", "ellipse", ("circle", "square")),
     r"^shape = 'ellipse' must be one of circle, square$"),
    (lambda c: c.in_range("temperature_k", 100.0, 150.0, 600.0, unit="K"),
     r"^temperature_k = 100 K must lie in \[150, 600\] K$"),
    (lambda c: c.in_range("poisson_ratio", 0.5, -1.0, 0.5, closed=False),
     r"poisson_ratio = 0.5 must lie in \(-1, 0.5\)"),
])
def test_checks_name_field_value_and_allowed(call, match):
    with pytest.raises(_Bad, match=match):
        call(Checks(_Bad))


def test_checks_pass_valid_values_through():
    c = Checks(_Bad)
    assert c.positive("x", 2) == 2.0 and c.positive("x", 0.0, allow_zero=True) == 0.0
    assert c.choice("s", "circle", ("circle",)) == "circle"
    assert c.in_range("t", 300, 150, 600) == 300.0
    with pytest.raises(TypeError):
        Checks(RuntimeError)
