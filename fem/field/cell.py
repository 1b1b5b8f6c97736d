r"""Air-gap electrostatics of one unit cell of a perforated backplate.

Physics
-------
Laplace's equation for the potential u in the air of one lattice cell,

.. math:: \nabla\cdot(\varepsilon_0 \nabla u) = 0,

with u = 0 on the diaphragm face (z = 0) and u = 1 V on the backplate (its bottom face, the hole
wall and its top face). The side walls of a lattice unit cell are symmetry planes and the top of
the air layer above the backplate (height H, default one pitch) is closed; both carry the
natural condition ε0 ∂u/∂n = 0. Weak form: find u with those Dirichlet values such that

.. math:: \int_\Omega \nabla u\cdot\nabla v \, w \, dV = 0 \quad \forall v \text{ vanishing on the electrodes},

with w = 2πr on the axisymmetric r-z cell (circle of the same area as the lattice cell) and
w = 1 on the 3D prism wedge. The capacitance follows from the field energy at 1 V,
C = ε0 ∫ |∇u|² w dV, and the capacitance density is c = C / A_cell [F/m²]; the perforation
factor is c / (ε0/g) and the open-area fraction πa²/A_cell.

Numerics
--------
Lengths are scaled by the gap g inside (C = ε0·g·Ĉ with Ĉ the scaled energy). P2 elements on
meshes graded to the hole rim (:mod:`diagap.meshes.cell`), where the 270° corners make the field
singular (|∇u| ~ ρ^(-1/3)). Axisymmetric cells are solved directly, 3D cells by CG with an
algebraic multigrid preconditioner (pyamg; BLAS pinned to one thread). The discretisation error
is estimated from two mesh levels (all sizes halved): the energy is an upper bound that
decreases with refinement, and the reported estimate |C_fine − C_coarse| / (2^(4/3) − 1) assumes
the asymptotic corner-limited order 4/3, which is slower than the order observed on graded meshes
(≈ 2), so the estimate errs on the safe side.
"""
from __future__ import annotations

import logging
import math
import time
from dataclasses import dataclass, field as dc_field

import numpy as np
from skfem import Basis, ElementTetP1, ElementTetP2, ElementTriP1, ElementTriP2
from skfem import condense, solve

from diagap.meshes.cell import CellGeometry, MeshSizes, axisymmetric_cell_mesh, prism_cell_mesh

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.forms import laplace, laplace_axisymmetric
from diagap.fem.richardson import relative_error
from diagap.fem.validate import Checks

__all__ = [
    "ElectrostaticsInputError",
    "CellResult",
    "cell_capacitance",
    "lattice_summary",
    "cell_area_m2",
    "open_area_fraction",
    "solve_potential",
]

LATTICES = ("hex", "square", "none")
ACCURACIES = ("draft", "normal", "fine")
MODELS = ("axisymmetric", "3d")
CORNER_ORDER = 4.0 / 3.0  # energy convergence order limited by the 270° rim corner
_LEVELS = {  # mesh scale factors (coarse, fine) per accuracy
    "axisymmetric": {"draft": (4.0, 2.0), "normal": (2.0, 1.0), "fine": (1.0, 0.5)},
    "3d": {"draft": (4.0, 2.0), "normal": (2.0, 1.0), "fine": (1.4, 0.7)},
}
_log = logging.getLogger(__name__)


class ElectrostaticsInputError(ValueError):
    """An input of the air-gap electrostatics is outside its allowed range."""


_check = Checks(ElectrostaticsInputError)


def cell_area_m2(pitch_m: float, lattice: str) -> float:
    """Area of one lattice cell: (√3/2)p² (hex), p² (square)."""
    _check.choice("lattice", lattice, ("hex", "square"))
    return (math.sqrt(3.0) / 2.0 if lattice == "hex" else 1.0) * pitch_m**2


def open_area_fraction(hole_radius_m: float, pitch_m: float, lattice: str) -> float:
    """Hole area over cell area, πa²/A_cell (0 for ``lattice="none"``)."""
    if lattice == "none":
        return 0.0
    return math.pi * hole_radius_m**2 / cell_area_m2(pitch_m, lattice)


