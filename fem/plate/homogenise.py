"""Effective plate properties of a perforated plate: FE homogenisation of the hole-lattice cell.

A plate of thickness h, isotropic material (E, ν, ρ), perforated by through holes of radius r on
a square or hexagonal (triangular) lattice of pitch P, is replaced on scales ≫ P by a homogeneous
plate with the effective constitutive laws (Voigt notation, engineering shear)

    N = A* ε̄,    A* = h E c*     (membrane: N in N/m, ε̄ = [ε_xx, ε_yy, 2ε_xy])
    M = D* κ̄,    D* = (E h³/12) d*   (bending: M in N·m/m, κ̄ = [w_xx, w_yy, 2w_xy])

and the effective areal density ρ h (1 − φ), φ = open (hole) area fraction. For the solid plate
c* = d* = 1/(1−ν²)·[[1, ν, 0], [ν, 1, 0], [0, 0, (1−ν)/2]].

Cell problems (lengths scaled by P, E = 1). The macroscopic field is imposed as an affine
(membrane) or quadratic (bending) part plus a periodic fluctuation:

* membrane: u = ε̄·x + ũ, plane stress σ = (1/(1−ν²))[(1−ν)ε + ν tr ε I] on the solid part S of the
  cell, ∫_S σ(u):ε(v) dA = 0 for all admissible fluctuations v, traction-free hole rims;
* bending (Kirchhoff): w = ½ x·κ̄x + w̃, M = (1/(1−ν²))[(1−ν)∇∇w + ν ∇²w I] (per unit h³/12),
  ∫_S M(w):∇∇v dA = 0 for all admissible v, free hole rims (zero moment and Kirchhoff shear are
  the natural conditions). Solved directly as a Kirchhoff unit-cell problem, not through the
  plane-stress/plate-bending analogy: Morley's non-conforming quadratic element (vertex values
  and edge-midpoint normal slopes), which contains every quadratic, so the macroscopic part is
  represented exactly.

Periodicity through symmetry. Both lattices have a rectangular period cell with two mirror
lines (square: the unit square with one hole; hex: the 1 × √3 rectangle with a central hole and
four quarter holes). For the normal states (ε̄_xx, ε̄_yy; κ̄_xx, κ̄_yy) the fluctuation is even
(bending) or has the mirror parity of a displacement (membrane) about both lines; with the
periodicity this is exactly: ũ·n = 0 on the cell faces (tangential traction free), and
∂w̃/∂n = 0 on the faces (Kirchhoff shear free). For the shear/twist states (ε̄_xy; κ̄_xy) the
parities flip: ũ·t = 0 on the faces, and w̃ = 0 on the faces. These are the periodic cell
problems restricted to the symmetric solutions, which the unique solutions are.

Effective constants are the cell averages ⟨σ⟩ = (1/|cell|) ∫_S σ dA per unit macroscopic strain
(and ⟨M⟩ per unit curvature). Elements: P2 vector Lagrange (membrane), Morley (bending); the
hole rims are polygons, so both converge as O(h²) in the averages (the boundary-approximation
error; observed: membrane 2, bending between 0.6 and 2 with mesh noise of ~1e-4), and the error
estimate of each constant is Richardson's between two meshes h and h/2
(:mod:`diagap.fem.richardson`; order 2 for membrane, :data:`BENDING_ORDER` for bending). With
no holes the fluctuation is zero and the solid plate is returned exactly (up to round-off).

Isotropic equivalent. Hex lattices are in-plane isotropic (c*₆₆ = (c*₁₁ − c*₁₂)/2, checked in the
tests). Square lattices are not; for an isotropic (axisymmetric) plate model the orientation
average of the stiffness tensor is used: the bulk part K = (Q₁₁ + Q₁₂)/2 is invariant, the shear
part is averaged, μ = ½[Q₆₆ + (Q₁₁ − Q₁₂)/2]; Q₁₁ᵢₛₒ = K + μ, Q₁₂ᵢₛₒ = K − μ. The anisotropy is
reported as the ratio of the directional stiffness at 45° to that at 0°,
Q₁₁(45°)/Q₁₁ = [Q₁₁ − (Q₁₁ − Q₁₂ − 2Q₆₆)/2]/Q₁₁ (1 for an isotropic tensor).

Residual stress. A deposited film carries an isotropic misfit strain ε₀; the solid film on a
rigid frame has σ₀ = E ε₀/(1 − ν). The perforated film has the membrane resultant
N = (A*₁₁ + A*₁₂) ε₀, i.e. N = σ₀ h · (c*₁₁ + c*₁₂)/(c₁₁ + c₁₂): the residual tension scales with
the biaxial (bulk) stiffness ratio :attr:`HomogenisedPlate.tension_ratio`.

Validity: Kirchhoff cell theory needs h small against the ligament width P − 2r; for thicker
plates the true bending stiffness lies between this and the plane-stress value (shear
deformation of the ligaments), which is stated as a model limit, not estimated.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from skfem import (Basis, BilinearForm, ElementTriMorley, ElementTriP2, ElementVector, condense,
                   solve)
from skfem.helpers import dd, ddot, sym_grad, trace

from diagap.fem.richardson import relative_error

__all__ = ["HomogenisedPlate", "homogenise", "solid_constants", "cell_constants",
           "HomogeniseInputError", "isotropic_part", "ACCURACY_H"]

#: target element size (units of min(pitch, 2·ligament, 4·hole radius)) of the finer cell mesh;
#: the coarser mesh has twice the size
ACCURACY_H = {"draft": 1 / 5, "normal": 1 / 8, "fine": 1 / 12}
_TOL = 1e-9
#: order used in the Richardson estimate of the bending constants: the Morley averages on
#: unstructured meshes with polygonal free hole rims converge non-monotonically at observed rates
#: between about 0.6 and 2, so the estimate takes order 1 (conservative); membrane: order 2
BENDING_ORDER = 1.0


class HomogeniseInputError(ValueError):
    """A lattice parameter outside its allowed range."""


def solid_constants(nu: float) -> np.ndarray:
    """c = d of the solid plate, 1/(1−ν²)·[[1, ν, 0], [ν, 1, 0], [0, 0, (1−ν)/2]] (E = 1)."""
    return np.array([[1.0, nu, 0.0], [nu, 1.0, 0.0], [0.0, 0.0, 0.5 * (1.0 - nu)]]) / (1 - nu**2)


def isotropic_part(Q: np.ndarray) -> tuple[float, float, float]:
    """(Q₁₁ᵢₛₒ, ν_eq = Q₁₂ᵢₛₒ/Q₁₁ᵢₛₒ, anisotropy Q₁₁(45°)/Q₁₁(0°)) of a tensor with square
    symmetry (see the module docstring)."""
    k = 0.5 * (Q[0, 0] + Q[0, 1])
    mu = 0.5 * (Q[2, 2] + 0.5 * (Q[0, 0] - Q[0, 1]))
    q45 = Q[0, 0] - 0.5 * (Q[0, 0] - Q[0, 1] - 2 * Q[2, 2])
    return k + mu, (k - mu) / (k + mu), q45 / Q[0, 0]


@BilinearForm
def _plane_stress(u, v, w):
    eu, ev = sym_grad(u), sym_grad(v)
    return ((1 - w.nu) * ddot(eu, ev) + w.nu * trace(eu) * trace(ev)) / (1 - w.nu**2)


@BilinearForm
def _bending(u, v, w):
    hu, hv = dd(u), dd(v)
    return ((1 - w.nu) * ddot(hu, hv) + w.nu * trace(hu) * trace(hv)) / (1 - w.nu**2)


def _avg(basis, field, which, nu, area):
    """Cell average of stress (``which`` = "membrane") or moment (``"bending"``) components."""
    t = sym_grad(field) if which == "membrane" else dd(field)
    tr = t[0][0] + t[1][1]
    s = [((1 - nu) * t[0][0] + nu * tr) / (1 - nu**2), ((1 - nu) * t[1][1] + nu * tr) / (1 - nu**2),
         (1 - nu) * t[0][1] / (1 - nu**2)]
    return np.array([_integrate(basis, c) for c in s]) / area


def _integrate(basis, values) -> float:
    return float(np.sum(values * basis.dx))


def _faces(X, Y):
    return (lambda x: np.abs(np.abs(x[0]) - X) < _TOL,
            lambda x: np.abs(np.abs(x[1]) - Y) < _TOL)


def _membrane(mesh, nu, X, Y):
    basis = Basis(mesh, ElementVector(ElementTriP2()), intorder=4)
    K = _plane_stress.assemble(basis, nu=nu)
    ix, iy = basis.split_indices()
    xl = basis.doflocs
    on_x, on_y = _faces(X, Y)
    fx, fy = basis.get_dofs(on_x), basis.get_dofs(on_y)
    normal = np.union1d(fx.all(["u^1"]), fy.all(["u^2"]))
    shear = np.union1d(fx.all(["u^2"]), fy.all(["u^1"]))
    area = 4 * X * Y
    C = np.zeros((3, 3))
    for j, (e, fixed) in enumerate((((1, 0, 0), normal), ((0, 1, 0), normal),
                                    ((0, 0, 1), shear))):
        exx, eyy, gxy = e
        um = np.zeros(basis.N)
        um[ix] = exx * xl[0, ix] + 0.5 * gxy * xl[1, ix]
        um[iy] = eyy * xl[1, iy] + 0.5 * gxy * xl[0, iy]
        ut = solve(*condense(K, -K @ um, D=fixed))
        u = basis.interpolate(um + ut)
        C[:, j] = _avg(basis, u, "membrane", nu, area)
    return C, basis.N


def _bending_cell(mesh, nu, X, Y):
    basis = Basis(mesh, ElementTriMorley(), intorder=4)
    K = _bending.assemble(basis, nu=nu)
    on_x, on_y = _faces(X, Y)
    slopes = np.union1d(basis.get_dofs(on_x).all(["u_n"]), basis.get_dofs(on_y).all(["u_n"]))
    values = np.union1d(basis.get_dofs(on_x).all(["u"]), basis.get_dofs(on_y).all(["u"]))
    pin = basis.nodal_dofs[0][[np.argmin(np.hypot(*mesh.p))]]  # fixes the free translation
    area = 4 * X * Y
    D = np.zeros((3, 3))
    for j, (q, fixed) in enumerate(((lambda x: 0.5 * x[0]**2, np.union1d(slopes, pin)),
                                    (lambda x: 0.5 * x[1]**2, np.union1d(slopes, pin)),
                                    (lambda x: 0.5 * x[0] * x[1], values))):
        wm = basis.project(q)
        wt = solve(*condense(K, -K @ wm, D=fixed))
        D[:, j] = _avg(basis, basis.interpolate(wm + wt), "bending", nu, area)
    return D, basis.N


def cell_constants(lattice: str, hole_ratio: float, nu: float, h: float):
    """(c*, d*, dofs) on one cell mesh of size ``h`` (pitch 1): dimensionless 3×3 membrane and
    bending constants (see the module docstring), ``hole_ratio`` = r/P."""
    from diagap.meshes.lattice import cell_half_sides, lattice_cell_mesh

    X, Y = cell_half_sides(lattice)
    mesh = lattice_cell_mesh(lattice, hole_ratio, h)
    C, n1 = _membrane(mesh, nu, X, Y)
    D, n2 = _bending_cell(mesh, nu, X, Y)
    return C, D, (n1, n2)


def open_fraction(lattice: str, hole_ratio: float) -> float:
    """φ = hole area / cell area: π(r/P)² (square), 2π(r/P)²/√3 (hex)."""
    return math.pi * hole_ratio**2 * (1.0 if lattice == "square" else 2.0 / math.sqrt(3.0))


@dataclass(frozen=True)
class HomogenisedPlate:
    """Effective properties of a perforated plate (SI) with relative error estimates.

    ``membrane`` (3×3, N/m) and ``bending`` (3×3, N·m) are A* and D* in Voigt form;
    ``bending_stiffness_nm`` and ``bending_poisson_ratio`` the isotropic equivalent D_eq, ν_eq;
    ``tension_ratio`` N/(σ₀h); ``areal_density_kg_m2`` ρh(1 − φ); ``anisotropy`` the 45°/0°
    directional ratios (bending, membrane), 1 for hex; ``uncertainty`` relative estimates.
    """

    lattice: str
    hole_ratio: float
    open_fraction: float
    thickness_m: float
    youngs_modulus_pa: float
    poisson_ratio: float
    membrane: np.ndarray
    bending: np.ndarray
    bending_stiffness_nm: float
    bending_poisson_ratio: float
    membrane_modulus_ratio: float
    membrane_poisson_ratio: float
    tension_ratio: float
    areal_density_kg_m2: float
    anisotropy: tuple
    uncertainty: dict
    dofs: tuple

    @property
    def equivalent_youngs_modulus_pa(self) -> float:
        """E_eq with E_eq h³/(12(1 − ν_eq²)) = D_eq at the plate's own thickness."""
        nu = self.bending_poisson_ratio
        return 12.0 * self.bending_stiffness_nm * (1 - nu * nu) / self.thickness_m**3

    def to_summary(self) -> dict:
        return {"lattice": self.lattice, "open_fraction": self.open_fraction,
                "bending_stiffness_ratio": self.bending_stiffness_nm / (
                    self.youngs_modulus_pa * self.thickness_m**3
                    / (12 * (1 - self.poisson_ratio**2))),
                "bending_poisson_ratio": self.bending_poisson_ratio,
                "membrane_modulus_ratio": self.membrane_modulus_ratio,
                "membrane_poisson_ratio": self.membrane_poisson_ratio,
                "tension_ratio": self.tension_ratio,
                "bending_anisotropy": self.anisotropy[0],
                "membrane_anisotropy": self.anisotropy[1]}


