"""Dielectric layers on the electrodes: the layered unit cell, c(g), C(x), the rim and pull-in.

References used below:
- Capacitors in series and Gauss's law for a stack of dielectric slabs: the normal displacement
  D = ε0 ε_r E is the same in every slab (no free charge at the interfaces), so the voltages add,
  V = D (g/ε0 + t/(ε0 ε_r)), and C/A = ε0/(g + t/ε_r) (e.g. Griffiths, *Introduction to
  Electrodynamics*, 4th ed., 2017, sec. 4.3-4.4 [from memory for the sections]). ε0 from
  CODATA 2018 via scipy.constants.
- Parallel-plate piston pull-in x_PI = g/3, V_PI = √(8kg³/(27ε0A)) (Nathanson et al., IEEE
  Trans. Electron Devices 14, 1967; Senturia, *Microsystem Design*, 2001, ch. 6), re-derived
  below for the electrical gap.
- Dirichlet's principle (Jackson, *Classical Electrodynamics*, 3rd ed., 1999, sec. 1.12 [from
  memory for the section number]): the conforming FE field energy decreases towards the exact
  value under refinement.
"""
import math

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.constants import epsilon_0

from diagap.fem.coupling.branch import CouplingSystem, trace_branch
from diagap.fem.coupling.plate import load_from_density
from diagap.fem.field.cell import ElectrostaticsInputError, cell_capacitance
from diagap.fem.field.cell_table import capacitance_density_table
from diagap.fem.field.device import device_capacitance
from diagap.fem.field.layers import GapLayers, layered_cell_capacitance

GAP, T, PITCH, HOLE = 4e-6, 2e-6, 20e-6, 4e-6  # invented demo geometry (hex holes)
NITRIDE = GapLayers(0.5e-6, 7.0, 0.2e-6, 4.0)  # invented layers on both electrodes


def flat_density(g, t_b, eps_b, t_d, eps_d):
    """Three capacitors in series per unit area (air gap g, two slabs): the same D in each, the
    voltages g·D/ε0 + t·D/(ε0 ε_r) add up to 1 V, c = D/1 V."""
    return 1.0 / (g / epsilon_0 + t_b / (epsilon_0 * eps_b) + t_d / (epsilon_0 * eps_d))


@pytest.mark.parametrize("layers", [NITRIDE, GapLayers(1.5e-6, 2.1), GapLayers(0, 1, 3e-6, 3.0)])
def test_flat_layers_are_capacitors_in_series(layers):
    # no holes and no fringing: c = ε0/(g + t_b/ε_b + t_d/ε_d) to 1e-4 (the exact potential is
    # piecewise linear in z and lies in the P2 space, so the FE is exact to round-off)
    ref = flat_density(GAP, layers.backplate_thickness_m, layers.backplate_permittivity,
                       layers.diaphragm_thickness_m, layers.diaphragm_permittivity)
    res = cell_capacitance(GAP, 0.0, 0.0, "none", T, layers=layers)
    assert res.capacitance_density_f_per_m2 == pytest.approx(ref, rel=1e-4, abs=0)
    # through the c(g) table (fitted in the electrical gap) at several air gaps, with its slope
    table = capacitance_density_table(0.25 * GAP, 1.45 * GAP, 0.0, 0.0, "none", T, "draft",
                                      layers=layers)
    gaps = np.array([0.3, 0.77, 1.0, 1.4]) * GAP
    t_e = layers.backplate_thickness_m / layers.backplate_permittivity + \
        layers.diaphragm_thickness_m / layers.diaphragm_permittivity
    assert table(gaps) == pytest.approx(flat_density(gaps, layers.backplate_thickness_m,
                                                     layers.backplate_permittivity,
                                                     layers.diaphragm_thickness_m,
                                                     layers.diaphragm_permittivity),
                                        rel=1e-4, abs=0)
    # d/dg of ε0/(g + t_e) = −ε0/(g + t_e)²
    assert table.derivative(gaps) == pytest.approx(-epsilon_0 / (gaps + t_e) ** 2, rel=1e-4,
                                                   abs=0)
    assert table.curvature(gaps) == pytest.approx(2 * epsilon_0 / (gaps + t_e) ** 3, rel=1e-4,
                                                  abs=0)
    # a rigid piston over the flat stack, no rim: C = ε0 A/(g + t_e), dC/dx = ε0 A/(g + t_e)²
    area = math.pi * (0.4e-3) ** 2
    dev = device_capacitance(np.full(8, area / 8), np.ones(8), table, GAP)
    assert dev.rest_capacitance_f == pytest.approx(epsilon_0 * area / (GAP + t_e), rel=1e-4, abs=0)
    assert dev.capacitance_slope_f_per_m == pytest.approx(epsilon_0 * area / (GAP + t_e) ** 2,
                                                          rel=1e-4, abs=0)
    assert dev.parallel_plate_capacitance_f == pytest.approx(dev.rest_capacitance_f, rel=1e-4,
                                                             abs=0)
    assert dev.perforation_factor == pytest.approx(1.0, rel=1e-4, abs=0)