def check_cell_inputs(gap_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m,
                      accuracy="normal", model="axisymmetric") -> None:
    """Raise :class:`ElectrostaticsInputError` naming the first invalid cell input."""
    _check.choice("lattice", lattice, LATTICES)
    _check.choice("accuracy", accuracy, ACCURACIES)
    _check.choice("model", model, MODELS)
    _check.positive("gap_m", gap_m)
    _check.positive("backplate_thickness_m", backplate_thickness_m)
    if lattice == "none":
        _check.require(model == "axisymmetric", "model = '3d' needs a hole lattice (hex or square)")
        return
    _check.positive("hole_radius_m", hole_radius_m)
    _check.positive("pitch_m", pitch_m)
    _check.require(hole_radius_m < 0.5 * pitch_m,
                   f"hole_radius_m = {hole_radius_m!r} must be below pitch_m/2 = "
                   f"{0.5 * pitch_m!r} (larger holes touch their neighbours)")


def solve_potential(mesh, element, potentials: dict, weight: str = "axisymmetric",
                    iterative: bool = False, ring_permittivity: float = 1.0,
                    permittivities: dict | None = None):
    """Solve Laplace's equation with Dirichlet values on named mesh boundaries.

    Parameters
    ----------
    mesh : skfem.Mesh
        Scaled mesh with named boundaries (``mesh.boundaries``).
    element : skfem.Element
        Finite element (e.g. ``ElementTriP2()``).
    potentials : dict
        Boundary name → potential [V]; every name must select at least one DOF.
    weight : {"axisymmetric", "plane"}
        2πr weight (r = first coordinate) or none (plane 2D per length, or 3D).
    iterative : bool
        CG with a smoothed-aggregation AMG preconditioner instead of a direct solve.
    ring_permittivity : float
        Relative permittivity of the subdomain ``"ring"`` if the mesh has one (else 1).
    permittivities : dict, optional
        Subdomain name → relative permittivity for further dielectric subdomains (others 1).

    Returns
    -------
    basis, u, energy
        The basis, the nodal solution and ∫ε_r|∇u|² w dV in scaled units.
    """
    basis = Basis(mesh, element)
    form = laplace_axisymmetric if weight == "axisymmetric" else laplace
    K = form.assemble(basis)
    subdomains = mesh.subdomains or {}
    if ring_permittivity != 1.0 and "ring" in subdomains:
        ring = Basis(mesh, element, elements=subdomains["ring"])
        K = K + (ring_permittivity - 1.0) * form.assemble(ring)
    for name, eps_r in (permittivities or {}).items():
        if eps_r != 1.0 and name in subdomains:
            K = K + (eps_r - 1.0) * form.assemble(Basis(mesh, element, elements=subdomains[name]))
    x = np.zeros(basis.N)
    fixed = []
    for name, value in potentials.items():
        dofs = basis.get_dofs(name).all()
        if dofs.size == 0:
            raise ValueError(f"electrode boundary {name!r} selects no degrees of freedom")
        x[dofs] = value
        fixed.append(dofs)
    D = np.unique(np.concatenate(fixed))
    if iterative:
        x = _solve_cg(K, x, D)
    else:
        x = solve(*condense(K, x=x, D=D))
    return basis, x, float(x @ (K @ x))


def _solve_cg(K, x, D):
    """CG + smoothed-aggregation AMG on the condensed system, BLAS on one thread."""
    import pyamg
    from scipy.sparse.linalg import cg
    from threadpoolctl import threadpool_limits

    A, b, _, I = condense(K, x=x, D=D)
    with threadpool_limits(limits=1):
        ml = pyamg.smoothed_aggregation_solver(A.tocsr(), symmetry="symmetric")
        y, info = cg(A, b, rtol=1e-11, maxiter=2000, M=ml.aspreconditioner(cycle="V"))
    if info != 0:
        raise RuntimeError(f"CG did not converge (info={info}) on {A.shape[0]} unknowns")
    out = x.copy()
    out[I] = y
    return out