def _size(hole_ratio: float, accuracy: str) -> float:
    scale = min(1.0, 2 * (1 - 2 * hole_ratio), 4 * hole_ratio) if hole_ratio > 0 else 1.0
    return ACCURACY_H[accuracy] * scale


def homogenise(lattice: str, hole_radius_m: float, pitch_m: float, thickness_m: float,
               youngs_modulus_pa: float, poisson_ratio: float, density_kg_m3: float,
               accuracy: str = "normal") -> HomogenisedPlate:
    """Effective membrane and bending stiffness and density of a perforated plate.

    Parameters
    ----------
    lattice : "square" | "hex";  hole_radius_m : r (m, 0 for no holes);  pitch_m : P (m)
    thickness_m : h (m);  youngs_modulus_pa : E;  poisson_ratio : ν;  density_kg_m3 : ρ
    accuracy : "draft" | "normal" | "fine" — the cell mesh sizes (two levels, ratio 2)
    """
    if lattice not in ("square", "hex"):
        raise HomogeniseInputError(f"lattice: got {lattice!r}, allowed square, hex")
    for name, v in (("pitch_m", pitch_m), ("thickness_m", thickness_m),
                    ("youngs_modulus_pa", youngs_modulus_pa), ("density_kg_m3", density_kg_m3)):
        if not (np.isfinite(v) and v > 0):
            raise HomogeniseInputError(f"{name}: got {v!r}, must be a positive number")
    ratio = hole_radius_m / pitch_m
    if not (0.0 <= ratio < 0.5):
        raise HomogeniseInputError(f"hole_radius_m: got {hole_radius_m!r}, allowed 0 <= r < "
                                   f"pitch/2 = {0.5 * pitch_m!r}")
    if accuracy not in ACCURACY_H:
        raise HomogeniseInputError(f"accuracy: got {accuracy!r}, allowed "
                                   f"{', '.join(ACCURACY_H)}")
    nu = poisson_ratio
    E, h = youngs_modulus_pa, thickness_m
    if ratio == 0.0:  # no holes: the solid plate, exactly
        C = D = solid_constants(nu)
        unc, dofs = {k: 0.0 for k in ("bending_stiffness_nm", "membrane_modulus_ratio",
                                      "tension_ratio")}, (0,)
    else:
        hf = _size(ratio, accuracy)
        Cc, Dc, _ = cell_constants(lattice, ratio, nu, 2 * hf)
        C, D, dofs = cell_constants(lattice, ratio, nu, hf)
        unc = None
    d_iso, nu_b, an_b = isotropic_part(D)
    c_iso, nu_m, an_m = isotropic_part(C)
    e_m = c_iso * (1 - nu_m**2) * (1 - nu**2)  # E*/E of the isotropic equivalent
    tension = (C[0, 0] + C[0, 1]) / ((1 + nu) / (1 - nu**2))
    if unc is None:
        dc, _, _ = isotropic_part(Dc)
        cc, nmc, _ = isotropic_part(Cc)
        unc = {"bending_stiffness_nm": relative_error(dc, d_iso, BENDING_ORDER),
               "membrane_modulus_ratio": relative_error(cc * (1 - nmc**2), c_iso * (1 - nu_m**2),
                                                        2.0),
               "tension_ratio": relative_error(Cc[0, 0] + Cc[0, 1], C[0, 0] + C[0, 1], 2.0)}
    return HomogenisedPlate(
        lattice=lattice, hole_ratio=ratio, open_fraction=open_fraction(lattice, ratio),
        thickness_m=h, youngs_modulus_pa=E, poisson_ratio=nu,
        membrane=E * h * C, bending=E * h**3 / 12.0 * D,
        bending_stiffness_nm=E * h**3 / 12.0 * d_iso, bending_poisson_ratio=nu_b,
        membrane_modulus_ratio=e_m, membrane_poisson_ratio=nu_m, tension_ratio=tension,
        areal_density_kg_m2=density_kg_m3 * h * (1 - open_fraction(lattice, ratio)),
        anisotropy=(an_b, an_m), uncertainty=unc, dofs=tuple(dofs))
