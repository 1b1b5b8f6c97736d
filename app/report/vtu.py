"""VTK unstructured-grid files (``.vtu``, written with meshio) of the computed fields.

``fields.vtu``
    The diaphragm mesh: linear triangles, points (x, y, 0) in m. Point data
    ``deflection_m_per_pa`` (static deflection per pascal of uniform pressure, m/Pa, positive
    towards the backplate) and ``mode_1`` … ``mode_n`` (vacuum mode shapes, dimensionless: mode 1
    is 1 at the centre, the others have max |φ| = 1).

``cell_potential.vtu``
    The axisymmetric unit cell of the hole lattice at the rest gap, the r-z plane stored as the
    x-y plane (x = r, y = z, in m; z = 0 the diaphragm). Point data ``potential_at_1v_v`` (V) and
    ``field_at_1v_v_per_m`` (|E|, V/m), both for 1 V across the gap (they scale linearly with the
    voltage); cell data ``field_at_1v_v_per_m`` is the mean of the element's vertex values.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from diagap.report.fields import CellField, DiaphragmField

__all__ = ["diaphragm_mesh", "cell_mesh", "write_diaphragm_vtu", "write_cell_vtu"]


def _xyz(points_m: np.ndarray) -> np.ndarray:
    return np.column_stack([points_m, np.zeros(len(points_m))])


def diaphragm_mesh(field: DiaphragmField):
    """The :class:`meshio.Mesh` of a diaphragm field."""
    import meshio

    return meshio.Mesh(_xyz(field.points_m), [("triangle", field.triangles)],
                       point_data=dict(field.point_data))


def cell_mesh(field: CellField):
    """The :class:`meshio.Mesh` of a unit-cell field (r-z plane as x-y)."""
    import meshio

    e_cell = field.field_v_per_m[field.triangles].mean(axis=1)
    return meshio.Mesh(_xyz(field.points_m), [("triangle", field.triangles)],
                       point_data={"potential_at_1v_v": field.potential_v,
                                   "field_at_1v_v_per_m": field.field_v_per_m},
                       cell_data={"field_at_1v_v_per_m": [e_cell]})


def write_diaphragm_vtu(field: DiaphragmField, path) -> Path:
    """Write ``fields.vtu`` (see the module docstring) and return its path."""
    diaphragm_mesh(field).write(Path(path), file_format="vtu")
    return Path(path)


def write_cell_vtu(field: CellField, path) -> Path:
    """Write ``cell_potential.vtu`` (see the module docstring) and return its path."""
    cell_mesh(field).write(Path(path), file_format="vtu")
    return Path(path)