@dataclass(frozen=True)
class CellResult:
    """Capacitance of one unit cell at 1 V (SI units).

    Attributes
    ----------
    capacitance_density_f_per_m2 : float
        Cell capacitance over cell area, c [F/m²].
    rel_error : float
        Estimated relative discretisation error of c (two mesh levels).
    perforation_factor : float
        c / (ε0/g).
    open_area_fraction : float
        πa² / A_cell.
    dofs : int
        Unknowns of the finer mesh level.
    gap_m, cell_area_m2 : float
        Gap and lattice-cell area [m, m²].
    model, lattice : str
    levels : tuple
        (dofs, perforation factor) of each mesh level, coarse first.
    runtime_s : float
        Wall time of the computation.
    """

    capacitance_density_f_per_m2: float
    rel_error: float
    perforation_factor: float
    open_area_fraction: float
    dofs: int
    gap_m: float
    cell_area_m2: float
    model: str
    lattice: str
    levels: tuple
    runtime_s: float
    _solution: tuple = dc_field(default=None, repr=False, compare=False)

    def field(self):
        """The potential and field magnitude of the finer level at 1 V.

        Returns
        -------
        points : ndarray (dim, N)
            Node coordinates [m] (r, z for the axisymmetric cell; x, y, z for the 3D wedge).
        cells : ndarray (dim+1, M)
            Triangles or tetrahedra (node indices).
        potential : ndarray (N,)
            u at the nodes [V].
        field_magnitude : ndarray (N,)
            |E| = |∇u| at the nodes [V/m] (L2 projection onto P1).
        """
        basis, u = self._solution
        mesh = basis.mesh
        p1 = basis.with_element(ElementTriP1() if mesh.dim() == 2 else ElementTetP1())
        grads = basis.interpolate(u).grad
        emag = p1.project(np.sqrt(np.sum(grads**2, axis=0)))
        vertex_u = u[basis.nodal_dofs[0]]
        return mesh.p * self.gap_m, mesh.t.copy(), vertex_u, emag / self.gap_m


def _scaled_cell(gap_m, hole_radius_m, pitch_m, lattice, t_m, air_height_m, model):
    """Cell geometry in units of the gap, and the scaled cell area."""
    if lattice == "none":
        return CellGeometry(1.0, 0.0, t_m / gap_m, 1.0), math.pi
    area = cell_area_m2(pitch_m, lattice) / gap_m**2
    height = (pitch_m if air_height_m is None else air_height_m) / gap_m
    if model == "axisymmetric":
        radius = math.sqrt(area / math.pi)
    else:
        radius = 0.5 * pitch_m / gap_m
    return CellGeometry(radius, hole_radius_m / gap_m, t_m / gap_m, height), area


def _sizes(geo: CellGeometry, s: float, model: str) -> MeshSizes:
    """The size law at mesh scale factor s (all sizes proportional to s)."""
    a, t = geo.hole_radius, geo.thickness
    feature = min(1.0, t, a) if a > 0 else 1.0
    far = max(1.0, geo.cell_radius, geo.air_height)
    if model == "axisymmetric":
        return MeshSizes(h_rim=0.01 * s * feature, grading=0.3 * s, h_max=0.2 * s * far,
                         h_gap=0.3 * s)
    return MeshSizes(h_rim=0.03 * s * feature, grading=0.35 * s, h_max=0.25 * s * far,
                     h_gap=0.4 * s)


def _solve_level(geo, lattice, s, model):
    sizes = _sizes(geo, s, model)
    potentials = {"bottom": 0.0, "backplate": 1.0}
    if model == "axisymmetric":
        mesh = axisymmetric_cell_mesh(geo, sizes)
        return solve_potential(mesh, ElementTriP2(), potentials, "axisymmetric")
    mesh = prism_cell_mesh(lattice, geo, sizes)
    return solve_potential(mesh, ElementTetP2(), potentials, "plane", iterative=True)


