"""Device capacitance C(x), the c(g) table and the rim model.

References used below:
- Rigid piston over a solid plate: C(x) = ε0·A/(g − x) plus the edge fringing (common practice).
- Clamped diaphragm shape φ = (1 − r²/a²)² (Timoshenko & Woinowsky-Krieger, *Theory of Plates
  and Shells*, 2nd ed., 1959, ch. 3) over a solid electrode of the same radius: the closed form
  C(x) = ε0 π a² artanh(√(x/g))/√(g x) of ∫ ε0 2πr dr/(g − xφ(r)) (elementary integral,
  derived here: s = r²/a², u = 1 − s).
- Two parallel strips of width w at distance d ≪ w (plane problem):
  C' = ε0 (w/d)[1 + (d/πw)(1 + ln(2πw/d))] (H. B. Palmer, "The capacitance of a parallel-plate
  capacitor by the Schwartz-Christoffel transformation", Trans. AIEE 56, 1937 [from memory]).
- Finite differences of independent FE cell solutions for dc/dg.
"""
import math

import numpy as np
import pytest
from scipy.constants import epsilon_0

from diagap.fem.field.device import device_capacitance
from diagap.fem.field.cell_table import capacitance_density_table
from diagap.fem.field.cell import ElectrostaticsInputError, cell_capacitance
from diagap.fem.field.rim import pair_capacitance, rim_fringing
from diagap.meshes.rim import PairGeometry

G, T, A_HOLE, PITCH = 4e-6, 2e-6, 4e-6, 20e-6  # invented demo scenario
R_EL, R_DIA = 0.45e-3, 0.5e-3


def disk_quadrature(radius, n=48):
    """Gauss–Legendre in r with the 2πr weight (as the mechanics would supply)."""
    x, w = np.polynomial.legendre.leggauss(n)
    r = 0.5 * (x + 1) * radius
    return r, 0.5 * radius * w * 2 * math.pi * r


@pytest.fixture(scope="module")
def solid_table():
    return capacitance_density_table(0.6 * G, 1.4 * G, 0.0, 0.0, "none", T)


@pytest.fixture(scope="module")
def demo_table():
    return capacitance_density_table(0.6 * G, 1.4 * G, A_HOLE, PITCH, "hex", T)


@pytest.fixture(scope="module")
def demo_rim():
    return rim_fringing(R_EL, R_DIA, G, T, accuracy="draft")


def test_piston_over_solid_plate_is_parallel_plate_plus_rim(solid_table, demo_rim):
    # common practice: C(x) = ε0 A/(g − x) + C_rim(g − x) for a rigid piston
    r, w = disk_quadrature(R_EL)
    dev = device_capacitance(w, np.ones_like(r), solid_table, G, demo_rim)
    area = math.pi * R_EL**2
    expected = epsilon_0 * area / (G - dev.x_m) + demo_rim(G - dev.x_m)
    np.testing.assert_allclose(dev.capacitance_f, expected, rtol=1e-10)
    assert dev.parallel_plate_capacitance_f == pytest.approx(epsilon_0 * area / G, rel=1e-12, abs=0)
    assert dev.capacitance_slope_f_per_m == pytest.approx(
        epsilon_0 * area / G**2 - demo_rim.derivative(G), rel=1e-10, abs=0)


def test_clamped_shape_matches_closed_form(solid_table):
    # closed form of ∫ ε0 2πr dr / (g − x(1 − r²/a²)²) (derived in the module docstring)
    r, w = disk_quadrature(R_EL)
    phi = (1 - (r / R_EL) ** 2) ** 2
    dev = device_capacitance(w, phi, solid_table, G, rim=None)

    def closed(x):
        if x > 0:
            return epsilon_0 * math.pi * R_EL**2 * math.atanh(math.sqrt(x / G)) / math.sqrt(G * x)
        if x < 0:
            return epsilon_0 * math.pi * R_EL**2 * math.atan(math.sqrt(-x / G)) / math.sqrt(-G * x)
        return epsilon_0 * math.pi * R_EL**2 / G

    exact = np.array([closed(x) for x in dev.x_m])
    np.testing.assert_allclose(dev.capacitance_f, exact, rtol=1e-9)
    h = 1e-4 * G
    assert dev.capacitance_slope_f_per_m == pytest.approx(
        (closed(h) - closed(-h)) / (2 * h), rel=1e-7, abs=0)
    # at x = 0 the slope is ε0·∫φ dA/g² = ε0·πa²/(3g²)
    assert dev.capacitance_slope_f_per_m == pytest.approx(
        epsilon_0 * math.pi * R_EL**2 / (3 * G**2), rel=1e-9, abs=0)


