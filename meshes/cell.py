"""Meshes of one unit cell of a perforated-backplate lattice, in scaled coordinates.

All lengths are in units of the air gap (the gap is 1). The diaphragm face is the plane z = 0,
the backplate occupies 1 <= z <= 1 + t with a through hole of radius a, and a layer of air of
height H lies above it. Two kinds of cell:

* :func:`axisymmetric_cell_mesh` — the r-z half plane of the circle of equal area around one
  hole (cell radius R): triangles on [0, R] x [0, 1 + t + H] without the backplate rectangle
  [a, R] x [1, 1 + t]. Boundary groups: ``"bottom"`` (z = 0) and ``"backplate"`` (backplate
  bottom face, hole wall and top face).
* :func:`prism_cell_mesh` — the irreducible wedge of a hexagonal (1/12 of the hexagon, 30°) or
  square (1/8 of the square, 45°) lattice cell as a 3D prism with the hole quarter/segment cut
  out of the backplate layer; linear tetrahedra with the same two boundary groups.

Both meshes are graded towards the hole rim (the two circles r = a, z = 1 and z = 1 + t) with
the size law of :class:`MeshSizes` (linear growth with the distance d to the nearer rim, capped
in the gap layer and overall), given to gmsh as a ``MathEval`` size field. The air is built from fragments (gap, hole, air above) so
that the plane z = 1 is a mesh surface also inside the hole. Meshes are cached on disk
(:mod:`diagap.meshes.cache`, keyed by the geometry and a hash of the mesh code). This module
knows nothing of physics: names refer to geometry only.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from skfem import MeshTet1, MeshTri

from diagap.meshes._gmsh import gmsh_session
from diagap.meshes.cache import cached_arrays

__all__ = [
    "CellGeometry",
    "MeshSizes",
    "axisymmetric_cell_mesh",
    "prism_cell_mesh",
    "tagged_mesh_arrays",
    "to_skfem",
]


@dataclass(frozen=True)
class CellGeometry:
    """Unit-cell geometry in units of the gap.

    Attributes
    ----------
    cell_radius : float
        Radius R of the circle of equal area (axisymmetric cell); for prism cells the half
        pitch p/2 (apothem of the hexagon / half side of the square).
    hole_radius : float
        Hole radius a (0 for an unperforated cell).
    thickness : float
        Backplate thickness t.
    air_height : float
        Height H of the air layer above the backplate.
    """

    cell_radius: float
    hole_radius: float
    thickness: float
    air_height: float

    def as_dict(self) -> dict:
        return {"R": self.cell_radius, "a": self.hole_radius, "t": self.thickness,
                "H": self.air_height}


@dataclass(frozen=True)
class MeshSizes:
    """Element size law (units of the gap).

    h = min(h_max, h_rim + grading·d, h_gap + grading·max(0, z − 1)): graded from ``h_rim``
    at the hole rim (distance d), at most ``h_gap`` inside the gap layer (growing again above
    it) and at most ``h_max`` anywhere.
    """

    h_rim: float
    grading: float
    h_max: float
    h_gap: float

    def as_dict(self) -> dict:
        return {"h_rim": self.h_rim, "grading": self.grading, "h_max": self.h_max,
                "h_gap": self.h_gap}

    def check(self) -> None:
        if not (0 < self.h_rim <= min(self.h_max, self.h_gap)) or self.grading <= 0:
            raise ValueError(
                f"mesh sizes must satisfy 0 < h_rim <= min(h_max, h_gap) and grading > 0, "
                f"got h_rim={self.h_rim}, h_max={self.h_max}, h_gap={self.h_gap}, "
                f"grading={self.grading}")


def _num(value: float) -> str:
    """A float as gmsh's expression parser reads it (plain digits, no numpy repr)."""
    return f"{float(value):.17g}"


def _size_field(gmsh, expr: str) -> None:
    fid = gmsh.model.mesh.field.add("MathEval")
    gmsh.model.mesh.field.setString(fid, "F", expr)
    gmsh.model.mesh.field.setAsBackgroundMesh(fid)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)


