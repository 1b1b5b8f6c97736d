"""Meshes of a pair of coaxial electrodes in open space, for edge-fringing studies.

Scaled coordinates: lengths in units of the gap (the gap is 1). The mesh is the half plane
x >= 0 (x = r for an axisymmetric pair, or the distance from the mid-line of a pair of strips)
inside a half disk of radius ``outer_radius`` centred at the middle of the gap. It holds

* the lower electrode: a thin (zero-thickness) conductor on z = 0, 0 <= x <= ``lower_radius``
  (interior facets, boundary group ``"lower"``);
* the upper electrode: 0 <= x <= ``upper_radius`` at z = 1 — a thin conductor when
  ``thickness == 0``, otherwise the rectangle [0, upper_radius] x [1, 1 + thickness] is cut out
  and its bottom, side and top form the group ``"upper"``;
* optionally a solid ring [upper_radius, ring_radius] x [1, 1 + thickness] (the part of a
  backplate beyond its electrode) as subdomain ``"ring"``;
* the outer arc as boundary group ``"outer"``;
* optionally a film on each electrode's facing side: [0, lower_radius] x [0, lower_film]
  (subdomain ``"lower_film"``) and [0, upper_radius] x [z_u − upper_film, z_u] under the upper
  electrode (subdomain ``"upper_film"``). The gap of 1 is then the distance between the films:
  the upper electrode's bottom is at z_u = lower_film + 1 + upper_film (1 without films).

The mesh is graded towards the electrode edges (points (lower_radius, 0), (upper_radius, 1) and
(upper_radius, 1 + thickness)) with the law of :class:`diagap.meshes.cell.MeshSizes`, capped at
``h_gap`` between the electrodes and growing with distance outside them (``MathEval`` field).
Cached on disk. :func:`disk_pair_mesh` is the classic validation case of two equal thin disks.
"""
from __future__ import annotations

from dataclasses import dataclass

from skfem import MeshTri

from diagap.meshes._gmsh import gmsh_session
from diagap.meshes.cache import cached_arrays
from diagap.meshes.cell import MeshSizes, _num, tagged_mesh_arrays, to_skfem

__all__ = ["PairGeometry", "electrode_pair_mesh", "disk_pair_mesh"]

@dataclass(frozen=True)
class PairGeometry:
    """Two coaxial electrodes in units of the gap (see the module docstring)."""

    lower_radius: float
    upper_radius: float
    thickness: float
    outer_radius: float
    ring_radius: float = 0.0
    lower_film: float = 0.0
    upper_film: float = 0.0

    @property
    def upper_bottom(self) -> float:
        """z of the upper electrode's bottom face: lower film + gap + upper film."""
        return self.lower_film + 1.0 + self.upper_film

    def as_dict(self) -> dict:
        out = {"rl": self.lower_radius, "ru": self.upper_radius, "t": self.thickness,
               "R": self.outer_radius, "rb": self.ring_radius}
        if self.lower_film or self.upper_film:
            out.update({"fl": self.lower_film, "fu": self.upper_film})
        return out

    def check(self) -> None:
        rl, ru, t, R = self.lower_radius, self.upper_radius, self.thickness, self.outer_radius
        ok = rl > 0 and ru > 0 and t >= 0 and R > 2 * max(rl, ru, self.upper_bottom + t)
        ok = ok and (self.ring_radius == 0 or (t > 0 and self.ring_radius > ru))
        ok = ok and self.ring_radius < 0.5 * R
        ok = ok and self.lower_film >= 0 and self.upper_film >= 0
        if not ok:
            raise ValueError(
                f"electrode pair must satisfy radii > 0, thickness >= 0, outer radius > 2x the "
                f"electrodes, ring radius 0 or above the upper radius (with thickness > 0); got "
                f"{self}")


def _classify(gmsh, geo: PairGeometry) -> None:
    rl, ru, t = geo.lower_radius, geo.upper_radius, geo.thickness
    zu = geo.upper_bottom
    tol = 1e-7 * max(1.0, geo.outer_radius)
    groups = {"lower": [], "upper": [], "outer": []}
    for dim, tag in gmsh.model.getEntities(1):
        x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, tag)
        # bounding boxes are padded (~1e-7): compare with tolerances, never exactly
        if x1 < 10 * tol:
            continue  # on the axis / mid-line
        if abs(y0) < 10 * tol and abs(y1) < 10 * tol and x1 <= rl + 10 * tol:
            groups["lower"].append(tag)
        elif y0 > zu - 10 * tol and y1 < zu + t + 10 * tol and x1 <= ru + 10 * tol:
            groups["upper"].append(tag)
        elif x1 > 0.9 * geo.outer_radius:
            groups["outer"].append(tag)
    for name, tags in groups.items():
        if not tags:
            raise ValueError(f"electrode pair geometry has no {name!r} curves")
        gmsh.model.addPhysicalGroup(1, tags, name=name)
    if geo.ring_radius > 0:
        ring = []
        for dim, tag in gmsh.model.getEntities(2):
            x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, tag)
            if x0 > ru - 10 * tol and x1 < geo.ring_radius + 10 * tol and y0 > zu - 10 * tol:
                ring.append(tag)
        if len(ring) != 1:
            raise ValueError(f"electrode pair ring selection found {len(ring)} surfaces")
        gmsh.model.addPhysicalGroup(2, ring, name="ring")
    _film_groups(gmsh, geo, 10 * tol)


