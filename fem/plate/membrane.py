"""Tension-dominated diaphragm: the membrane limit with an edge boundary-layer correction.

Equation (SI): −T∇²w = p, free vibration −T∇²w = ρ_s ω² w, T = σ0·h > 0 (N/m), ρ_s = ρh; w = 0
on the edge. Weak form: ∫ T ∇w·∇v dA = ∫ p v dA for all v in the P2 space vanishing on the edge
(isoparametric ``ElementTriP2`` on a mesh whose boundary nodes lie on the circle).

Bending enters through the edge. For T L²/D = τ ≫ 1 the plate D∇⁴w − T∇²w = p splits into the
membrane solution and an edge layer of width ℓ = √(D/T) decaying as exp(−d/ℓ). A clamped edge
(w = ∂w/∂n = 0) makes the outer solution satisfy w = ℓ ∂w/∂n (n outward) to first order, i.e.
the membrane sits on a domain shrunk by ℓ: the disk of radius a − ℓ or the square of side
a − 2ℓ. The neglected terms are O(1/τ): for the clamped disk the centre deflection of the shrunk
membrane, (a − ℓ)²p/(4T), differs from the exact Bessel solution by ≈ 2/τ relative. A simply
supported edge adds only an O(1/τ) correction: the layer lowers the whole outer solution by
p(1+ν)D/T², i.e. 2(1+ν)/τ of the centre deflection and 4(1+ν)/τ of the volume. Bending in the bulk stiffens
mode i (membrane eigenfunction, ∇²φ = −k²φ, k² = ρ_s ω_m²/T) by the Rayleigh quotient of
D∇⁴: ω² = ω_m² (1 + D k²/T); this first-order correction is applied to the frequencies (the
static membrane solution has ∇⁴w = 0 and needs none). ``model_error`` returns the remaining
O(1/τ) estimate, added to the discretisation estimate.

Scaling: lengths by L_eff (shrunk radius or half-side) so the mesh is the unit disk or [−1, 1]²;
K = T K_1 (N/m), M = ρ_s L_eff² M_1 (kg), f = L_eff² ∫ p φ dξ (N), DOFs are w in metres.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from skfem import CellBasis, ElementTriP2

from diagap.fem.forms import laplace, mass, source
from diagap.fem.levels import ACCURACIES, MeshSize, RATIO
from diagap.fem.locate import TriangleLocator
from diagap.fem.plate.system import spd_factor

__all__ = ["MembraneSystem", "build_membrane_system", "membrane_levels", "model_error",
           "edge_shrink"]

ORDER = 2.0  # lowest order present (P2 energy-norm rate); see the convergence test
_FINEST = {"draft": (MeshSize(0.15, 0.15, 0.3), 2), "normal": (MeshSize(0.08, 0.08, 0.3), 2),
           "fine": (MeshSize(0.05, 0.05, 0.3), 3)}


def edge_shrink(problem) -> float:
    """Inward shift ℓ = √(D/T) (m) of a clamped edge; 0 for a simply supported one."""
    if problem.edge != "clamped":
        return 0.0
    return math.sqrt(problem.bending_stiffness / problem.tension_n_per_m)


def model_error(problem) -> float:
    """Relative model error of the boundary-layer treatment, O(1/τ) (see module docstring)."""
    tau = problem.tension_ratio
    if problem.edge == "clamped":
        return 3.0 / tau
    return 4.0 * (1.0 + problem.poisson_ratio) / tau


@dataclass
class MembraneSystem:
    """Assembled membrane on one mesh; same interface as :class:`diagap.fem.plate.system.PlateSystem`.

    ``length_m`` is L_eff, the shrunk length scale; ``edge_shrink_m`` the shift ℓ of the edge.
    """

    mesh: object
    length_m: float
    edge_shrink_m: float
    basis: CellBasis
    B: sp.csr_matrix
    parts: dict
    tension_n_per_m: float
    areal_density_kg_m2: float
    bending_stiffness_nm: float = 0.0
    _cache: dict = field(default_factory=dict, repr=False)

    @property
    def K(self):
        return (self.tension_n_per_m * self.parts["tension"]).tocsc()

    @property
    def M(self):
        return (self.areal_density_kg_m2 * self.length_m**2 * self.parts["mass"]).tocsc()

    @property
    def n_free(self) -> int:
        return self.B.shape[1]

    def factor(self):
        if "lu" not in self._cache:
            self._cache["lu"] = spd_factor(self.K)
        return self._cache["lu"]

    def solve(self, f):
        return self.factor().solve(np.asarray(f, dtype=float))

    def full(self, q):
        return self.B @ q

    def quadrature_values(self, q) -> np.ndarray:
        """w (m) at the quadrature points, shape (n_elements, n_quadrature)."""
        return np.asarray(self.basis.interpolate(self.full(q)))

    def quadrature_points_m(self):
        x = np.asarray(self.basis.global_coordinates())
        return x[0] * self.length_m, x[1] * self.length_m

    def load_vector(self, pressure) -> np.ndarray:
        """Bᵀ L_eff² ∫ p φ dξ (N); ``pressure`` float, callable p(x_m, y_m) or quadrature values."""
        if callable(pressure):
            pressure = pressure(*self.quadrature_points_m())
        p = np.broadcast_to(np.asarray(pressure, dtype=float), self.basis.dx.shape)
        return self.length_m**2 * (self.B.T @ source.assemble(self.basis, f=p))

    def _vertices(self):
        return self.basis.doflocs[:, self.basis.nodal_dofs[0]]

    def vertex_points_m(self):
        return self._vertices().T * self.length_m

    def vertex_triangles(self):
        return np.asarray(self.mesh.t)

    def vertex_values(self, q):
        return self.full(q)[self.basis.nodal_dofs[0]]

    def evaluate(self, q, x_m, y_m):
        """w (m) at SI points: P2 on the straight triangle of each point (extrapolated past the
        polygon, the curved-edge sliver)."""
        if "loc" not in self._cache:
            self._cache["loc"] = TriangleLocator(self._vertices(), self.mesh.t)
        loc = self._cache["loc"]
        x = np.ravel(x_m) / self.length_m
        y = np.ravel(y_m) / self.length_m
        e = loc.find(x, y)
        lam = loc.barycentric(x, y, e)
        shape = np.vstack([lam * (2 * lam - 1), 4 * lam[0] * lam[1], 4 * lam[1] * lam[2],
                           4 * lam[0] * lam[2]])
        u = self.full(q)[self.basis.element_dofs[:, e]]
        return np.sum(shape * u, axis=0).reshape(np.shape(x_m))

    def center_deflection(self, q) -> float:
        return float(self.evaluate(q, np.zeros(1), np.zeros(1))[0])

    def modes(self, n: int):
        """Lowest ``n`` (ω², Φ): eigenpairs of K φ = ω_m² M φ, with ω² = ω_m²(1 + D k²/T)
        corrected for bulk bending (k² = ρ_s ω_m²/T)."""
        op = spla.LinearOperator(self.K.shape, matvec=self.factor().solve, dtype=float)
        lam, vec = spla.eigsh(self.K, k=min(n, self.n_free - 2), M=self.M, sigma=0.0, OPinv=op,
                              which="LM", v0=np.ones(self.n_free))
        order = np.argsort(lam)
        lam = lam[order]
        T = self.tension_n_per_m
        lam = lam * (1.0 + self.bending_stiffness_nm * self.areal_density_kg_m2 * lam / T**2)
        return lam, vec[:, order]


def _mesh(shape: str, size: MeshSize):
    from diagap.meshes.curved import curved_disk_mesh, quadratic_square_mesh

    make = curved_disk_mesh if shape == "circle" else quadratic_square_mesh
    return make(size.h_center, size.h_edge, size.grading)


def build_membrane_system(problem, mesh) -> MembraneSystem:
    """Assemble the membrane of ``problem`` (a :class:`diagap.fem.plate.solver.PlateProblem`) on a scaled
    quadratic mesh (unit disk or [−1, 1]²)."""
    shrink = edge_shrink(problem)
    basis = CellBasis(mesh, ElementTriP2(), intorder=4)
    interior = basis.complement_dofs(basis.get_dofs())
    B = sp.csr_matrix((np.ones(interior.size), (interior, np.arange(interior.size))),
                      shape=(basis.N, interior.size))
    Bt = B.T.tocsr()
    parts = {"tension": (Bt @ laplace.assemble(basis) @ B).tocsr(),
             "mass": (Bt @ mass.assemble(basis) @ B).tocsr()}
    return MembraneSystem(mesh, problem.length_scale_m - shrink, shrink, basis, B, parts,
                          problem.tension_n_per_m, problem.areal_density,
                          problem.bending_stiffness)


def membrane_levels(problem, accuracy: str, n_modes: int, measure):
    """Measured levels (coarsest first), Richardson order and model error for the membrane."""
    finest, count = _FINEST[accuracy] if accuracy in ACCURACIES else _FINEST["normal"]
    sizes = [finest.scaled(RATIO**k) for k in range(count - 1, -1, -1)]
    levels = [measure(build_membrane_system(problem, _mesh(problem.shape, s)), problem, n_modes)
              for s in sizes]
    return levels, ORDER, model_error(problem)