def test_layered_cell_converges_with_its_rate_and_honest_estimate():
    # energy error under uniform refinement of rim-graded meshes: decreasing (Dirichlet), order
    # at least the corner-limited 4/3 assumed by the estimate (Grisvard 1985 [from memory])
    args = (GAP, HOLE, PITCH, "hex", T, NITRIDE)
    ref = layered_cell_capacitance(*args, mesh_scale=0.25).perforation_factor
    scales = np.array([2.0, 1.0, 0.5])
    errors = np.array([layered_cell_capacitance(*args, mesh_scale=s).perforation_factor - ref
                       for s in scales])
    assert np.all(errors > 0)
    slope = np.polyfit(np.log(scales), np.log(errors), 1)[0]
    assert slope > 4 / 3 - 0.1
    for acc in ("draft", "normal"):
        res = layered_cell_capacitance(*args, acc)
        true_rel = abs(res.perforation_factor - ref) / ref
        assert true_rel <= 3 * res.rel_error
        assert res.rel_error < 5e-5
    # the perforated layered cell lies between the holes-as-solid-area and the solid stack:
    # Thomson's bound with flux only under the solid part, and the series stack itself
    res = layered_cell_capacitance(*args, "normal")
    g_e = GAP + NITRIDE.electrical_thickness_m
    assert epsilon_0 * (1 - res.open_area_fraction) / g_e < res.capacitance_density_f_per_m2
    assert res.capacitance_density_f_per_m2 < epsilon_0 / g_e


def test_layer_thickness_to_zero_gives_the_plain_cell():
    plain = cell_capacitance(GAP, HOLE, PITCH, "hex", T).capacitance_density_f_per_m2
    diffs = []
    for t in (0.4e-6, 0.1e-6, 0.025e-6):
        layers = GapLayers(t, 7.0, t, 4.0)
        c = layered_cell_capacitance(GAP, HOLE, PITCH, "hex", T, layers).capacitance_density_f_per_m2
        diffs.append(plain / c - 1)
    # first order in t: 1/c grows by about (t/7 + t/4)/ε0 (series slabs), so the relative
    # change is linear in t and tends to 0 (ratios ≈ 4 for t divided by 4)
    assert all(d > 0 for d in diffs)
    assert diffs[0] / diffs[1] == pytest.approx(4.0, rel=0.05, abs=0)
    assert diffs[1] / diffs[2] == pytest.approx(4.0, rel=0.05, abs=0)
    assert diffs[-1] < 1e-2


def test_hole_radius_to_zero_gives_the_flat_stack():
    ref = flat_density(GAP, 0.5e-6, 7.0, 0.2e-6, 4.0)
    losses = [1 - layered_cell_capacitance(GAP, a, PITCH, "hex", T, NITRIDE)
              .capacitance_density_f_per_m2 / ref for a in (2e-6, 1e-6, 0.5e-6)]
    # the hole removes capacitance of the order of its area (∝ a²) and less: the loss shrinks
    # at least like a when the radius halves, and tends to 0
    assert all(x > 0 for x in losses)
    assert losses[1] < 0.5 * losses[0] and losses[2] < 0.5 * losses[1]
    assert losses[-1] < 2e-3


def _piston(k, area):
    return CouplingSystem(K=sp.csr_matrix([[k]]), B=sp.csr_matrix(np.ones((4, 1))),
                          weights=np.full(4, area / 4), center=np.array([1.0]))