def _film_groups(gmsh, geo: PairGeometry, tol: float) -> None:
    """Subdomains ``"lower_film"`` and ``"upper_film"`` (those with a thickness > 0)."""
    boxes = {"lower_film": (geo.lower_radius, 0.0, geo.lower_film),
             "upper_film": (geo.upper_radius, geo.lower_film + 1.0, geo.upper_bottom)}
    for name, (radius, z0, z1) in boxes.items():
        if z1 <= z0:
            continue
        tags = []
        for dim, tag in gmsh.model.getEntities(2):
            x0, y0, _, x1, y1, _ = gmsh.model.getBoundingBox(dim, tag)
            if x1 < radius + tol and y0 > z0 - tol and y1 < z1 + tol:
                tags.append(tag)
        if len(tags) != 1:
            raise ValueError(f"electrode pair {name} selection found {len(tags)} surfaces")
        gmsh.model.addPhysicalGroup(2, tags, name=name)


def _size_expr(geo: PairGeometry, sizes: MeshSizes) -> str:
    rl, ru, t = geo.lower_radius, geo.upper_radius, geo.thickness
    zu, fl, fu = geo.upper_bottom, geo.lower_film, geo.upper_film
    rims = [(rl, 0.0), (ru, zu)] + ([(ru, zu + t)] if t > 0 else [])
    rims += ([(rl, fl)] if fl > 0 else []) + ([(ru, zu - fu)] if fu > 0 else [])
    d = [f"Sqrt((x-{_num(x)})^2 + (y-{_num(y)})^2)" for x, y in rims]
    dist = d[0]
    for term in d[1:]:
        dist = f"Min({dist}, {term})"
    inner = min(rl, ru)
    box = f"(Max(0, x-{_num(inner)}) + Max(0, -y) + Max(0, y-{_num(zu + t)}))"
    gr = _num(sizes.grading)
    out = (f"Min({_num(sizes.h_max)}, Min({_num(sizes.h_rim)} + {gr}*{dist}, "
           f"{_num(sizes.h_gap)} + {gr}*{box}))")
    return out


def _half_disk(gmsh, zc: float, R: float) -> list:
    """The half disk x >= 0 of radius R about (0, zc), drawn from its arc and its chord on the
    axis. (Cutting it from a full disk with a bounding rectangle, an OCC intersection, returns
    nothing once R exceeds ~1.2e4 gap units — reached with a backplate thickness of ~300 gaps,
    since R grows with the thickness.)"""
    import math

    occ = gmsh.model.occ
    arc = occ.addCircle(0, zc, 0, R, angle1=-0.5 * math.pi, angle2=0.5 * math.pi)
    occ.synchronize()
    (_, start), (_, end) = gmsh.model.getBoundary([(1, arc)], oriented=False)
    chord = occ.addLine(end, start)
    surface = occ.addPlaneSurface([occ.addCurveLoop([arc, chord])])
    occ.synchronize()
    xmin, _, _, xmax, _, _ = gmsh.model.getBoundingBox(2, surface)
    if not (xmin > -1e-6 * R and math.isclose(xmax, R, rel_tol=1e-6)):
        raise ValueError(f"electrode pair: the half disk of radius {R!r} lies on the wrong side "
                         f"of the axis")
    return [(2, surface)]


def _build(geo: PairGeometry, sizes: MeshSizes) -> dict:
    rl, ru, t, R = geo.lower_radius, geo.upper_radius, geo.thickness, geo.outer_radius
    zu, fl, fu = geo.upper_bottom, geo.lower_film, geo.upper_film
    zc = 0.5 * (zu + t)
    with gmsh_session("electrode-pair") as gmsh:
        occ = gmsh.model.occ
        dom = _half_disk(gmsh, zc, R)
        tools = [(1, occ.addLine(occ.addPoint(0, 0, 0), occ.addPoint(rl, 0, 0)))]
        if t == 0:
            tools.append((1, occ.addLine(occ.addPoint(0, zu, 0), occ.addPoint(ru, zu, 0))))
        else:
            dom, _ = occ.cut(dom, [(2, occ.addRectangle(0, zu, 0, ru, t))])
            if geo.ring_radius > 0:
                tools.append((2, occ.addRectangle(ru, zu, 0, geo.ring_radius - ru, t)))
        if fl > 0:
            tools.append((2, occ.addRectangle(0, 0, 0, rl, fl)))
        if fu > 0:
            tools.append((2, occ.addRectangle(0, zu - fu, 0, ru, fu)))
        occ.fragment(dom, tools)
        occ.synchronize()
        _classify(gmsh, geo)
        fid = gmsh.model.mesh.field.add("MathEval")
        gmsh.model.mesh.field.setString(fid, "F", _size_expr(geo, sizes))
        gmsh.model.mesh.field.setAsBackgroundMesh(fid)
        for opt in ("MeshSizeExtendFromBoundary", "MeshSizeFromPoints", "MeshSizeFromCurvature"):
            gmsh.option.setNumber(f"Mesh.{opt}", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 5)
        gmsh.model.mesh.generate(2)
        return tagged_mesh_arrays(gmsh, 2)


def electrode_pair_mesh(geo: PairGeometry, sizes: MeshSizes) -> MeshTri:
    """Triangular mesh of an electrode pair in open space (cached; see the module docstring)."""
    geo.check()
    sizes.check()
    params = {**geo.as_dict(), **sizes.as_dict()}
    return to_skfem(cached_arrays("electrode-pair", params, lambda: _build(geo, sizes)))


def disk_pair_mesh(radius: float, outer_factor: float, sizes: MeshSizes) -> MeshTri:
    """Two equal thin coaxial disks of radius ``radius`` (gap units), outer radius
    ``outer_factor * radius``."""
    geo = PairGeometry(radius, radius, 0.0, outer_factor * radius)
    return electrode_pair_mesh(geo, sizes)