def _rim_law(sizes: MeshSizes, distance: str, height: str) -> str:
    gr = _num(sizes.grading)
    return (f"Min({_num(sizes.h_max)}, Min({_num(sizes.h_rim)} + {gr}*({distance}), "
            f"{_num(sizes.h_gap)} + {gr}*Max(0, {height} - 1)))")


def tagged_mesh_arrays(gmsh, dim: int) -> dict:
    """Nodes, cells and named groups of the current gmsh model as arrays.

    Returns ``{"p": (dim, N), "t": (dim+1, M), "b_<name>": (dim, K), "s_<name>": (L,)}``:
    ``b_<name>`` holds the facets (node index tuples) of the physical group ``name`` of
    dimension dim − 1 and ``s_<name>`` the cell indices of a physical group of dimension dim.
    Nodes not used by any cell are removed.
    """
    tags, coords, _ = gmsh.model.mesh.getNodes()
    xyz = coords.reshape(-1, 3).T[:dim]
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(tags.size)
    cell_type, facet_type = {2: (2, 1), 3: (4, 2)}[dim]
    blocks, owner = [], []
    for _, ent in gmsh.model.getEntities(dim):
        et, _, en = gmsh.model.mesh.getElements(dim, ent)
        for e, n in zip(et, en):
            if e == cell_type:
                blocks.append(index[n.astype(np.int64)].reshape(-1, dim + 1))
                owner.append(np.full(blocks[-1].shape[0], ent))
    t, owner = np.vstack(blocks).T, np.concatenate(owner)
    used = np.unique(t)
    remap = np.full(xyz.shape[1], -1, dtype=np.int64)
    remap[used] = np.arange(used.size)
    out = {"p": np.ascontiguousarray(xyz[:, used]), "t": np.ascontiguousarray(remap[t])}
    for gtag_dim, gtag in gmsh.model.getPhysicalGroups(dim):
        name = gmsh.model.getPhysicalName(gtag_dim, gtag)
        ents = gmsh.model.getEntitiesForPhysicalGroup(gtag_dim, gtag)
        out[f"s_{name}"] = np.nonzero(np.isin(owner, ents))[0]
    for gdim, gtag in gmsh.model.getPhysicalGroups(dim - 1):
        name = gmsh.model.getPhysicalName(gdim, gtag)
        fblocks = []
        for ent in gmsh.model.getEntitiesForPhysicalGroup(gdim, gtag):
            et, _, en = gmsh.model.mesh.getElements(gdim, ent)
            fblocks += [index[n.astype(np.int64)].reshape(-1, dim)
                        for e, n in zip(et, en) if e == facet_type]
        facets = remap[np.vstack(fblocks).T] if fblocks else np.zeros((dim, 0), np.int64)
        out[f"b_{name}"] = np.ascontiguousarray(facets)
    return out


def to_skfem(arrays: dict):
    """A scikit-fem mesh (MeshTri or MeshTet1) with the named boundaries of ``arrays``.

    Named boundaries may be interior facets (thin electrodes); ``s_<name>`` arrays become
    subdomains. Raises ValueError if a named boundary does not match mesh facets (an empty or
    wrong selection would silently give a zero capacitance).
    """
    p, t = arrays["p"], arrays["t"]
    mesh = (MeshTri if p.shape[0] == 2 else MeshTet1)(p, t)
    facets = np.sort(mesh.facets, axis=0)
    dims = (p.shape[1],) * p.shape[0]
    keys = np.ravel_multi_index(tuple(facets), dims)
    order = np.argsort(keys)
    bounds = {}
    for name in (k for k in arrays if k.startswith("b_")):
        f = np.sort(arrays[name], axis=0)
        if f.shape[1] == 0:
            raise ValueError(f"mesh boundary {name[2:]!r} selects no facets")
        k = np.ravel_multi_index(tuple(f), dims)
        pos = np.searchsorted(keys, k, sorter=order)
        idx = order[np.minimum(pos, keys.size - 1)]
        if np.any(keys[idx] != k):
            raise ValueError(f"mesh boundary {name[2:]!r} has facets that are not mesh facets")
        bounds[name[2:]] = np.unique(idx)
    mesh = mesh.with_boundaries(bounds, boundaries_only=False)
    subs = {k[2:]: arrays[k] for k in arrays if k.startswith("s_")}
    return mesh.with_subdomains(subs) if subs else mesh


