"""Unit cell of the perforated backplate: bounds, convergence, error estimates, 3D check.

References used below:
- Parallel-plate capacitance C = ε0·A/g (elementary electrostatics); ε0 from CODATA 2018 via
  scipy.constants.
- Dirichlet and Thomson variational principles (e.g. Jackson, *Classical Electrodynamics*,
  3rd ed., 1999, sec. 1.12 [from memory for the section number]): the field energy of any
  admissible potential bounds C from above, that of any divergence-free flux field carrying the
  electrode charge bounds C from below.
- Corner singularity at a 270° re-entrant corner: u ~ ρ^(2/3) (Grisvard, *Elliptic Problems in
  Nonsmooth Domains*, 1985 [from memory]); energy error of order h^(4/3) on quasi-uniform
  meshes, faster on meshes graded to the corner.
"""
import math

import numpy as np
import pytest
from scipy.constants import epsilon_0

from diagap.fem.field.cell import (ElectrostaticsInputError, cell_area_m2, cell_capacitance,
                               lattice_summary)

GAP, T, PITCH = 4e-6, 2e-6, 20e-6  # invented demo geometry: hex holes r = 4 µm, pitch 20 µm


def hole_radius_for(open_area, lattice, pitch=PITCH):
    return math.sqrt(open_area * cell_area_m2(pitch, lattice) / math.pi)


def test_unperforated_cell_is_parallel_plate():
    # parallel plate c = ε0/g; the exact potential z/g lies in the P2 space
    res = cell_capacitance(GAP, 0.0, 0.0, "none", T)
    assert res.capacitance_density_f_per_m2 == pytest.approx(epsilon_0 / GAP, rel=1e-12, abs=0)
    assert res.perforation_factor == pytest.approx(1.0, abs=1e-12)
    assert res.open_area_fraction == 0.0 and res.rel_error < 1e-10


@pytest.mark.parametrize("lattice", ["hex", "square"])
@pytest.mark.parametrize("open_area", [0.03, 0.145, 0.55])
def test_perforated_cell_between_variational_bounds(lattice, open_area):
    # Thomson: uniform flux ε0/g under the solid part only gives c > ε0(1 − open)/g;
    # Dirichlet: u = min(z/g, 1) is admissible (z = g is a mesh line in the hole), so the
    # conforming FE energy is below ε0/g.
    a = hole_radius_for(open_area, lattice)
    res = cell_capacitance(GAP, a, PITCH, lattice, T)
    assert res.open_area_fraction == pytest.approx(open_area, rel=1e-12, abs=0)
    c = res.capacitance_density_f_per_m2
    assert epsilon_0 * (1 - open_area) / GAP < c < epsilon_0 / GAP
    # holes cost far less capacitance than their area (feasibility observation, common practice)
    assert 1 - res.perforation_factor < 0.5 * open_area


def test_demo_cell_loss_is_plausible():
    # sanity check only (feasibility runs): 14.5% open area at hole radius ≈ gap cost ~2.6%
    res = cell_capacitance(GAP, 4e-6, PITCH, "hex", T)
    assert res.open_area_fraction == pytest.approx(0.1451, abs=1e-4)
    assert 0.015 < 1 - res.perforation_factor < 0.04


def test_convergence_under_rim_refinement():
    # energy error at the 270° rim corners: order 4/3 in h or better on rim-graded meshes
    ref = cell_capacitance(GAP, 4e-6, PITCH, "hex", T, mesh_scale=0.25).perforation_factor
    levels = (cell_capacitance(GAP, 4e-6, PITCH, "hex", T, mesh_scale=2.0).levels
              + cell_capacitance(GAP, 4e-6, PITCH, "hex", T, mesh_scale=1.0).levels[1:])
    scales = np.array([4.0, 2.0, 1.0])
    errors = np.array([pf - ref for _, pf in levels])
    assert np.all(errors > 0)  # conforming FE energy decreases towards the exact value
    slope = np.polyfit(np.log(scales), np.log(errors), 1)[0]
    assert slope > 1.2
    assert errors[-1] / ref < 5e-5  # the finer level of "normal"
    # the reported estimate is the two-level Richardson estimate with the corner order 4/3
    # (Grisvard 1985 [from memory]: u ~ ρ^(2/3) at the 270° rim corner, energy error ~ h^(4/3)),
    # levels a factor 2 apart; the observed order above must not be below it
    normal = cell_capacitance(GAP, 4e-6, PITCH, "hex", T)
    (_, coarse), (_, fine) = normal.levels
    assert normal.rel_error == pytest.approx(abs(fine - coarse) / ((2 ** (4 / 3) - 1) * fine),
                                             rel=1e-9, abs=0)
    assert slope >= 4 / 3 - 0.1