@pytest.mark.parametrize("t_b, eps_b", [(1e-6, 4.0), (3e-6, 2.0)])
def test_piston_pull_in_with_a_layer_on_the_fixed_electrode(t_b, eps_b):
    # Piston (stiffness k, area A) over a fixed electrode carrying a layer t, ε_r; air gap g,
    # travel x. Series stack: C(x) = ε0 A/(g − x + t/ε_r) = ε0 A/(g_e − x). Force at constant V:
    # F = ½V² dC/dx = ε0 A V²/(2(g_e − x)²). Equilibrium k x = F(x) gives V²(x) =
    # 2k x (g_e − x)²/(ε0 A); dV²/dx = 0 at (g_e − x)(g_e − 3x) = 0, i.e. x_PI = g_e/3, and
    # V_PI² = 2k (g_e/3)(2g_e/3)²/(ε0 A) = 8 k g_e³/(27 ε0 A) — valid while g_e/3 < g (the
    # travel is limited to the air gap g).
    k, area = 50.0, math.pi * (0.5e-3) ** 2
    g_e = GAP + t_b / eps_b
    assert g_e / 3 < GAP
    table = capacitance_density_table(0.25 * GAP, 1.45 * GAP, 0.0, 0.0, "none", T, "draft",
                                      layers=GapLayers(t_b, eps_b))
    br = trace_branch(_piston(k, area), load_from_density(table, GAP), GAP)
    v_pi = math.sqrt(8 * k * g_e**3 / (27 * epsilon_0 * area))
    assert br.pull_in_voltage_v == pytest.approx(v_pi, rel=1e-4, abs=0)
    assert br.pull_in_center_deflection_m == pytest.approx(g_e / 3, rel=1e-3, abs=0)
    # without the layer the same piston pulls in lower (g_e > g)
    assert v_pi > math.sqrt(8 * k * GAP**3 / (27 * epsilon_0 * area))


def test_rim_films_of_unit_permittivity_are_a_wider_air_gap():
    # a layer with ε_r = 1 is air: the layered pair at air gap g is the plain pair at
    # g + t_d + t_b (same electrodes), whatever the mesh
    from diagap.fem.field.rim import _geometry, pair_capacitance

    air = GapLayers(0.5e-6, 1.0, 0.3e-6, 1.0)
    geo = _geometry(0.1e-3, 0.12e-3, GAP, T, 0.1e-3, layers=air)
    wide = GAP + 0.8e-6
    plain = _geometry(0.1e-3, 0.12e-3, wide, T, 0.1e-3)
    c_layered = pair_capacitance(geo, 2.0)[0] * GAP  # C = ε0·g·Ĉ with g the scaling gap
    c_plain = pair_capacitance(plain, 2.0)[0] * wide
    assert c_layered == pytest.approx(c_plain, rel=1e-4, abs=0)


def test_layered_rim_tends_to_the_plain_rim_and_subtracts_the_series_stack():
    from diagap.fem.field.rim import rim_fringing

    r_e, r_d = 0.1e-3, 0.12e-3
    plain = rim_fringing(r_e, r_d, GAP, T, accuracy="draft", gap_span=0.5)
    thin = rim_fringing(r_e, r_d, GAP, T, accuracy="draft", gap_span=0.5,
                        layers=GapLayers(1e-9, 7.0, 1e-9, 4.0))
    err = plain.abs_error_f + thin.abs_error_f
    assert abs(thin.capacitance_f - plain.capacitance_f) <= err
    layered = rim_fringing(r_e, r_d, GAP, T, accuracy="draft", gap_span=0.5, layers=NITRIDE)
    g_e = GAP + 0.5e-6 / 7.0 + 0.2e-6 / 4.0  # series stack over the overlap
    assert layered.parallel_plate_capacitance_f == pytest.approx(
        epsilon_0 * math.pi * r_e**2 / g_e, rel=1e-12, abs=0)
    assert layered.pair_capacitance_f == pytest.approx(
        layered.parallel_plate_capacitance_f + layered.capacitance_f, rel=1e-12, abs=0)
    # the edge field leaves the stack partly through the layers: C_rim stays within 10 % of
    # the plain pair's for layers of ~3 % electrical thickness (plausibility, not a reference)
    assert layered.capacitance_f == pytest.approx(plain.capacitance_f, rel=0.1, abs=0)
    assert layered.rel_error < 0.01


@pytest.mark.parametrize("kwargs, match", [
    (dict(backplate_thickness_m=-1e-6), "backplate_thickness_m"),
    (dict(backplate_thickness_m=1e-6, backplate_permittivity=0.5), "backplate_permittivity"),
    (dict(diaphragm_thickness_m=float("nan")), "diaphragm_thickness_m"),
])
def test_invalid_layers(kwargs, match):
    with pytest.raises(ElectrostaticsInputError, match=match):
        GapLayers(**kwargs)


def test_layers_need_the_axisymmetric_cell():
    with pytest.raises(ElectrostaticsInputError, match="axisymmetric"):
        cell_capacitance(GAP, HOLE, PITCH, "hex", T, model="3d", layers=NITRIDE)