def _classify_2d(gmsh, geo: CellGeometry, groups: dict) -> None:
    """Put the outer boundary curves into physical groups by where they lie."""
    a, t = geo.hole_radius, geo.thickness
    tol = 1e-6 * min(x for x in (a, t, geo.cell_radius, 1.0) if x > 0)
    names = {}
    for dim, tag in gmsh.model.getBoundary(gmsh.model.getEntities(2), combined=True,
                                           oriented=False):
        x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, abs(tag))
        xc, yc = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
        horizontal = abs(y1 - y0) < 1e-3
        if horizontal and abs(yc) < tol:
            names.setdefault("bottom", []).append(abs(tag))
        elif a > 0 and horizontal and xc > a and (abs(yc - 1) < tol or abs(yc - 1 - t) < tol):
            names.setdefault("backplate", []).append(abs(tag))
        elif a > 0 and abs(x1 - x0) < 1e-3 and abs(xc - a) < tol and 1 < yc < 1 + t:
            names.setdefault("backplate", []).append(abs(tag))
        elif a == 0 and horizontal and abs(yc - 1) < tol:
            names.setdefault("backplate", []).append(abs(tag))
    for name in groups:
        if not names.get(name):
            raise ValueError(f"cell geometry has no {name!r} boundary (check hole radius, "
                             f"thickness and cell radius)")
        gmsh.model.addPhysicalGroup(1, names[name], name=name)


def _build_axisymmetric(geo: CellGeometry, sizes: MeshSizes) -> dict:
    R, a, t, H = geo.cell_radius, geo.hole_radius, geo.thickness, geo.air_height
    with gmsh_session("axisymmetric-cell") as gmsh:
        occ = gmsh.model.occ
        if a == 0:
            occ.addRectangle(0, 0, 0, R, 1.0)
            distance = "1 - y"
        else:
            parts = [occ.addRectangle(0, 0, 0, R, 1.0), occ.addRectangle(0, 1.0, 0, a, t),
                     occ.addRectangle(0, 1.0 + t, 0, R, H)]
            occ.fragment([(2, parts[0])], [(2, q) for q in parts[1:]])
            distance = (f"Min(Sqrt((x-{_num(a)})^2 + (y-1)^2), "
                        f"Sqrt((x-{_num(a)})^2 + (y-{_num(1 + t)})^2))")
        occ.synchronize()
        _classify_2d(gmsh, geo, ("bottom", "backplate"))
        _size_field(gmsh, _rim_law(sizes, distance, "y"))
        gmsh.option.setNumber("Mesh.Algorithm", 5)
        gmsh.model.mesh.generate(2)
        return tagged_mesh_arrays(gmsh, 2)


def _check_geometry(geo: CellGeometry, prism: bool) -> None:
    R, a, t, H = geo.cell_radius, geo.hole_radius, geo.thickness, geo.air_height
    if not (R > 0 and t > 0 and H > 0 and 0 <= a < R):
        raise ValueError(f"cell geometry must satisfy R > 0, t > 0, H > 0, 0 <= a < R, got "
                         f"R={R}, a={a}, t={t}, H={H}")
    if prism and a == 0:
        raise ValueError("prism cells need a hole (hole_radius > 0); use the axisymmetric "
                         "cell for an unperforated plate")


def axisymmetric_cell_mesh(geo: CellGeometry, sizes: MeshSizes) -> MeshTri:
    """Triangular r-z mesh of the axisymmetric unit cell (x = r, y = z; cached).

    With ``geo.hole_radius == 0`` the cell is the gap rectangle [0, R] x [0, 1] alone and the
    ``"backplate"`` group is its top edge.
    """
    _check_geometry(geo, prism=False)
    sizes.check()
    params = {**geo.as_dict(), **sizes.as_dict()}
    arr = cached_arrays("cell-rz", params, lambda: _build_axisymmetric(geo, sizes))
    return to_skfem(arr)


