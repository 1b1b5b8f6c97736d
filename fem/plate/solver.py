"""Static and modal response of the diaphragm: Kirchhoff plate with in-plane tension.

Equation (SI): D∇⁴w − T∇²w = p on the diaphragm, D = Eh³/(12(1−ν²)) (N·m), T = σ0·h (N/m,
tensile positive), p in Pa; free vibration D∇⁴w − T∇²w = ρ_s ω² w, ρ_s = ρh (kg/m²). Shapes: a
disk of radius a or a square of side a; edges clamped (w = ∂w/∂n = 0) or simply supported
(w = 0, zero edge moment). Weak form, edge conditions and scaling: :mod:`diagap.fem.plate.system`,
:mod:`diagap.fem.plate.bc`; the Argyris C¹ quintic element: :mod:`diagap.fem.plate.argyris`.

Model choice. When the tension dominates, τ = T L²/D > ``MEMBRANE_TAU`` (L radius or half-side),
the bending boundary layer ℓ = √(D/T) is thinner than 1/√τ of L and the diaphragm is solved as a
membrane (:mod:`diagap.fem.plate.membrane`), with the clamped edge's layer folded into a domain shrunk by ℓ.

Every quantity is computed on two or more meshes (:mod:`diagap.fem.levels`) and reported for the finest
one with a Richardson estimate of its relative discretisation error (plus, for the membrane, the
model error of the asymptotic boundary-layer treatment).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Union

import numpy as np

from diagap.fem.levels import ACCURACIES, ORDER, MeshSize, mesh_sizes, richardson
from diagap.fem.plate.bc import EDGES, SHAPES
from diagap.fem.plate.system import PlateSystem, build_plate_system
from diagap.fem.validate import Checks

__all__ = ["PlateProblem", "PlateResult", "PlateInputError", "BucklingError", "solve_plate",
           "assemble_plate", "MEMBRANE_TAU"]

#: τ = T L²/D above which the membrane model is used (its model error ≈ 2/τ for a clamped edge,
#: i.e. ≤ 2e-4 here, the next term of the boundary-layer expansion; checked in the tests
#: against the exact Bessel solution of the plate with tension)
MEMBRANE_TAU = 1.0e4


class PlateInputError(ValueError):
    """A diaphragm parameter outside its allowed range."""


class BucklingError(PlateInputError):
    """The compressive residual stress exceeds the buckling stress (K not positive definite)."""


_check = Checks(PlateInputError)


@dataclass(frozen=True)
class PlateProblem:
    """A diaphragm: geometry, material, residual stress and edge condition (SI units).

    Parameters
    ----------
    shape : "circle" | "square"
    size_m : radius (circle) or side (square), m
    youngs_modulus_pa : E, Pa;  poisson_ratio : ν (−1 < ν < 0.5)
    thickness_m : h, m;  density_kg_m3 : ρ, kg/m³
    residual_stress_pa : σ0, Pa, tensile positive (compressive allowed below buckling)
    edge : "clamped" | "simply-supported"
    """

    shape: str
    size_m: float
    youngs_modulus_pa: float
    poisson_ratio: float
    thickness_m: float
    density_kg_m3: float
    residual_stress_pa: float
    edge: str = "clamped"

    def __post_init__(self):
        _check.choice("shape", self.shape, SHAPES)
        _check.choice("edge", self.edge, EDGES)
        for name in ("size_m", "youngs_modulus_pa", "thickness_m", "density_kg_m3"):
            _check.positive(name, getattr(self, name))
        _check.in_range("poisson_ratio", self.poisson_ratio, -1.0, 0.5, closed=False)
        _check.number("residual_stress_pa", self.residual_stress_pa)

    @property
    def bending_stiffness(self) -> float:
        """D = Eh³/(12(1−ν²)), N·m."""
        nu = self.poisson_ratio
        return self.youngs_modulus_pa * self.thickness_m**3 / (12.0 * (1.0 - nu * nu))

    @property
    def tension_n_per_m(self) -> float:
        """T = σ0·h, N/m."""
        return self.residual_stress_pa * self.thickness_m

    @property
    def areal_density(self) -> float:
        """ρ_s = ρh, kg/m²."""
        return self.density_kg_m3 * self.thickness_m

    @property
    def length_scale_m(self) -> float:
        """L, the solver's length unit: the radius, or half the side of a square (m)."""
        return self.size_m if self.shape == "circle" else 0.5 * self.size_m

    @property
    def tension_ratio(self) -> float:
        """τ = T L²/D (dimensionless; negative in compression)."""
        return self.tension_n_per_m * self.length_scale_m**2 / self.bending_stiffness

    @property
    def model(self) -> str:
        """"membrane" when τ > MEMBRANE_TAU, else "plate"."""
        return "membrane" if self.tension_ratio > MEMBRANE_TAU else "plate"

    def inside(self, x_m: np.ndarray, y_m: np.ndarray, margin_m: float = 0.0) -> np.ndarray:
        """Mask of points on the diaphragm (shrunk by ``margin_m``)."""
        x, y = np.asarray(x_m, dtype=float), np.asarray(y_m, dtype=float)
        if self.shape == "circle":
            return np.hypot(x, y) <= self.size_m - margin_m + 1e-12 * self.size_m
        half = 0.5 * self.size_m - margin_m + 1e-12 * self.size_m
        return (np.abs(x) <= half) & (np.abs(y) <= half)


