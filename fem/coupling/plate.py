"""Pull-in and the bias point of the finite-element diaphragm (Argyris plate) under an electrode.

Builds the :class:`diagap.fem.coupling.branch.CouplingSystem` of an assembled plate (:mod:`diagap.fem.plate.system`) on
a mesh that embeds the electrode edge (so no element straddles it and the electrode integrals are
exact up to quadrature), then traces the equilibrium branch (see :mod:`diagap.fem.coupling.branch` for the
equations and the method). Two mesh levels give Richardson-style error estimates of the pull-in
voltage, the centre deflection at pull-in and at bias, and the softened resonance.

Electrostatic pressure: p_e = ½V²·(−dc/dĝ)(g − w) on the electrode, from the cell capacitance
density c(ĝ) (F/m²) of the perforated backplate; outside the electrode no force. The fringing field
at the electrode rim (a line force of relative size ~g/a) is left out of the force.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from diagap.fem.coupling.branch import (Branch, CouplingSystem, ElectrostaticLoad,
                                        EquilibriumPoint, center_compliance,
                                        equilibrium_at_voltage, softened_modes, trace_branch)

__all__ = ["coupling_system", "CoupledResult", "solve_coupled", "load_from_density", "plate_levels"]


def coupling_system(plate, shape: str, electrode_size_m: float) -> CouplingSystem:
    """The coupling view of an assembled Argyris plate system ``plate``.

    ``electrode_size_m`` is the electrode radius (circle) or side (square). Quadrature points whose
    element centroid lies inside the electrode carry the electrostatic load. Made once per plate
    and electrode (kept with the plate, with the plate's stiffness factorisation), so every stage
    that couples the same plate shares its solvers.
    """
    key = ("coupling", shape, float(electrode_size_m))
    cache = getattr(plate, "_cache", None)
    if cache is not None and key in cache:
        return cache[key]
    cs = _coupling_system(plate, shape, electrode_size_m)
    if cache is not None:
        cache[key] = cs
    return cs


def _coupling_system(plate, shape: str, electrode_size_m: float) -> CouplingSystem:
    basis = plate.basis
    L = plate.length_m
    mesh = basis.mesh
    cent = mesh.p[:, mesh.t].mean(axis=1)
    inner = electrode_size_m / L if shape == "circle" else 0.5 * electrode_size_m / L
    inside = (np.hypot(cent[0], cent[1]) if shape == "circle" else np.abs(cent).max(axis=0)) \
        < inner * (1 + 1e-9)
    elems = np.nonzero(inside)[0]
    nqp = basis.dx.shape[1]
    rows, cols, vals = [], [], []
    dofs = basis.element_dofs  # (21, nelems)
    for i in range(dofs.shape[0]):
        phi = np.asarray(basis.basis[i][0])[elems]  # (ne, nqp)
        r = (np.arange(elems.size)[:, None] * nqp + np.arange(nqp)[None, :])
        rows.append(r.ravel())
        cols.append(np.repeat(dofs[i, elems], nqp))
        vals.append(phi.ravel())
    interp = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                           shape=(elems.size * nqp, basis.N))
    Bq = (interp @ plate.B).tocsr()
    weights = (basis.dx[elems] * L**2).ravel()
    center = plate.point_functional(0.0, 0.0)
    factor = plate.factor() if hasattr(plate, "factor") else None
    return CouplingSystem(K=plate.K, B=Bq, weights=weights, center=center, M=plate.M,
                          stiffness_factor=factor)


def load_from_density(density, gap_m: float) -> ElectrostaticLoad:
    """π(ĝ) = −dc/dĝ from a capacitance-density object with ``slope(g)`` and ``curvature(g)``
    (dc/dĝ and d²c/dĝ²), or parallel plates when ``density`` is None. The same object for the
    same density object (kept while the last few densities are), so that solves of different
    stages on one plate share their solver (:func:`diagap.fem.coupling.corrector.solver_for`)."""
    hit = _LOADS.get(id(density))
    if hit is not None and hit[0] is density:
        return hit[1]
    if density is None:
        load = ElectrostaticLoad.parallel_plate()
    else:
        load = ElectrostaticLoad(lambda g: -density.slope(g), lambda g: -density.curvature(g),
                                 min_gap_m=0.0)
    _LOADS[id(density)] = (density, load)
    while len(_LOADS) > 8:
        _LOADS.pop(next(iter(_LOADS)))
    return load


_LOADS: dict = {}  # id(density) -> (density, load), oldest first


@dataclass(frozen=True)
class CoupledResult:
    """Pull-in and bias point of the diaphragm, with relative error estimates (two mesh levels)."""

    pull_in_voltage_v: float
    pull_in_center_deflection_m: float
    bias_voltage_v: float
    collapsed: bool
    bias_center_deflection_m: float | None
    resonance_at_bias_hz: float | None
    resonance_no_bias_hz: float | None
    center_compliance_at_bias_m_per_pa: float | None
    center_compliance_no_bias_m_per_pa: float | None
    branch: tuple = field(default=(), repr=False)  # (w0_m, V) pairs of the finest branch
    uncertainty: dict = field(default_factory=dict)

    @property
    def bias_margin(self) -> float:
        return self.bias_voltage_v / self.pull_in_voltage_v

    def to_summary(self) -> dict:
        out = {
            "pull_in_voltage_v": self.pull_in_voltage_v,
            "pull_in_center_deflection_m": self.pull_in_center_deflection_m,
            "bias_voltage_v": self.bias_voltage_v,
            "bias_margin": self.bias_margin,
            "collapsed": self.collapsed,
            "branch": [list(p) for p in self.branch],
        }
        if not self.collapsed:
            out.update({
                "bias_center_deflection_m": self.bias_center_deflection_m,
                "resonance_at_bias_hz": self.resonance_at_bias_hz,
                "center_compliance_at_bias_m_per_pa": self.center_compliance_at_bias_m_per_pa,
                "softening_factor": (self.center_compliance_no_bias_m_per_pa
                                     / self.center_compliance_at_bias_m_per_pa),
            })
        return out


def _level(plate, shape, electrode_size_m, gap_m, load, bias_v, full_newton=False,
           fold_hint=None):
    cs = coupling_system(plate, shape, electrode_size_m)
    br = trace_branch(cs, load, gap_m, full_newton=full_newton, fold_hint=fold_hint)
    f_p = plate.load_vector(1.0)
    out = {"v_pi": br.pull_in_voltage_v, "w_pi": br.pull_in_center_deflection_m, "branch": br}
    zero = EquilibriumPoint(0.0, 0.0, np.zeros(cs.K.shape[0]), 1.0)
    out["f0"] = float(softened_modes(cs, load, gap_m, zero)[0])
    out["c0"] = center_compliance(cs, load, gap_m, zero, f_p)
    if bias_v < br.pull_in_voltage_v:
        pt = equilibrium_at_voltage(cs, load, gap_m, bias_v, br, full_newton=full_newton)
        out["w_b"] = pt.center_deflection_m
        out["f_b"] = float(softened_modes(cs, load, gap_m, pt)[0])
        out["c_b"] = center_compliance(cs, load, gap_m, pt, f_p)
    return out


#: mesh family used for the coupling at each accuracy setting: global coupled quantities converge
#: like the plate's global quantities (error ~3e-4 on the draft family, ~8e-5 on normal for the
#: demo), so the coupled solve runs one family coarser than the linear mechanics.
COUPLING_MESHES = {"draft": "draft", "normal": "draft", "fine": "normal"}


def plate_levels(problem, accuracy: str, electrode_size_m: float):
    """Assembled plate systems of the accuracy setting's mesh levels (coarse first), each mesh
    embedding the electrode edge. Returns (systems, size ratio between levels). The systems are
    shared within the process (:mod:`diagap.fem.plate.shared`): treat them as read-only."""
    from diagap.meshes.diaphragm import disk_mesh, square_mesh

    from diagap.fem.levels import RATIO, mesh_sizes
    from diagap.fem.plate.shared import shared_plate
    from diagap.fem.plate.solver import _layer_width, assemble_plate

    L = problem.length_scale_m
    inner = electrode_size_m / L if problem.shape == "circle" else 0.5 * electrode_size_m / L
    inner = None if inner >= 1.0 - 1e-9 else inner
    make = disk_mesh if problem.shape == "circle" else square_mesh
    sizes = mesh_sizes(problem.shape, accuracy, _layer_width(problem))
    def build(s):
        return lambda: assemble_plate(problem, make(s.h_center, s.h_edge, s.grading, inner=inner))

    systems = [shared_plate(problem, s, inner, build(s)) for s in sizes]
    return systems, RATIO


def solve_coupled(problem, accuracy: str, electrode_size_m: float, gap_m: float,
                  bias_voltage_v: float, density=None, *, full_newton: bool = False
                  ) -> CoupledResult:
    """Pull-in and the bias point of the diaphragm ``problem`` (a :class:`diagap.fem.plate.solver.PlateProblem`)
    on the mesh levels of ``accuracy``; ``density`` is the capacitance density of the gap (None:
    solid parallel plates). The meshes are those of ``COUPLING_MESHES[accuracy]``. Values are the
    finest level's; the error estimates compare the two finest levels (Richardson with order 2,
    the disk's boundary order, plus a floor of 2e-5). The finer level's fold search starts from
    the coarser level's fold. ``full_newton``: Newton–Raphson with a fresh tangent at every
    iterate and Brent's method for the fold (the reference for the default chord iteration)."""
    from threadpoolctl import threadpool_limits

    from diagap.fem.levels import NOISE_FLOOR
    from diagap.fem.richardson import relative_error

    plates, ratio = plate_levels(problem, COUPLING_MESHES.get(accuracy, accuracy), electrode_size_m)
    load = load_from_density(density, gap_m)
    levels, hint = [], None
    with threadpool_limits(limits=1):  # small dense kernels: threads only add contention
        for p in plates[-2:]:
            levels.append(_level(p, problem.shape, electrode_size_m, gap_m, load,
                                 bias_voltage_v, full_newton, hint))
            br = levels[-1]["branch"]
            hint = (br.pull_in_center_deflection_m, br.fold_curvature_v2_per_m2)
    fine, coarse = levels[-1], levels[-2]
    collapsed = "w_b" not in fine

    def est(key):
        return relative_error(coarse[key], fine[key], 2.0, ratio, floor=NOISE_FLOOR)

    unc = {"pull_in_voltage_v": est("v_pi"), "pull_in_center_deflection_m": est("w_pi")}
    if not collapsed and "w_b" in coarse:
        unc["bias_center_deflection_m"] = est("w_b")
        unc["resonance_at_bias_hz"] = est("f_b")
        unc["center_compliance_at_bias_m_per_pa"] = est("c_b")
    br: Branch = fine["branch"]
    return CoupledResult(
        pull_in_voltage_v=fine["v_pi"], pull_in_center_deflection_m=fine["w_pi"],
        bias_voltage_v=bias_voltage_v, collapsed=collapsed,
        bias_center_deflection_m=fine.get("w_b"), resonance_at_bias_hz=fine.get("f_b"),
        resonance_no_bias_hz=fine["f0"], center_compliance_at_bias_m_per_pa=fine.get("c_b"),
        center_compliance_no_bias_m_per_pa=fine["c0"],
        branch=_with_bias_point(br, fine.get("w_b"), bias_voltage_v), uncertainty=unc)


def _with_bias_point(br: Branch, w_b, v_b) -> tuple:
    """(w0, V) pairs of the branch, with the bias equilibrium inserted in order."""
    pts = list(zip(br.deflections().tolist(), br.voltages().tolist()))
    if w_b is not None:
        pts.append((float(w_b), float(v_b)))
        pts.sort()
    return tuple(pts)
