"""Mesh of the axisymmetric unit cell with a film on each face of the gap, in scaled coordinates.

All lengths are in units of the gap between the two films (the gap is 1). From the bottom up, on
the r-z half plane [0, R] x [0, top] (x = r, y = z):

* ``z = 0``: the lower face (boundary group ``"bottom"``);
* ``0 <= z <= f_l``: the lower film over the whole cell (subdomain ``"lower_film"``, absent when
  f_l = 0);
* ``f_l <= z <= f_l + 1``: the gap;
* ``z2 = f_l + 1 <= z <= z3 = z2 + f_u``: the upper film for r >= a (subdomain ``"upper_film"``,
  absent when f_u = 0), the hole (r < a) stays open;
* ``z3 <= z <= z4 = z3 + t``: the upper plate, cut out for r >= a; its bottom face, hole wall and
  top face form the boundary group ``"backplate"``;
* ``z4 <= z <= z4 + H``: a layer of open space above it.

Without a hole (a = 0) the cell ends at z3 and the group ``"backplate"`` is its top edge. Every
region that is not a film is the subdomain ``"open"``.

The mesh is graded towards the hole rim (the points (a, z2), (a, z3), (a, z4)) with the size law
of :class:`diagap.meshes.cell.MeshSizes`; inside a film the size is at most the film thickness
(but not below ``h_rim`` or ``h_gap``/10: away from the rims the field in a thin film is normal
to it and linear in z, which flat elements carry exactly), and it grows with the grading away
from the film. Cached on disk. This module knows nothing of physics: names refer to
geometry only.
"""
from __future__ import annotations

from dataclasses import dataclass

from skfem import MeshTri

from diagap.meshes._gmsh import gmsh_session
from diagap.meshes.cache import cached_arrays
from diagap.meshes.cell import MeshSizes, _num, tagged_mesh_arrays, to_skfem

__all__ = ["LayeredCellGeometry", "layered_cell_mesh"]


@dataclass(frozen=True)
class LayeredCellGeometry:
    """Unit cell with films, in units of the gap between the films (module docstring).

    Attributes
    ----------
    cell_radius, hole_radius : float
        R and a (a = 0: no hole).
    thickness : float
        Upper plate thickness t.
    air_height : float
        H above the upper plate (ignored without a hole).
    lower_film, upper_film : float
        Film thicknesses f_l (on z = 0) and f_u (under the upper plate); either may be 0.
    """

    cell_radius: float
    hole_radius: float
    thickness: float
    air_height: float
    lower_film: float
    upper_film: float

    @property
    def levels(self) -> tuple[float, float, float, float]:
        """(z1, z2, z3, z4): top of the lower film, bottom and top of the upper film, top of the
        upper plate."""
        z1 = self.lower_film
        z2 = z1 + 1.0
        z3 = z2 + self.upper_film
        return z1, z2, z3, z3 + self.thickness

    def as_dict(self) -> dict:
        return {"R": self.cell_radius, "a": self.hole_radius, "t": self.thickness,
                "H": self.air_height, "fl": self.lower_film, "fu": self.upper_film}

    def check(self) -> None:
        R, a, t, H = self.cell_radius, self.hole_radius, self.thickness, self.air_height
        ok = R > 0 and t > 0 and H > 0 and 0 <= a < R
        ok = ok and self.lower_film >= 0 and self.upper_film >= 0
        if not ok:
            raise ValueError(f"layered cell must satisfy R > 0, t > 0, H > 0, 0 <= a < R and "
                             f"film thicknesses >= 0, got {self}")


def _classify(gmsh, geo: LayeredCellGeometry) -> None:
    """Physical groups: the two electrode boundaries and the film subdomains."""
    a = geo.hole_radius
    z1, z2, z3, z4 = geo.levels
    tol = 1e-6  # gmsh bounding boxes are padded by ~1e-7 (units of the gap)
    names: dict[str, list] = {"bottom": [], "backplate": []}
    for dim, tag in gmsh.model.getBoundary(gmsh.model.getEntities(2), combined=True,
                                           oriented=False):
        x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, abs(tag))
        xc, yc = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
        flat = abs(y1 - y0) < tol
        if flat and abs(yc) < tol:
            names["bottom"].append(abs(tag))
        elif flat and xc > a and (abs(yc - z3) < tol or (a > 0 and abs(yc - z4) < tol)):
            names["backplate"].append(abs(tag))
        elif a > 0 and abs(x1 - x0) < tol and abs(xc - a) < tol and z3 < yc < z4:
            names["backplate"].append(abs(tag))
    for name, tags in names.items():
        if not tags:
            raise ValueError(f"layered cell has no {name!r} boundary: {geo}")
        gmsh.model.addPhysicalGroup(1, tags, name=name)
    films = {"lower_film": [], "upper_film": [], "open": []}
    for dim, tag in gmsh.model.getEntities(2):
        x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, tag)
        yc, xc = 0.5 * (y0 + y1), 0.5 * (x0 + x1)
        if geo.lower_film > 0 and yc < z1:
            films["lower_film"].append(tag)
        elif geo.upper_film > 0 and z2 < yc < z3 and xc > a:
            films["upper_film"].append(tag)
        else:
            films["open"].append(tag)
    for name, tags in films.items():
        if tags:
            gmsh.model.addPhysicalGroup(2, tags, name=name)


