"""Homogenised constants of perforated plates (square and hex hole lattices).

References named beside each check; the FE under test is diagap.fem.plate.homogenise.
"""
import math

import numpy as np
import pytest
from skfem import Basis, ElementTriMorley, LinearForm, condense, solve

from diagap.fem.plate.homogenise import (HomogeniseInputError, _bending, cell_constants,
                                         homogenise, open_fraction, solid_constants)
from diagap.meshes.lattice import perforated_strip_mesh

NU = 0.3


def _solid(nu):
    """Kirchhoff / plane-stress law of an isotropic plate (Timoshenko & Woinowsky-Krieger,
    Theory of Plates and Shells, 1959, ch. 1): 1/(1−ν²)[[1, ν, 0], [ν, 1, 0], [0, 0, (1−ν)/2]]."""
    return np.array([[1, nu, 0], [nu, 1, 0], [0, 0, (1 - nu) / 2]]) / (1 - nu * nu)


def _rel(a, b):
    return np.linalg.norm(np.asarray(a) - np.asarray(b)) / np.linalg.norm(b)


@pytest.mark.parametrize("lattice", ["square", "hex"])
def test_no_holes_is_the_solid_plate(lattice):
    # the cell FE without holes: the fluctuation vanishes and the solid law comes back
    C, D, _ = cell_constants(lattice, 0.0, NU, 0.25)
    assert _rel(C, _solid(NU)) <= 1e-10
    assert _rel(D, _solid(NU)) <= 1e-10
    hp = homogenise(lattice, 0.0, 10e-6, 2e-6, 160e9, 0.22, 2330.0, "draft")
    D_solid = 160e9 * 2e-6**3 / (12 * (1 - 0.22**2))
    assert hp.bending_stiffness_nm == pytest.approx(D_solid, rel=1e-12, abs=0)
    assert hp.bending_poisson_ratio == pytest.approx(0.22, rel=1e-12, abs=0)
    assert hp.tension_ratio == pytest.approx(1.0, rel=1e-12, abs=0)
    assert hp.areal_density_kg_m2 == pytest.approx(2330.0 * 2e-6, rel=1e-12, abs=0)
    assert _rel(solid_constants(0.22), _solid(0.22)) <= 1e-15


def test_hex_lattice_is_isotropic_square_is_not():
    # a lattice with six-fold symmetry has an isotropic in-plane (and bending) law:
    # Q66 = (Q11 − Q12)/2 (Nye, Physical Properties of Crystals, 1957: hexagonal symmetry, 2-D)
    C, D, _ = cell_constants("hex", 0.3, NU, 0.1)
    for Q in (C, D):
        assert Q[2, 2] == pytest.approx(0.5 * (Q[0, 0] - Q[0, 1]), rel=2e-3, abs=0)
    C, D, _ = cell_constants("square", 0.3, NU, 0.1)
    assert C[2, 2] < 0.8 * 0.5 * (C[0, 0] - C[0, 1])  # square holes: soft in shear
    hp = homogenise("square", 3e-6, 10e-6, 2e-6, 160e9, NU, 2330.0, "draft")
    assert abs(hp.anisotropy[1] - 1) > 0.1


@pytest.mark.parametrize("lattice,ratio", [("hex", 0.05), ("hex", 0.08), ("hex", 0.1)])
def test_dilute_holes_match_the_non_interacting_approximation(lattice, ratio):
    # Kachanov, Tsukrov & Shafiro, "Effective moduli of solids with cavities of various shapes",
    # Appl. Mech. Rev. 47 (1994): circular holes in 2-D, non-interacting approximation,
    # E/E* = 1 + 3φ and ν*/E* = (ν + φ)/E; interactions are O(φ²).
    # Tolerance: 3φ² for the interactions plus 1e-3 for the cell discretisation. (Hex lattices
    # only: on a square lattice the pair interactions are anisotropic and the φ² correction to
    # ν* is several times larger.)
    phi = open_fraction(lattice, ratio)
    C, _, _ = cell_constants(lattice, ratio, NU, 0.6 * ratio)
    e_star = (C[0, 0] ** 2 - C[0, 1] ** 2) / C[0, 0]  # E*/E along x (E = 1)
    nu_star = C[0, 1] / C[0, 0]
    tol = 3 * phi**2 + 1e-3
    assert e_star == pytest.approx(1 / (1 + 3 * phi), rel=tol, abs=0)
    assert nu_star == pytest.approx((NU + phi) / (1 + 3 * phi), rel=tol, abs=0)