@pytest.mark.parametrize("case", [
    (4e-6, 4e-6, 20e-6, "hex", 2e-6),     # demo
    (4e-6, 7.8e-6, 20e-6, "hex", 0.5e-6),  # large holes, thin plate
    (2e-6, 0.4e-6, 4e-6, "square", 1e-6),  # holes smaller than the gap
    (4e-6, 6e-6, 12.5e-6, "square", 4e-6),  # thick plate, open area 72%
])
def test_error_estimate_is_honest(case):
    normal = cell_capacitance(*case)
    ref = cell_capacitance(*case, mesh_scale=0.25).perforation_factor
    true_rel = abs(normal.perforation_factor - ref) / ref
    assert true_rel <= 3 * normal.rel_error
    assert normal.rel_error < 2e-4  # perforation factor converged to 2e-4 at normal


def test_air_height_above_backplate_is_sufficient():
    # large holes in a thin plate let the field reach furthest above the backplate
    args = (4e-6, 7.8e-6, 20e-6, "hex", 0.5e-6)
    base = cell_capacitance(*args).perforation_factor
    tall = cell_capacitance(*args, air_height_m=2 * 20e-6).perforation_factor
    assert abs(tall - base) / base < 1e-6


@pytest.mark.parametrize("lattice,open_area", [("hex", 0.145), ("square", 0.03)])
def test_axisymmetric_cell_matches_3d_cell(lattice, open_area):
    a = hole_radius_for(open_area, lattice)
    axi = cell_capacitance(GAP, a, PITCH, lattice, T)
    cube = cell_capacitance(GAP, a, PITCH, lattice, T, model="3d")
    assert cube.perforation_factor == pytest.approx(axi.perforation_factor, rel=5e-4, abs=0)
    assert cube.rel_error < 5e-4


def test_field_output():
    res = cell_capacitance(GAP, 4e-6, PITCH, "hex", T)
    points, cells, u, emag = res.field()
    assert points.shape[0] == 2 and cells.shape[0] == 3 and u.shape == emag.shape
    assert u.min() >= -1e-12 and u.max() <= 1 + 1e-12
    far = np.argmin((points[0] - 9e-6) ** 2 + (points[1] - 2e-6) ** 2)  # under solid plate
    assert emag[far] * GAP == pytest.approx(1.0, rel=1e-2, abs=0)  # uniform field 1 V/g
    assert emag.max() * GAP > 2.0  # field enhancement at the rim


def test_lattice_summary():
    summary = lattice_summary(GAP, 4e-6, PITCH, "hex", T)
    assert summary["perforation_factor"] == pytest.approx(
        summary["capacitance_density_f_per_m2"] * GAP / epsilon_0, rel=1e-12, abs=0)
    assert summary["hole_density_per_m2"] == pytest.approx(
        1 / (math.sqrt(3) / 2 * PITCH**2), rel=1e-12, abs=0)
    assert summary["runtime_s"] > 0 and summary["dofs"] > 100


@pytest.mark.parametrize("kwargs,match", [
    (dict(hole_radius_m=10e-6), "hole_radius_m .* pitch_m/2"),
    (dict(hole_radius_m=-1e-6), "hole_radius_m"),
    (dict(gap_m=0.0), "gap_m"),
    (dict(backplate_thickness_m=float("nan")), "backplate_thickness_m"),
    (dict(lattice="triangle"), "lattice .* hex, square, none"),
    (dict(accuracy="ultra"), "accuracy"),
    (dict(model="2d"), "model"),
    (dict(pitch_m=0.0), "pitch_m"),
])
def test_invalid_inputs(kwargs, match):
    args = dict(gap_m=GAP, hole_radius_m=4e-6, pitch_m=PITCH, lattice="hex",
                backplate_thickness_m=T)
    args.update(kwargs)
    with pytest.raises(ElectrostaticsInputError, match=match):
        cell_capacitance(**args)
    assert issubclass(ElectrostaticsInputError, ValueError)
