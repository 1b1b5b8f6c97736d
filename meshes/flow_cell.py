"""Triangular r-z mesh of the flow domain of one perforation cell, in scaled coordinates.

All lengths are in units of the film height (the air gap is 1). The axisymmetric domain
(x = r, y = z) is the union of three rectangles:

* the film            [0, R] x [0, 1],
* the hole            [0, a] x [1, 1 + t]   (through the backplate of thickness t),
* the exit chamber    [0, R] x [1 + t, 1 + t + H].

Boundary groups (named by geometry only; this module knows no physics):

``"bottom"``  y = 0, 0 <= x <= R (the face below the film);
``"plate_h"`` the horizontal faces of the backplate, y = 1 and y = 1 + t for a <= x <= R;
``"plate_v"`` the hole wall x = a, 1 <= y <= 1 + t;
``"axis"``    x = 0 (film, hole and exit chamber);
``"side"``    x = R (film and exit chamber);
``"top"``     y = 1 + t + H.

The two hole rims (a, 1) and (a, 1 + t) are re-entrant corners of 270°. The element size is
graded radially towards them: with ρ the distance to the nearer rim, ℓ = min(1, a, t) and the
level factor s,

    h = s · min( ℓ^(1−μ) · max(ρ, ρ0)^μ,   c_film + max(0, y − 1),   c_max ),

μ = ``GRADING_EXPONENT`` (a radical mesh: with μ = 1 − λ/k it restores the optimal order of a
degree-k element for a corner singularity ρ^λ; Stokes flow at a 270° corner has λ ≈ 0.5445),
ρ0 = ℓ·s^(1/(1−μ)) (the smallest element), c_film = 1 (film cells no larger than s gaps) and
c_max = max(4, R/2) by default.
Meshes of one geometry at different s are a family (not nested). Cached on disk
(:mod:`meshes.cache`).
"""
from __future__ import annotations

from dataclasses import dataclass

from skfem import MeshTri

from diagap.meshes._gmsh import gmsh_session
from diagap.meshes.cache import cached_arrays
from diagap.meshes.cell import tagged_mesh_arrays, to_skfem

__all__ = ["FlowCellGeometry", "GRADING_EXPONENT", "flow_cell_mesh"]

GRADING_EXPONENT = 0.75
_GENERATOR = 1  # bump when the output of this module changes (invalidates cached meshes)
_GROUPS = ("bottom", "plate_h", "plate_v", "axis", "side", "top")


@dataclass(frozen=True)
class FlowCellGeometry:
    """Flow-cell geometry in units of the film height.

    Attributes
    ----------
    cell_radius : float
        Outer radius R of the cell.
    hole_radius : float
        Hole radius a, 0 < a < R.
    thickness : float
        Backplate thickness t > 0 (hole length).
    exit_height : float
        Height H > 0 of the exit chamber above the backplate.
    """

    cell_radius: float
    hole_radius: float
    thickness: float
    exit_height: float

    def check(self) -> None:
        R, a, t, H = self.cell_radius, self.hole_radius, self.thickness, self.exit_height
        if not (0 < a < R and t > 0 and H > 0):
            raise ValueError(f"flow cell needs 0 < hole_radius < cell_radius, thickness > 0 "
                             f"and exit_height > 0, got R={R}, a={a}, t={t}, H={H}")

    @property
    def corner_length(self) -> float:
        """ℓ = min(1, a, t), the smallest geometric length at the rims."""
        return min(1.0, self.hole_radius, self.thickness)

    def as_dict(self) -> dict:
        return {"R": self.cell_radius, "a": self.hole_radius, "t": self.thickness,
                "H": self.exit_height}


def _num(value: float) -> str:
    return f"{float(value):.17g}"