def _size_law(geo: LayeredCellGeometry, sizes: MeshSizes) -> str:
    a = geo.hole_radius
    z1, z2, z3, z4 = geo.levels
    gr = _num(sizes.grading)
    terms = [_num(sizes.h_max), f"{_num(sizes.h_gap)} + {gr}*Max(0, y - {_num(z3)})"]
    if a > 0:
        rims = [z3, z4] + ([z2] if geo.upper_film > 0 else [])
        terms.append(f"{_num(sizes.h_rim)} + {gr}*({_nested_min(rims, a)})")
    if geo.lower_film > 0:
        cap = max(geo.lower_film, sizes.h_rim, 0.1 * sizes.h_gap)
        terms.append(f"{_num(cap)} + {gr}*Max(0, y - {_num(z1)})")
    if geo.upper_film > 0:
        cap = max(geo.upper_film, sizes.h_rim, 0.1 * sizes.h_gap)
        terms.append(f"{_num(cap)} + {gr}*(Max(0, {_num(z2)} - y) + Max(0, y - {_num(z3)}))")
    return _nested(terms)


def _nested_min(levels, a) -> str:
    return _nested([f"Sqrt((x-{_num(a)})^2 + (y-{_num(z)})^2)" for z in levels])


def _nested(terms: list[str]) -> str:
    """Min of several expressions as nested binary Min (gmsh's Min takes two arguments)."""
    out = terms[0]
    for t in terms[1:]:
        out = f"Min({out}, {t})"
    return out


def _build(geo: LayeredCellGeometry, sizes: MeshSizes) -> dict:
    R, a, H = geo.cell_radius, geo.hole_radius, geo.air_height
    z1, z2, z3, z4 = geo.levels
    with gmsh_session("layered-cell") as gmsh:
        occ = gmsh.model.occ
        parts = [occ.addRectangle(0, z1, 0, R, 1.0)]
        if geo.lower_film > 0:
            parts.append(occ.addRectangle(0, 0, 0, R, z1))
        if geo.upper_film > 0:
            parts.append(occ.addRectangle(a, z2, 0, R - a, geo.upper_film))
            if a > 0:
                parts.append(occ.addRectangle(0, z2, 0, a, geo.upper_film))
        if a > 0:
            parts += [occ.addRectangle(0, z3, 0, a, geo.thickness),
                      occ.addRectangle(0, z4, 0, R, H)]
        if len(parts) > 1:
            occ.fragment([(2, parts[0])], [(2, q) for q in parts[1:]])
        occ.synchronize()
        _classify(gmsh, geo)
        gmsh.model.mesh.field.setAsBackgroundMesh(_field(gmsh, _size_law(geo, sizes)))
        for key in ("MeshSizeExtendFromBoundary", "MeshSizeFromPoints", "MeshSizeFromCurvature"):
            gmsh.option.setNumber(f"Mesh.{key}", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 5)
        gmsh.model.mesh.generate(2)
        return tagged_mesh_arrays(gmsh, 2)


def _field(gmsh, expr: str) -> int:
    fid = gmsh.model.mesh.field.add("MathEval")
    gmsh.model.mesh.field.setString(fid, "F", expr)
    return fid


def layered_cell_mesh(geo: LayeredCellGeometry, sizes: MeshSizes) -> MeshTri:
    """Triangular r-z mesh of the layered unit cell (x = r, y = z; cached), with the boundary
    groups ``"bottom"``, ``"backplate"`` and the subdomains ``"lower_film"``, ``"upper_film"``
    (those present) and ``"open"``."""
    geo.check()
    sizes.check()
    params = {**geo.as_dict(), **sizes.as_dict()}
    return to_skfem(cached_arrays("cell-rz-films", params, lambda: _build(geo, sizes)))