QUANTITIES = ("center_compliance_m_per_pa", "volume_compliance_m3_per_pa",
              "effective_mass_kg", "effective_stiffness_n_per_m", "effective_area_m2",
              "static_shape_mass_kg", "static_shape_stiffness_n_per_m", "static_shape_area_m2")


@dataclass(frozen=True)
class _Level:
    """Everything computed on one mesh."""

    system: object
    static: np.ndarray       # constrained coefficients of w per pascal
    modes: np.ndarray        # columns: mode shapes (mode 1: φ(centre) = 1; others max|φ| = 1)
    values: dict             # QUANTITIES -> float
    frequencies_hz: np.ndarray


@dataclass(frozen=True)
class PlateResult:
    """Diaphragm response on the finest mesh of an accuracy setting, with error estimates.

    Lumped quantities refer to the centre displacement with the mode-1 shape φ(centre) = 1:
    m_eff = ∫ρ_s φ² dA, k_eff = ω₁² m_eff, A_eff = ∫φ dA; ``static_shape_*`` are the same
    Rayleigh–Ritz quantities for the static deflection shape φ_s = w/w(0) under uniform pressure
    (k_s = φ_sᵀKφ_s = A_s/c0, so A_s/k_s is the exact centre compliance c0). ``uncertainty`` holds the estimated
    relative error of each quantity (key ``natural_frequencies_hz`` is the largest over the
    modes, ``natural_frequency_<i>_hz`` per mode). Mode indices are 1-based and count
    degenerate modes (e.g. the two (1,0) modes of a disk) separately.
    """

    center_compliance_m_per_pa: float
    volume_compliance_m3_per_pa: float
    natural_frequencies_hz: tuple
    effective_mass_kg: float
    effective_stiffness_n_per_m: float
    effective_area_m2: float
    static_shape_mass_kg: float
    static_shape_stiffness_n_per_m: float
    static_shape_area_m2: float
    uncertainty: dict
    model: str
    accuracy: str
    mesh_dofs: tuple
    problem: PlateProblem = field(repr=False)
    _finest: _Level = field(repr=False, compare=False)

    @property
    def system(self):
        """The assembled system of the finest level (:class:`~diagap.fem.plate.system.PlateSystem` or
        :class:`~diagap.fem.plate.membrane.MembraneSystem`)."""
        return self._finest.system

    @property
    def distinct_frequencies_hz(self) -> tuple:
        """Natural frequencies with degenerate pairs merged (relative spacing < 1e-4)."""
        out = []
        for f in self.natural_frequencies_hz:
            if not out or f > out[-1] * (1 + 1e-4):
                out.append(f)
        return tuple(out)

    def _field(self, q: np.ndarray, x_m, y_m) -> np.ndarray:
        sys = self._finest.system
        margin = getattr(sys, "edge_shrink_m", 0.0)
        x, y = np.asarray(x_m, dtype=float), np.asarray(y_m, dtype=float)
        inside = self.problem.inside(x, y, margin)
        out = np.zeros(np.broadcast(x, y).shape)
        xb, yb = np.broadcast_arrays(x, y)
        out[inside] = sys.evaluate(q, xb[inside], yb[inside])
        return out

    def static_shape(self, x_m, y_m) -> np.ndarray:
        """Static deflection shape at SI points, normalised to 1 at the centre (0 outside)."""
        return self._field(self._finest.static, x_m, y_m) / self.center_compliance_m_per_pa

    def static_deflection_m_per_pa(self, x_m, y_m) -> np.ndarray:
        """Static deflection per pascal (m/Pa) at SI points (0 outside)."""
        return self._field(self._finest.static, x_m, y_m)

    def mode_shape(self, i: int, x_m, y_m) -> np.ndarray:
        """Mode ``i`` (1-based) at SI points: mode 1 is 1 at the centre, others max |φ| = 1."""
        n = self._finest.modes.shape[1]
        if not (1 <= i <= n):
            raise PlateInputError(f"mode index: got {i!r}, allowed 1..{n}")
        return self._field(self._finest.modes[:, i - 1], x_m, y_m)

    def nodal_fields(self):
        """(points_m (N, 2), triangles (3, M), {name: values at the points}) for VTK export.

        Names: ``deflection_m_per_pa`` and ``mode_<i>`` (normalised as in :meth:`mode_shape`).
        """
        sys = self._finest.system
        fields = {"deflection_m_per_pa": sys.vertex_values(self._finest.static)}
        for i in range(self._finest.modes.shape[1]):
            fields[f"mode_{i + 1}"] = sys.vertex_values(self._finest.modes[:, i])
        return sys.vertex_points_m(), sys.vertex_triangles(), fields

    def to_summary(self) -> dict:
        """The ``mechanics`` block of summary.json (keys carry their units).

        The error estimates are not repeated here: they are :attr:`uncertainty`, which the
        caller files under the summary's top-level ``uncertainty``.
        """
        out = {k: float(getattr(self, k)) for k in QUANTITIES}
        out["natural_frequencies_hz"] = [float(f) for f in self.natural_frequencies_hz]
        out["model"] = self.model
        out["accuracy"] = self.accuracy
        out["mesh_dofs"] = list(self.mesh_dofs)
        out["distinct_frequencies_hz"] = [float(f) for f in self.distinct_frequencies_hz]
        return out


