"""VTK files of the diaphragm and unit-cell fields: round trip through meshio, and sanity checks.

Round trip: what :mod:`diagap.report.vtu` writes, ``meshio.read`` gives back (points, triangles,
point and cell data within float tolerance). Sanity checks against closed forms: the mesh of a
disk of radius a covers π a² (to the polygonal-boundary error); away from the hole the cell
potential is the parallel-plate one, u = V z / g, and |E| = V / g (uniform field between
parallel plates, e.g. Jackson, *Classical Electrodynamics*, 3rd ed. 1999 [from memory]); the
electrodes carry their Dirichlet values (0 V diaphragm, 1 V backplate).
"""
from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

from diagap.fem.plate.solver import solve_plate
from diagap.design import demo_design
from diagap.extract import plate_problem
from diagap.report.fields import cell_field, diaphragm_field
from diagap.report.vtu import write_cell_vtu, write_diaphragm_vtu


@pytest.fixture(scope="module")
def design():
    return demo_design().with_accuracy("draft")


@pytest.fixture(scope="module")
def mech(design):
    return solve_plate(plate_problem(design), accuracy="draft")


@pytest.fixture(scope="module")
def diaphragm(mech):
    return diaphragm_field(mech)


@pytest.fixture(scope="module")
def cell(design):
    return cell_field(design)


def _triangles(mesh):
    blocks = [c for c in mesh.cells if c.type == "triangle"]
    assert len(blocks) == 1 and len(mesh.cells) == 1
    return blocks[0].data


def test_diaphragm_round_trip(diaphragm, tmp_path):
    path = write_diaphragm_vtu(diaphragm, tmp_path / "fields.vtu")
    back = meshio.read(path)
    np.testing.assert_allclose(back.points[:, :2], diaphragm.points_m, rtol=0, atol=1e-18)
    assert np.all(back.points[:, 2] == 0.0)
    np.testing.assert_array_equal(_triangles(back), diaphragm.triangles)
    assert set(back.point_data) == set(diaphragm.point_data)
    assert "deflection_m_per_pa" in back.point_data
    n_modes = sum(1 for k in back.point_data if k.startswith("mode_"))
    assert n_modes >= 4 and all(f"mode_{i}" in back.point_data for i in range(1, n_modes + 1))
    for key, values in diaphragm.point_data.items():
        np.testing.assert_allclose(back.point_data[key], values, rtol=1e-12, atol=0)


def test_diaphragm_fields_are_the_fe_solution(mech, diaphragm):
    x, y = diaphragm.points_m.T
    inner = np.hypot(x, y) < 0.98 * mech.problem.size_m
    np.testing.assert_allclose(diaphragm.point_data["deflection_m_per_pa"][inner],
                               mech.static_deflection_m_per_pa(x[inner], y[inner]),
                               rtol=1e-6, atol=1e-9 * mech.center_compliance_m_per_pa)
    np.testing.assert_allclose(diaphragm.point_data["mode_1"][inner],
                               mech.mode_shape(1, x[inner], y[inner]), rtol=1e-6, atol=1e-9)
    assert mech.mode_shape(1, np.zeros(1), np.zeros(1))[0] == pytest.approx(1.0, abs=1e-12)
    assert 0.95 < diaphragm.point_data["mode_1"].max() <= 1.0 + 1e-9  # peak at the centre


def test_diaphragm_mesh_covers_the_disk(diaphragm, design):
    p, t = diaphragm.points_m, diaphragm.triangles
    a, b, c = p[t[:, 0]], p[t[:, 1]], p[t[:, 2]]
    cross = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    assert np.all(np.abs(cross) > 0)
    area = 0.5 * np.abs(cross).sum()
    assert area == pytest.approx(math.pi * design.diaphragm.size_m**2, rel=5e-3, abs=0)


def test_cell_round_trip(cell, tmp_path):
    path = write_cell_vtu(cell, tmp_path / "cell_potential.vtu")
    back = meshio.read(path)
    np.testing.assert_allclose(back.points[:, :2], cell.points_m, rtol=0, atol=1e-18)
    assert np.all(back.points[:, 2] == 0.0)
    np.testing.assert_array_equal(_triangles(back), cell.triangles)
    np.testing.assert_allclose(back.point_data["potential_at_1v_v"], cell.potential_v,
                               rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(back.point_data["field_at_1v_v_per_m"], cell.field_v_per_m,
                               rtol=1e-12, atol=0)
    e_cell = back.cell_data["field_at_1v_v_per_m"][0]
    assert e_cell.shape == (len(cell.triangles),)
    np.testing.assert_allclose(e_cell, cell.field_v_per_m[cell.triangles].mean(axis=1),
                               rtol=1e-12)


def test_cell_field_is_the_gap_field(cell):
    r, z = cell.points_m.T
    g, a = cell.gap_m, cell.hole_radius_m
    tol = 1e-9 * g
    bottom = np.abs(z) < tol
    underside = (np.abs(z - g) < tol) & (r >= a * (1 - 1e-9))
    assert bottom.sum() >= 3 and underside.sum() >= 3
    np.testing.assert_allclose(cell.potential_v[bottom], 0.0, atol=1e-12)
    np.testing.assert_allclose(cell.potential_v[underside], 1.0, atol=1e-12)
    assert np.all((cell.potential_v > -1e-6) & (cell.potential_v < 1 + 1e-6))
    far = (r > 0.8 * cell.cell_radius_m) & (z > 0.1 * g) & (z < 0.9 * g)
    assert far.sum() >= 1
    np.testing.assert_allclose(cell.potential_v[far], z[far] / g, atol=0.02)
    np.testing.assert_allclose(cell.field_v_per_m[far] * g, 1.0, atol=0.05)
    assert cell.field_v_per_m.max() > 1.5 / g  # the singular field at the hole rim


def test_unperforated_backplate_has_no_cell(design):
    from diagap.design import parse_design

    raw = design.raw_dict()
    raw["backplate"] = {k: v for k, v in raw["backplate"].items()
                        if k not in ("hole_radius", "hole_pitch")} | {"hole_lattice": "none"}
    assert cell_field(parse_design(raw)) is None