def _size_expression(geo: FlowCellGeometry, level: float, c_max: float) -> str:
    a, t, mu = geo.hole_radius, geo.thickness, GRADING_EXPONENT
    ell = geo.corner_length
    rho0 = ell * level ** (1.0 / (1.0 - mu))
    rho = (f"Max({_num(rho0)}, Min(Sqrt((x-{_num(a)})^2 + (y-1)^2), "
           f"Sqrt((x-{_num(a)})^2 + (y-{_num(1 + t)})^2)))")
    radical = f"{_num(ell ** (1 - mu))}*({rho})^{_num(mu)}"
    film = "1 + Max(0, y - 1)"
    return f"{_num(level)}*Min(Min({radical}, {film}), {_num(c_max)})"


def _classify(gmsh, geo: FlowCellGeometry) -> None:
    R, a, t = geo.cell_radius, geo.hole_radius, geo.thickness
    top = 1.0 + t + geo.exit_height
    tol = 1e-7 * geo.corner_length
    names = {k: [] for k in _GROUPS}
    for dim, tag in gmsh.model.getBoundary(gmsh.model.getEntities(2), combined=True,
                                           oriented=False):
        ends = [gmsh.model.getValue(0, abs(p), []) for _, p in
                gmsh.model.getBoundary([(dim, abs(tag))], oriented=False)]
        (x0, y0, _), (x1, y1, _) = ends
        xc, yc = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
        if abs(y1 - y0) < tol:  # horizontal
            if abs(yc) < tol:
                names["bottom"].append(abs(tag))
            elif abs(yc - top) < tol:
                names["top"].append(abs(tag))
            elif xc > a:
                names["plate_h"].append(abs(tag))
        elif abs(x1 - x0) < tol:  # vertical
            if abs(xc) < tol:
                names["axis"].append(abs(tag))
            elif abs(xc - R) < tol:
                names["side"].append(abs(tag))
            elif abs(xc - a) < tol:
                names["plate_v"].append(abs(tag))
    for name, tags in names.items():
        if not tags:
            raise ValueError(f"flow cell boundary {name!r} not found (geometry {geo})")
        gmsh.model.addPhysicalGroup(1, tags, name=name)


def _build(geo: FlowCellGeometry, level: float, c_max: float) -> dict:
    R, a, t, H = geo.cell_radius, geo.hole_radius, geo.thickness, geo.exit_height
    with gmsh_session("flow-cell") as gmsh:
        occ = gmsh.model.occ
        parts = [occ.addRectangle(0, 0, 0, R, 1.0), occ.addRectangle(0, 1.0, 0, a, t),
                 occ.addRectangle(0, 1.0 + t, 0, R, H)]
        occ.fragment([(2, parts[0])], [(2, q) for q in parts[1:]])
        occ.synchronize()
        _classify(gmsh, geo)
        fid = gmsh.model.mesh.field.add("MathEval")
        gmsh.model.mesh.field.setString(fid, "F", _size_expression(geo, level, c_max))
        gmsh.model.mesh.field.setAsBackgroundMesh(fid)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.model.mesh.generate(2)
        return tagged_mesh_arrays(gmsh, 2)


def flow_cell_mesh(geo: FlowCellGeometry, level: float, max_size: float | None = None) -> MeshTri:
    """Graded triangular mesh of the flow cell (x = r, y = z; cached on disk).

    Parameters
    ----------
    geo : FlowCellGeometry
        Geometry in units of the film height.
    level : float
        Size factor s in (0, 1] (module docstring); halving s roughly halves every element.
    max_size : float, optional
        c_max, the largest element size divided by s; default max(4, R/2).

    Returns
    -------
    MeshTri
        With the boundaries of the module docstring.
    """
    geo.check()
    if max_size is None:
        max_size = max(4.0, 0.5 * geo.cell_radius)
    if not (0 < level <= 1 and max_size > 0):
        raise ValueError(f"level must lie in (0, 1] and max_size > 0, got {level}, {max_size}")
    params = {**geo.as_dict(), "s": level, "cmax": max_size, "mu": GRADING_EXPONENT,
              "gen": _GENERATOR}
    arr = cached_arrays("flow-cell-rz", params, lambda: _build(geo, level, max_size))
    return to_skfem(arr)
