"""Field data for the reports: the diaphragm mesh with its nodal fields and the unit-cell field.

Both are plain SI arrays taken from solver results; the plots (:mod:`diagap.report.plots`) and
the VTK writer (:mod:`diagap.report.vtu`) read them from here.

Diaphragm: the vertices and linear triangles of the finest plate mesh (points in m, z = 0), the
static deflection per pascal (m/Pa) and the vacuum mode shapes (mode 1 is 1 at the centre, the
others have max |φ| = 1), all at the mesh vertices.

Unit cell: the Laplace solution ∇·(ε∇u) = 0 of the axisymmetric equal-area cell of the hole
lattice (:func:`diagap.fem.field.cell.cell_capacitance`) at the rest gap, diaphragm (z = 0) at 0 V
and backplate at 1 V: potential u (V) and |E| = |∇u| (V/m) at the vertices, in the r-z plane.
Both scale linearly with the applied voltage. An unperforated backplate has no unit cell (the gap
field is the uniform V/g), so there is no cell field.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["DiaphragmField", "CellField", "diaphragm_field", "cell_field"]


@dataclass(frozen=True)
class DiaphragmField:
    """The diaphragm mesh and its nodal fields (SI).

    Attributes
    ----------
    points_m : ndarray (N, 2)
        Vertex coordinates x, y [m].
    triangles : ndarray (M, 3)
        Vertex indices of each triangle.
    point_data : dict
        ``deflection_m_per_pa`` [m/Pa] and ``mode_<i>`` [-] at the vertices.
    """

    points_m: np.ndarray
    triangles: np.ndarray
    point_data: dict


@dataclass(frozen=True)
class CellField:
    """Potential and field magnitude of the axisymmetric unit cell at 1 V (SI).

    Attributes
    ----------
    points_m : ndarray (N, 2)
        Vertex coordinates r, z [m]; z = 0 is the diaphragm, z = gap the backplate underside.
    triangles : ndarray (M, 3)
    potential_v : ndarray (N,)
        u [V] with 1 V across the gap.
    field_v_per_m : ndarray (N,)
        |E| [V/m] with 1 V across the gap (L2 projection onto linear elements, clipped at 0).
    gap_m, hole_radius_m, backplate_thickness_m, cell_radius_m : float
    capacitance_density_f_per_m2, rel_error, perforation_factor : float
        The cell's capacitance per area, its estimated relative error and c/(ε0/g).
    lattice : str
    """

    points_m: np.ndarray
    triangles: np.ndarray
    potential_v: np.ndarray
    field_v_per_m: np.ndarray
    gap_m: float
    hole_radius_m: float
    backplate_thickness_m: float
    cell_radius_m: float
    capacitance_density_f_per_m2: float
    rel_error: float
    perforation_factor: float
    lattice: str


def diaphragm_field(mech) -> DiaphragmField:
    """The diaphragm field of a :class:`diagap.fem.plate.solver.PlateResult`."""
    points, triangles, data = mech.nodal_fields()
    return DiaphragmField(np.asarray(points, float), np.asarray(triangles).T.copy(),
                          {k: np.asarray(v, float) for k, v in data.items()})


def cell_field(design) -> CellField | None:
    """The unit-cell field of the design's backplate at its rest gap; None when unperforated."""
    from diagap.fem.field.cell import cell_capacitance

    b = design.backplate
    if not b.perforated:
        return None
    res = cell_capacitance(b.gap_m, b.hole_radius_m, b.hole_pitch_m, b.hole_lattice,
                           b.thickness_m, design.analysis.accuracy)
    points, cells, u, emag = res.field()
    return CellField(
        points_m=np.asarray(points, float).T.copy(), triangles=np.asarray(cells).T.copy(),
        potential_v=np.asarray(u, float), field_v_per_m=np.clip(np.asarray(emag, float), 0, None),
        gap_m=b.gap_m, hole_radius_m=b.hole_radius_m, backplate_thickness_m=b.thickness_m,
        cell_radius_m=math.sqrt(res.cell_area_m2 / math.pi),
        capacitance_density_f_per_m2=res.capacitance_density_f_per_m2, rel_error=res.rel_error,
        perforation_factor=res.perforation_factor, lattice=b.hole_lattice)