def cell_capacitance(gap_m: float, hole_radius_m: float, pitch_m: float, lattice: str,
                     backplate_thickness_m: float, accuracy: str = "normal",
                     model: str = "axisymmetric", air_height_m: float | None = None,
                     mesh_scale: float | None = None, layers=None) -> CellResult:
    """Capacitance density of one cell of the backplate hole lattice.

    Parameters
    ----------
    gap_m : float
        Diaphragm-to-backplate distance g [m].
    hole_radius_m, pitch_m : float
        Hole radius a and lattice pitch p [m] (ignored for ``lattice="none"``); a < p/2.
    lattice : {"hex", "square", "none"}
        Hole lattice; "none" is an unperforated plate.
    backplate_thickness_m : float
        Backplate thickness t [m].
    accuracy : {"draft", "normal", "fine"}
        Mesh levels used (each level halves all element sizes).
    model : {"axisymmetric", "3d"}
        Circle-of-equal-area r-z cell (default) or the 3D wedge of the true lattice cell.
    air_height_m : float, optional
        Height of the air layer kept above the backplate [m]; default one pitch.
    mesh_scale : float, optional
        Overrides ``accuracy``: the two levels use mesh scale factors 2·mesh_scale and
        mesh_scale (element sizes proportional to the factor; "normal" is 1).
    layers : GapLayers, optional
        Dielectric layers on the electrodes (:mod:`diagap.fem.field.layers`; axisymmetric cell
        only); ``gap_m`` is then the air gap between the layer surfaces.

    Returns
    -------
    CellResult
    """
    if layers is not None and layers.present:
        from diagap.fem.field.layers import layered_cell_capacitance

        _check.require(model == "axisymmetric", "dielectric layers need model = 'axisymmetric'")
        return layered_cell_capacitance(gap_m, hole_radius_m, pitch_m, lattice,
                                        backplate_thickness_m, layers, accuracy, air_height_m,
                                        mesh_scale)
    check_cell_inputs(gap_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m, accuracy,
                      model)
    if air_height_m is not None:
        _check.positive("air_height_m", air_height_m)
    if mesh_scale is not None:
        _check.positive("mesh_scale", mesh_scale)
    start = time.perf_counter()
    geo, area = _scaled_cell(gap_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m,
                             air_height_m, model)
    if model == "3d":
        area /= 12.0 if lattice == "hex" else 8.0  # the wedge is 1/12 (hex) or 1/8 (square)
    levels, solution = [], None
    scales = _LEVELS[model][accuracy] if mesh_scale is None else (2 * mesh_scale, mesh_scale)
    for s in scales:
        basis, u, energy = _solve_level(geo, lattice, s, model)
        levels.append((int(basis.N), energy / area))
        solution = (basis, u)
    pf = levels[-1][1]
    rel = relative_error(levels[0][1], pf, CORNER_ORDER)
    _log.debug("cell %s %s g=%.3g m: levels %s", model, lattice, gap_m, levels)
    return CellResult(
        capacitance_density_f_per_m2=EPSILON_0_F_PER_M / gap_m * pf, rel_error=rel,
        perforation_factor=pf,
        open_area_fraction=open_area_fraction(hole_radius_m, pitch_m, lattice),
        dofs=levels[-1][0], gap_m=gap_m,
        cell_area_m2=float("nan") if lattice == "none" else cell_area_m2(pitch_m, lattice),
        model=model, lattice=lattice, levels=tuple(levels),
        runtime_s=time.perf_counter() - start, _solution=solution)


def lattice_summary(gap_m: float, hole_radius_m: float, pitch_m: float, lattice: str,
                    backplate_thickness_m: float, accuracy: str = "normal") -> dict:
    """Quick evaluation of a hole pattern alone (axisymmetric cell at the given gap).

    Returns a dict with ``perforation_factor``, ``open_area_fraction``,
    ``capacitance_density_f_per_m2``, ``parallel_plate_density_f_per_m2`` (ε0/g),
    ``capacitance_loss_fraction`` (1 − perforation factor), ``rel_error``,
    ``hole_density_per_m2``, ``cell_area_m2``, ``dofs`` and ``runtime_s``.
    """
    res = cell_capacitance(gap_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m,
                           accuracy)
    return {
        "lattice": lattice,
        "gap_m": gap_m,
        "hole_radius_m": hole_radius_m,
        "pitch_m": pitch_m,
        "backplate_thickness_m": backplate_thickness_m,
        "perforation_factor": res.perforation_factor,
        "open_area_fraction": res.open_area_fraction,
        "capacitance_density_f_per_m2": res.capacitance_density_f_per_m2,
        "parallel_plate_density_f_per_m2": EPSILON_0_F_PER_M / gap_m,
        "capacitance_loss_fraction": 1.0 - res.perforation_factor,
        "rel_error": res.rel_error,
        "hole_density_per_m2": 0.0 if lattice == "none" else 1.0 / res.cell_area_m2,
        "cell_area_m2": res.cell_area_m2,
        "dofs": res.dofs,
        "runtime_s": res.runtime_s,
    }