def test_plane_stress_constants_against_ligament_efficiency_design_data():
    # O'Donnell & Langer, "Design of perforated plates", J. Eng. Ind. 84 (1962): effective
    # plane-stress constants of triangular (hex) patterns versus ligament efficiency
    # η = (P − 2r)/P. Read from the thin-plate design curves [from memory]: at η = 0.5,
    # E*/E ≈ 0.5 and ν* ≈ 0.3 (ν = 0.3); a remembered curve reading, taken as ±12 % / ±15 %
    # (the quantitative check is the dilute limit above).
    C, _, _ = cell_constants("hex", 0.25, NU, 0.06)
    e_star = (C[0, 0] ** 2 - C[0, 1] ** 2) / C[0, 0]
    nu_star = C[0, 1] / C[0, 0]
    assert e_star == pytest.approx(0.5, rel=0.12, abs=0)
    assert nu_star == pytest.approx(0.3, rel=0.15, abs=0)


def test_convergence_rate_of_the_homogenised_constants():
    # membrane (P2): the polygonal hole rim limits the averages to O(h²) — observed order
    # p = log(|Q1 − Q0| / |Q2 − Q1|)/log 2 (Richardson, Phil. Trans. R. Soc. A 210, 1911)
    hs = (0.1, 0.05, 0.025)
    vals = [cell_constants("square", 0.3, NU, h) for h in hs]
    c = [v[0][0, 0] for v in vals]
    p = math.log(abs(c[1] - c[0]) / abs(c[2] - c[1])) / math.log(2)
    assert 1.5 < p < 3.0
    # bending (Morley): the order-1 Richardson estimate of the h/2 value bounds its distance to
    # the h/4 value
    d = [v[1][0, 0] for v in vals]
    est = abs(d[1] - d[0]) / (2**1 - 1)
    assert abs(d[2] - d[1]) <= 1.5 * est
    hp = homogenise("hex", 3e-6, 10e-6, 2e-6, 160e9, NU, 2330.0, "normal")
    assert all(0 < v < 1e-2 for v in hp.uncertainty.values())


@pytest.mark.parametrize("ratio", [0.2, 0.3])
def test_strip_with_explicit_holes_matches_the_homogenised_plate(ratio):
    # Direct FE (Morley) of a strip of 10 hex cells with every hole meshed, simply supported at
    # its ends, mirror-symmetric long edges (cylindrical bending), uniform pressure q on the solid.
    # Homogenised: a beam-strip of stiffness D*₁₁ under q(1 − φ): the work ∫ q w dA =
    # q²(1 − φ)² b L⁵/(120 D*₁₁) (simply supported beam, Timoshenko & Gere, Mechanics of
    # Materials, 1972: w = q x (L³ − 2Lx² + x³)/(24 D)). Agreement within 2 %.
    n, Y = 10, math.sqrt(3) / 2
    mesh = perforated_strip_mesh(n, ratio, 0.1)
    basis = Basis(mesh, ElementTriMorley(), intorder=4)
    K = _bending.assemble(basis, nu=NU)  # E h³/12 = 1
    f = LinearForm(lambda v, w: v).assemble(basis)
    ends = basis.get_dofs(lambda x: (np.abs(x[0]) < 1e-9) | (np.abs(x[0] - n) < 1e-9)).all(["u"])
    sides = basis.get_dofs(lambda x: np.abs(np.abs(x[1]) - Y) < 1e-9).all(["u_n"])
    w = solve(*condense(K, f, D=np.union1d(ends, sides)))
    hp = homogenise("hex", ratio, 1.0, 1.0, 1.0, NU, 1.0, "normal")
    d11 = hp.bending_stiffness_nm * 12.0  # the isotropic equivalent (= D*₁₁ for hex)
    phi = open_fraction("hex", ratio)
    expected = (1 - phi) ** 2 * 2 * Y * n**5 / (120 * d11)
    assert float(f @ w) == pytest.approx(expected, rel=0.02, abs=0)


def test_bad_lattice_input_is_one_line():
    with pytest.raises(HomogeniseInputError, match="hole_radius_m"):
        homogenise("hex", 6e-6, 10e-6, 2e-6, 160e9, NU, 2330.0)
    with pytest.raises(HomogeniseInputError, match="lattice"):
        homogenise("kagome", 1e-6, 10e-6, 2e-6, 160e9, NU, 2330.0)