def _wedge_points(lattice: str, half_pitch: float) -> list[tuple[float, float]]:
    if lattice == "hex":
        return [(0.0, 0.0), (half_pitch, 0.0), (half_pitch, half_pitch / np.sqrt(3.0))]
    if lattice == "square":
        return [(0.0, 0.0), (half_pitch, 0.0), (half_pitch, half_pitch)]
    raise ValueError(f"lattice must be 'hex' or 'square' for a prism cell, got {lattice!r}")


def _wedge_prism(occ, pts, z0: float, height: float) -> int:
    ptags = [occ.addPoint(x, y, z0) for x, y in pts]
    lines = [occ.addLine(ptags[i], ptags[(i + 1) % 3]) for i in range(3)]
    surf = occ.addPlaneSurface([occ.addCurveLoop(lines)])
    out = occ.extrude([(2, surf)], 0, 0, height)
    return next(tag for dim, tag in out if dim == 3)


def _classify_3d(gmsh, geo: CellGeometry) -> None:
    t = geo.thickness
    tol = 1e-6 * min(geo.hole_radius, t, 1.0)
    names = {"bottom": [], "backplate": []}
    for dim, tag in gmsh.model.getBoundary(gmsh.model.getEntities(3), combined=True,
                                           oriented=False):
        x0, y0, z0, x1, y1, z1 = gmsh.model.getBoundingBox(dim, abs(tag))
        flat = abs(z1 - z0) < 1e-3
        zc = 0.5 * (z0 + z1)
        if flat and abs(zc) < tol:
            names["bottom"].append(abs(tag))
        elif flat and (abs(zc - 1) < tol or abs(zc - 1 - t) < tol):
            names["backplate"].append(abs(tag))
        elif gmsh.model.getType(dim, abs(tag)) == "Cylinder":
            names["backplate"].append(abs(tag))
    if not names["bottom"] or len(names["backplate"]) < 3:
        raise ValueError(f"prism cell boundary classification failed: {names}")
    for name, tags in names.items():
        gmsh.model.addPhysicalGroup(2, tags, name=name)


def _build_prism(lattice: str, geo: CellGeometry, sizes: MeshSizes) -> dict:
    hp, a, t, H = geo.cell_radius, geo.hole_radius, geo.thickness, geo.air_height
    pts = _wedge_points(lattice, hp)
    with gmsh_session("prism-cell") as gmsh:
        occ = gmsh.model.occ
        gap = _wedge_prism(occ, pts, 0.0, 1.0)
        top = _wedge_prism(occ, pts, 1.0 + t, H)
        layer = _wedge_prism(occ, pts, 1.0, t)
        cyl = occ.addCylinder(0, 0, 1.0, 0, 0, t, a)
        hole, _ = occ.intersect([(3, layer)], [(3, cyl)])
        occ.fragment([(3, gap)], [(3, top)] + hole)
        occ.synchronize()
        _classify_3d(gmsh, geo)
        rho = "Sqrt(x^2 + y^2)"
        distance = (f"Min(Sqrt(({rho}-{_num(a)})^2 + (z-1)^2), "
                    f"Sqrt(({rho}-{_num(a)})^2 + (z-{_num(1 + t)})^2))")
        _size_field(gmsh, _rim_law(sizes, distance, "z"))
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.model.mesh.generate(3)
        return tagged_mesh_arrays(gmsh, 3)


def prism_cell_mesh(lattice: str, geo: CellGeometry, sizes: MeshSizes) -> MeshTet1:
    """Tetrahedral mesh of the irreducible wedge of a hex or square lattice cell (cached).

    ``geo.cell_radius`` is the half pitch p/2. The wedge has its apex on the hole axis; its
    side faces are symmetry planes of the lattice.
    """
    _wedge_points(lattice, 1.0)
    _check_geometry(geo, prism=True)
    if geo.hole_radius >= geo.cell_radius:
        raise ValueError(f"hole radius {geo.hole_radius} must be below the half pitch "
                         f"{geo.cell_radius}")
    sizes.check()
    params = {"lattice": lattice, **geo.as_dict(), **sizes.as_dict()}
    arr = cached_arrays("cell-prism", params, lambda: _build_prism(lattice, geo, sizes))
    return to_skfem(arr)