def test_perforated_device_curve(demo_table, demo_rim):
    r, w = disk_quadrature(R_EL)
    phi = (1 - (r / R_DIA) ** 2) ** 2
    phi_rim = (1 - (R_EL / R_DIA) ** 2) ** 2
    dev = device_capacitance(w, phi, demo_table, G, demo_rim, phi_rim=phi_rim)
    C, x = dev.capacitance_f, dev.x_m
    assert x[0] == pytest.approx(-G / 3, rel=1e-6, abs=0) and x[-1] == pytest.approx(G / 3, rel=1e-6, abs=0)
    assert np.all(np.diff(C) > 0)  # monotonic: the gap closes as x grows
    assert C[len(C) // 2] == pytest.approx(dev.rest_capacitance_f, rel=1e-14, abs=0)
    assert dev.rest_capacitance_f == pytest.approx(
        math.pi * R_EL**2 * demo_table(G) + demo_rim(G), rel=1e-9, abs=0)
    # slope against finite differences of the callable and of the curve itself
    h = 1e-5 * G
    assert dev.capacitance_slope_f_per_m == pytest.approx((dev(h) - dev(-h)) / (2 * h), rel=1e-6, abs=0)
    k = len(C) // 2
    assert dev.capacitance_slope_f_per_m == pytest.approx(
        (C[k + 1] - C[k - 1]) / (x[k + 1] - x[k - 1]), rel=2e-3, abs=0)
    assert np.allclose(dev(x), C, rtol=1e-14, atol=0)
    # the holes lower C below the solid-plate value; the rim adds to it
    assert dev.perforation_factor < 1 and dev.rim_fringing_capacitance_f > 0
    assert 0 < dev.rel_error < 1e-3 and 0 < dev.slope_rel_error < 1e-2
    # the estimate of C0 bounds the errors of its parts added without cancellation: the c(g)
    # table's (FE estimate + fit error, relative, on the area part) and the rim model's (absolute)
    area_part = dev.rest_capacitance_f - demo_rim(G)
    bound = ((demo_table.rel_error + demo_table.fit_error) * area_part
             + demo_rim.abs_error_f) / dev.rest_capacitance_f
    assert dev.rel_error == pytest.approx(bound, rel=1e-9, abs=0)


def test_summary_block(demo_table, demo_rim):
    r, w = disk_quadrature(R_EL)
    dev = device_capacitance(w, np.ones_like(r), demo_table, G, demo_rim)
    s = dev.to_summary()
    for key in ("rest_capacitance_f", "parallel_plate_capacitance_f",
                "capacitance_slope_f_per_m", "capacitance_curve", "perforation_factor",
                "open_area_fraction", "rim_fringing_capacitance_f"):
        assert key in s
    assert len(s["capacitance_curve"]) == 41 and len(s["capacitance_curve"][0]) == 2
    assert s["open_area_fraction"] == pytest.approx(math.pi * 16 / (math.sqrt(3) / 2 * 400), rel=1e-6, abs=0)


def test_table_fit_and_slope(demo_table):
    assert demo_table.fit_error < 1e-4
    g = 4.37e-6  # not a sample
    direct = cell_capacitance(g, A_HOLE, PITCH, "hex", T, accuracy="fine")
    tol = demo_table.fit_error + demo_table.rel_error + direct.rel_error
    assert demo_table(g) == pytest.approx(direct.capacitance_density_f_per_m2, rel=3 * tol, abs=0)
    # dc/dg against a central difference of independent FE cells
    h = 0.02 * g
    cp, cm = (cell_capacitance(g + s, A_HOLE, PITCH, "hex", T, accuracy="fine")
              .capacitance_density_f_per_m2 for s in (h, -h))
    assert demo_table.derivative(g) == pytest.approx((cp - cm) / (2 * h), rel=2e-3, abs=0)
    assert demo_table.spline_derivative(g) == pytest.approx(demo_table.derivative(g), rel=1e-3, abs=0)
    c0 = cell_capacitance(g, A_HOLE, PITCH, "hex", T, accuracy="fine").capacitance_density_f_per_m2
    assert demo_table.curvature(g) == pytest.approx((cp - 2 * c0 + cm) / h**2, rel=1e-2, abs=0)
    assert demo_table.slope(g) == demo_table.derivative(g)
    with pytest.raises(ElectrostaticsInputError, match="outside the capacitance table range"):
        demo_table(0.5 * G)


def test_solid_table_is_exact(solid_table):
    np.testing.assert_allclose(solid_table.coefficients, [1, 0, 0, 0], atol=1e-10)
    assert solid_table(G) == pytest.approx(epsilon_0 / G, rel=1e-12, abs=0)
    assert solid_table.derivative(G) == pytest.approx(-epsilon_0 / G**2, rel=1e-9, abs=0)
    assert solid_table.curvature(G) == pytest.approx(2 * epsilon_0 / G**3, rel=1e-9, abs=0)


def test_wide_gap_range_fit():
    # the four-term model over 1–6 µm (feasibility: ~2e-4)
    table = capacitance_density_table(1e-6, 6e-6, A_HOLE, PITCH, "hex", T, accuracy="draft")
    assert table.fit_error < 5e-4


def test_plane_rim_model_matches_palmer_strips():
    # Palmer 1937 [from memory]: two strips of width w = 100 d
    half = 50.0
    energy, _ = pair_capacitance(PairGeometry(half, half, 0.0, 50 * half), 1.0,
                                 axisymmetric=False)
    w = 2 * half
    palmer = w * (1 + (1 + math.log(2 * math.pi * w)) / (math.pi * w))
    assert 2 * energy == pytest.approx(palmer, rel=2e-4, abs=0)


def test_square_rim_uses_perimeter(demo_rim):
    sq = rim_fringing(R_EL, R_DIA, G, T, shape="square", accuracy="draft")
    assert sq.perimeter_m == pytest.approx(8 * R_EL, rel=1e-6, abs=0)
    assert sq.per_length_f_per_m == pytest.approx(demo_rim.per_length_f_per_m, rel=0.1, abs=0)


@pytest.mark.parametrize("kwargs,match", [
    (dict(weights_m2=np.ones(3)), "equal length"),
    (dict(weights_m2=-np.ones(4)), "positive"),
    (dict(rest_gap_m=0.0), "rest_gap_m"),
    (dict(x_values_m=[G]), "local gap positive"),
    (dict(x_values_m=[0.45 * G]), "outside the capacitance table range"),
])
def test_invalid_device_inputs(solid_table, kwargs, match):
    args = dict(weights_m2=np.full(4, 1e-8), phi=np.ones(4), c_density=solid_table,
                rest_gap_m=G, rim=None)
    args.update(kwargs)
    with pytest.raises(ElectrostaticsInputError, match=match):
        device_capacitance(**args)


@pytest.mark.parametrize("kwargs,match", [
    (dict(shape="hexagon"), "shape"),
    (dict(gap_m=-1.0), "gap_m"),
    (dict(backplate_radius_m=0.4e-3), "backplate_radius_m"),
    (dict(electrode_radius_m=5e-6), "twice the gap"),
])
def test_invalid_rim_inputs(kwargs, match):
    args = dict(electrode_radius_m=R_EL, diaphragm_radius_m=R_DIA, gap_m=G,
                backplate_thickness_m=T)
    args.update(kwargs)
    with pytest.raises(ElectrostaticsInputError, match=match):
        rim_fringing(**args)