MeshLike = Union[str, MeshSize, object]


def _mesh(shape: str, size: MeshSize):
    from diagap.meshes.diaphragm import disk_mesh, square_mesh

    make = disk_mesh if shape == "circle" else square_mesh
    return make(size.h_center, size.h_edge, size.grading)


def _layer_width(problem: PlateProblem) -> float | None:
    """ℓ/L = 1/√τ for tension, None without (or with compressive) stress."""
    tau = problem.tension_ratio
    return 1.0 / math.sqrt(tau) if tau > 1.0 else None


def assemble_plate(problem: PlateProblem, mesh: MeshLike = "normal") -> PlateSystem:
    """Assembled plate system for reuse (e.g. electromechanical coupling).

    Parameters
    ----------
    problem : the diaphragm
    mesh : an accuracy name ("draft" | "normal" | "fine": its finest mesh), a
        :class:`~diagap.fem.levels.MeshSize`, or a scaled ``skfem.MeshTri`` (unit disk or [−1, 1]²)

    Returns
    -------
    PlateSystem
        K (N/m) and M (kg) in SI units over DOFs in scaled coordinates, the constrained basis
        B, load vectors for any pressure field, centre and point evaluation; see
        :class:`diagap.fem.plate.system.PlateSystem`. Always the plate (Argyris) model, also for
        tension-dominated diaphragms. For a mesh given by its sizes (name or ``MeshSize``) the
        system is shared within the process (:mod:`diagap.fem.plate.shared`): treat it as
        read-only.
    """
    if isinstance(mesh, str):
        mesh = mesh_sizes(problem.shape, mesh, _layer_width(problem))[-1]
    if isinstance(mesh, MeshSize):  # one system per (problem, mesh) in a process
        from diagap.fem.plate.shared import shared_plate

        size = mesh
        return shared_plate(problem, size, None,
                            lambda: assemble_plate(problem, _mesh(problem.shape, size)))
    return build_plate_system(mesh, problem.shape, problem.edge, problem.length_scale_m,
                              problem.bending_stiffness, problem.poisson_ratio,
                              problem.tension_n_per_m, problem.areal_density)


def measure(system, problem: PlateProblem, n_modes: int) -> _Level:
    """Static and modal quantities of one assembled system (plate or membrane)."""
    buckled = BucklingError(f"residual_stress_pa: got {problem.residual_stress_pa!r}, beyond "
                            "the buckling stress of this diaphragm (stiffness not positive)")
    try:
        omega2, vecs = system.modes(n_modes)
    except RuntimeError as exc:  # exactly singular factorisation
        raise buckled from exc
    if omega2[0] <= 0:
        raise buckled
    unit = system.load_vector(1.0)
    static = system.solve(unit)
    modes = np.empty_like(vecs)
    for i in range(vecs.shape[1]):
        v = vecs[:, i]
        if i == 0:
            modes[:, i] = v / system.center_deflection(v)
        else:
            samples = np.concatenate([system.vertex_values(v), system.quadrature_values(v).ravel()])
            modes[:, i] = v / np.max(np.abs(samples))
    phi = modes[:, 0]
    m_eff = float(phi @ (system.M @ phi))
    c0 = system.center_deflection(static)
    phi_s = static / c0  # static shape, 1 at the centre (Rayleigh–Ritz: A_s/k_s = c0 exactly)
    a_s = float(unit @ phi_s)
    values = {
        "static_shape_mass_kg": float(phi_s @ (system.M @ phi_s)),
        "static_shape_stiffness_n_per_m": a_s / c0,
        "static_shape_area_m2": a_s,
        "center_compliance_m_per_pa": system.center_deflection(static),
        "volume_compliance_m3_per_pa": float(unit @ static),
        "effective_mass_kg": m_eff,
        "effective_stiffness_n_per_m": float(omega2[0]) * m_eff,
        "effective_area_m2": float(unit @ phi),
    }
    return _Level(system, static, modes, values, np.sqrt(omega2) / (2 * np.pi))


def _uncertainty(levels: list, order: float, extra: float) -> dict:
    coarse, fine = levels[-2], levels[-1]
    out = {k: float(richardson(coarse.values[k], fine.values[k], order)) + extra
           for k in QUANTITIES}
    est = richardson(coarse.frequencies_hz, fine.frequencies_hz, order) + extra
    out["natural_frequencies_hz"] = float(np.max(est))
    for i, e in enumerate(est):
        out[f"natural_frequency_{i + 1}_hz"] = float(e)
    return out


def solve_plate(problem: PlateProblem, accuracy: str = "normal", n_modes: int = 6) -> PlateResult:
    """Static compliance, natural frequencies and lumped mode-1 quantities of a diaphragm.

    Parameters
    ----------
    problem : the diaphragm (SI units)
    accuracy : "draft" | "normal" | "fine" — the mesh levels (:mod:`diagap.fem.levels`)
    n_modes : number of natural frequencies (≥ 1)

    Returns
    -------
    PlateResult
        values on the finest mesh and their relative error estimates.
    """
    _check.choice("accuracy", accuracy, ACCURACIES)
    _check.require(isinstance(n_modes, (int, np.integer)) and n_modes >= 1,
                   f"n_modes = {n_modes!r} must be an integer >= 1")
    if problem.model == "membrane":
        from diagap.fem.plate.membrane import membrane_levels

        levels, order, extra = membrane_levels(problem, accuracy, n_modes, measure)
    else:
        from threadpoolctl import threadpool_limits

        sizes = mesh_sizes(problem.shape, accuracy, _layer_width(problem))
        with threadpool_limits(limits=1):  # small dense kernels: threads only add contention
            levels = [measure(assemble_plate(problem, s), problem, n_modes) for s in sizes]
        order, extra = ORDER[problem.shape], 0.0
    fine = levels[-1]
    return PlateResult(
        natural_frequencies_hz=tuple(float(f) for f in fine.frequencies_hz),
        uncertainty=_uncertainty(levels, order, extra),
        model=problem.model,
        accuracy=accuracy,
        mesh_dofs=tuple(int(lv.system.n_free) for lv in levels),
        problem=problem,
        _finest=fine,
        **fine.values,
    )
