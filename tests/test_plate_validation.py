"""Diaphragm mechanics (fem.plate) against published solutions and exact Bessel/Navier series.

References, named next to each check:
- Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed., 1959 (T&W): circular
  plates ch. 3, Navier's double sine series for the simply supported rectangle ch. 5, tables of
  the square plate (table numbers quoted from memory).
- Leissa, Vibration of Plates, NASA SP-160, 1969, Table 2.1 (clamped disk) and the clamped
  square (values quoted from memory; the square's tabulated values are ~0.1% high).
- Exact solutions of D∇⁴w − T∇²w = p (and of the eigenproblem) in Bessel functions, derived in
  this file and evaluated with scipy.special / scipy.optimize / scipy.integrate (reference
  library): radially symmetric static w = C1 + C2·Z0(kr) − p r²/(4T), Z0 = I0 (T > 0, k² = T/D)
  or J0 (T < 0, k² = −T/D); mode of order n w = A J_n(βr) + B I_n(αr), α² − β² = T a²/D,
  ρ_s ω² a⁴/D = β⁴ + (T a²/D) β², the edge conditions giving a 2×2 determinant.
- Membrane: w = p(a² − r²)/(4T), ω = j_{0,s}/a·√(T/ρ_s) (Morse, Vibration and Sound, 1948;
  Bessel zeros from scipy.special.jn_zeros).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, special

from skfem import CellBasis, ElementTriArgyris, MeshTri

from checks import kirchhoff_plate
from diagap.fem.plate.argyris import ElementTriArgyrisLocal, local_coefficients
from diagap.fem.plate.solver import (BucklingError, PlateInputError, PlateProblem, assemble_plate,
                       solve_plate)

# polysilicon, typical values (Sharpe et al., 1997)
POLY = dict(youngs_modulus_pa=160e9, poisson_ratio=0.22, thickness_m=1e-6, density_kg_m3=2330.0)
RADIUS = 0.5e-3
HONESTY = 3.0  # true error <= 3 x estimate


def raw(problem: PlateProblem):
    """(D, T, ρ_s, τ) written out from the problem's raw inputs E, h, ν, ρ, σ and its size,
    never from the library's derived properties: D = Eh³/(12(1 − ν²)), T = σh, ρ_s = ρh, and
    τ = T L²/D with L the radius of a disk (tests/checks.py, T&W 1959 ch. 1)."""
    D, T, rs = kirchhoff_plate(problem.youngs_modulus_pa, problem.thickness_m,
                               problem.poisson_ratio, problem.density_kg_m3,
                               problem.residual_stress_pa)
    return D, T, rs, T * problem.size_m**2 / D
SCALARS = ("center_compliance_m_per_pa", "volume_compliance_m3_per_pa", "effective_mass_kg",
           "effective_stiffness_n_per_m", "effective_area_m2")


# ----------------------------------------------------------------------------- exact disk
def _edge_rows(n, x, Z, dZ, d2Z, edge, nu):
    """[value row, second row] of the edge conditions at r = a = 1 for Z_n(x r)."""
    value = Z
    if edge == "clamped":
        return value, x * dZ
    return value, x * x * d2Z + nu * (x * dZ - n * n * Z)


def _determinant(n, beta, tau, edge, nu):
    alpha = math.sqrt(beta * beta + tau)
    j = special.jv(n, beta), special.jvp(n, beta), special.jvp(n, beta, 2)
    i0 = special.iv(n, alpha)
    i = 1.0, special.ivp(n, alpha) / i0, special.ivp(n, alpha, 2) / i0  # scaled by I_n(α)
    rj = _edge_rows(n, beta, *j, edge, nu)
    ri = _edge_rows(n, alpha, *i, edge, nu)
    return rj[0] * ri[1] - ri[0] * rj[1]


def disk_eigen_roots(tau, edge, nu, n_max=3, beta_max=12.0):
    """[(λ = ρ_s ω² a⁴/D, n, β)] ascending, degenerate n > 0 modes counted twice."""
    out = []
    lo = math.sqrt(max(0.0, -tau)) + 1e-6
    for n in range(n_max + 1):
        grid = np.linspace(lo, beta_max, 4000)
        vals = np.array([_determinant(n, b, tau, edge, nu) for b in grid])
        for k in np.flatnonzero(np.sign(vals[:-1]) != np.sign(vals[1:])):
            beta = optimize.brentq(lambda b: _determinant(n, b, tau, edge, nu), grid[k], grid[k + 1],
                                   xtol=1e-14)
            out += [(beta**4 + tau * beta**2, n, beta)] * (1 if n == 0 else 2)
    return sorted(out)


def disk_exact(problem: PlateProblem, n_modes: int = 6) -> dict:
    """Exact quantities of a disk (see the module docstring)."""
    D, T, rs, tau = raw(problem)
    a, nu = problem.size_m, problem.poisson_ratio
    # static, p = 1 Pa, r in metres
    if T == 0.0:
        c = 1.0 if problem.edge == "clamped" else (5 + nu) / (1 + nu)
        w = lambda r: (a * a - r * r) * (c * a * a - r * r) / (64 * D)  # T&W ch. 3
    else:
        k = math.sqrt(abs(T) / D)
        if T > 0:
            Z = lambda r, d=0: special.ivp(0, k * r, d) * k**d
        else:
            Z = lambda r, d=0: special.jvp(0, k * r, d) * k**d
        wp = lambda r, d=0: [-r * r / (4 * T), -r / (2 * T), -1 / (2 * T)][d]
        if problem.edge == "clamped":
            A = np.array([[1.0, Z(a)], [0.0, Z(a, 1)]])
            rhs = -np.array([wp(a), wp(a, 1)])
        else:
            A = np.array([[1.0, Z(a)], [0.0, Z(a, 2) + nu * Z(a, 1) / a]])
            rhs = -np.array([wp(a), wp(a, 2) + nu * wp(a, 1) / a])
        c1, c2 = np.linalg.solve(A, rhs)
        w = lambda r: c1 + c2 * Z(r) + wp(r)
    vol = integrate.quad(lambda r: 2 * math.pi * r * w(r), 0, a, epsabs=0, epsrel=1e-13)[0]
    roots = disk_eigen_roots(tau, problem.edge, nu)[:n_modes]
    freqs = [math.sqrt(lam * D / (rs * a**4)) / (2 * math.pi) for lam, _, _ in roots]
    lam, n, beta = roots[0]
    assert n == 0
    alpha = math.sqrt(beta * beta + tau)
    ratio = special.jv(0, beta) / special.iv(0, alpha)
    phi = lambda s: (special.jv(0, beta * s) - ratio * special.iv(0, alpha * s)) / (1 - ratio)
    m_eff = rs * a * a * integrate.quad(lambda s: 2 * math.pi * s * phi(s) ** 2, 0, 1,
                                        epsrel=1e-13)[0]
    a_eff = a * a * integrate.quad(lambda s: 2 * math.pi * s * phi(s), 0, 1, epsrel=1e-13)[0]
    omega1 = 2 * math.pi * freqs[0]
    return {"center_compliance_m_per_pa": w(0.0), "volume_compliance_m3_per_pa": vol,
            "natural_frequencies_hz": np.array(freqs), "effective_mass_kg": m_eff,
            "effective_stiffness_n_per_m": omega1**2 * m_eff, "effective_area_m2": a_eff}


# --------------------------------------------------------------------------- exact square
def navier_square(problem: PlateProblem, terms: int = 400) -> dict:
    """Simply supported square, side a: Navier's double sine series (T&W ch. 5) with tension.

    w = Σ_{m,n odd} 16 p/(π² m n) sin(mπx/a) sin(nπy/a) / (D k⁴ + T k²), k² = π²(m² + n²)/a²;
    modes ω² = (D k⁴ + T k²)/ρ_s for all m, n ≥ 1 (exact)."""
    D, T, rs, _ = raw(problem)
    a = problem.size_m
    m = np.arange(1, 2 * terms, 2)[:, None]
    n = np.arange(1, 2 * terms, 2)[None, :]
    k2 = math.pi**2 * (m * m + n * n) / a**2
    coef = 16.0 / (math.pi**2 * m * n) / (D * k2 * k2 + T * k2)
    sign = (-1.0) ** ((m - 1) // 2 + (n - 1) // 2)
    w0 = float(np.sum(coef * sign))
    vol = float(np.sum(coef * (2 * a / (math.pi * m)) * (2 * a / (math.pi * n))))
    mm, nn = np.meshgrid(np.arange(1, 6), np.arange(1, 6))
    kk = np.sort((math.pi**2 * (mm * mm + nn * nn) / a**2).ravel())
    freqs = np.sqrt((D * kk * kk + T * kk) / rs) / (2 * math.pi)
    return {"center_compliance_m_per_pa": w0, "volume_compliance_m3_per_pa": vol,
            "natural_frequencies_hz": freqs}


def _rel(fe, exact):
    return abs(fe / exact - 1.0)


def _check(result, exact, tol, keys=None, n_freq=6):
    """Assert |error| <= tol and <= HONESTY x estimate for every quantity; return the errors."""
    errors = {}
    keys = [k for k in (keys or SCALARS) if k in exact]
    for k in keys:
        err = _rel(getattr(result, k), exact[k])
        errors[k] = err
        assert err <= tol, f"{k}: error {err:.2e} > {tol:.1e}"
        assert err <= HONESTY * result.uncertainty[k], (k, err, result.uncertainty[k])
    if "natural_frequencies_hz" in exact:
        fe = np.array(result.natural_frequencies_hz[:n_freq])
        err = np.abs(fe / exact["natural_frequencies_hz"][:n_freq] - 1)
        est = np.array([result.uncertainty[f"natural_frequency_{i + 1}_hz"]
                        for i in range(n_freq)])
        assert np.all(err <= tol), err
        assert np.all(err <= HONESTY * est), (err, est)
        errors["natural_frequencies_hz"] = float(err.max())
    return errors


def disk(stress_pa=0.0, edge="clamped"):
    return PlateProblem("circle", RADIUS, residual_stress_pa=stress_pa, edge=edge, **POLY)


# ------------------------------------------------------------------------------- the tests
def test_local_argyris_basis_matches_scikit_fem():
    """Building block: the element-local Argyris basis equals scikit-fem's ElementTriArgyris
    (reference library) on a mesh near the origin, where the upstream global-coordinate
    Vandermonde matrix is still well-conditioned (edge-normal DOFs may differ in sign)."""
    mesh = MeshTri.init_symmetric().refined(2)
    ref = CellBasis(mesh, ElementTriArgyris(), intorder=6)
    loc = CellBasis(mesh, ElementTriArgyrisLocal(), intorder=6)
    for i in range(21):
        a, b = ref.basis[i][0], loc.basis[i][0]
        if i >= 18:
            a, b = np.abs(a), np.abs(b)
        assert np.allclose(np.asarray(a), np.asarray(b), atol=1e-9)
        if i < 18:
            assert np.allclose(a.hess, b.hess, atol=1e-6 * np.abs(a.hess).max())
    # the batched element matrices equal scikit-fem's assembly of the same weak forms
    from diagap.fem.plate.system import _scatter, element_matrices, forms

    local = element_matrices(loc.elem, loc)
    for name, form in forms().items():
        reference = form.assemble(loc)
        mine = _scatter(loc.element_dofs, loc.N, local[name])
        assert abs(reference - mine).max() <= 1e-10 * abs(reference).max(), name
    # element-local coordinates keep the element matrices well-conditioned on a rim-graded
    # mesh (upstream's global-coordinate Vandermonde reached ~1e12 on the same mesh)
    from diagap.meshes.diaphragm import disk_mesh

    m = disk_mesh(0.3, 0.03, 0.3)
    _, scale, coef = local_coefficients(np.asarray(m.p), np.asarray(m.t))
    unscaled = coef / scale[:, None, None] ** np.array([0, 1, 1, 2, 2, 2] * 3 + [1] * 3)
    assert np.max(np.linalg.cond(unscaled)) < 1e6


def test_clamped_disk_published_values():
    """Clamped disk without stress: T&W ch. 3 and Leissa Table 2.1 [from memory]."""
    pr = disk()
    r = solve_plate(pr, "normal")
    D, _, rs, _ = raw(pr)
    a = pr.size_m
    w0 = a**4 / (64 * D)  # T&W 1959, ch. 3: w0 = p a⁴/(64 D)
    assert _rel(r.center_compliance_m_per_pa, w0) < 1e-3
    assert _rel(r.volume_compliance_m3_per_pa, math.pi * a * a * w0 / 3) < 1e-3  # T&W ch. 3
    # Leissa, NASA SP-160, 1969, Table 2.1 [from memory]: λ² of modes (0,0), (1,0), (2,0), (0,1)
    leissa = np.array([10.2158, 21.260, 34.877, 39.771])
    lam2 = (2 * math.pi * np.array(r.distinct_frequencies_hz[:4]) * a * a
            / math.sqrt(D / rs))
    assert np.all(np.abs(lam2 / leissa - 1) < 1e-3), lam2


@pytest.mark.parametrize("stress_pa", [0.0, 10e6, 50e6])
def test_clamped_disk_exact(stress_pa):
    """Clamped disk, 0 / 10 / 50 MPa: exact Bessel solution (scipy), every quantity ≤ 1e-3."""
    pr = disk(stress_pa)
    _check(solve_plate(pr, "normal"), disk_exact(pr), tol=1e-3)


def test_simply_supported_disk():
    """SS disk: w0 = (5+ν)/(1+ν)·pa⁴/(64D) (T&W 1959, ch. 3); modes from the exact determinant.

    The curved-edge constraint w_tt = κ w_n is what makes this converge to the right limit
    (Babuška's paradox otherwise)."""
    pr = disk(edge="simply-supported")
    r = solve_plate(pr, "normal")
    ex = disk_exact(pr)
    nu, D, a = pr.poisson_ratio, raw(pr)[0], pr.size_m
    assert ex["center_compliance_m_per_pa"] == pytest.approx((5 + nu) / (1 + nu) * a**4 / (64 * D), rel=1e-6, abs=0)
    _check(r, ex, tol=1e-3)


def test_simply_supported_disk_with_tension():
    """SS disk at 20 MPa: exact Bessel solution (scipy)."""
    pr = disk(20e6, edge="simply-supported")
    _check(solve_plate(pr, "normal"), disk_exact(pr), tol=1e-3)


def test_clamped_square():
    """Clamped square, ν = 0.3, side a: T&W Table 35 [table number from memory]
    w_max = 0.00126 pa⁴/D (3 digits); Leissa NASA SP-160 [from memory] λ² = 35.99, 73.41 (2×),
    108.27, 131.64, tabulated ~0.1% high, checked to 0.2%."""
    pr = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, 0.0, "clamped")
    r = solve_plate(pr, "normal")
    D, _, rs, _ = raw(pr)
    a = pr.size_m
    assert _rel(r.center_compliance_m_per_pa, 0.00126 * a**4 / D) < 5e-3  # rounding of 0.00126
    # 0.00126532 pa⁴/D: Taylor & Govindjee, Commun. Numer. Meth. Eng. 20 (2004) [from memory]
    assert _rel(r.center_compliance_m_per_pa, 0.00126532 * a**4 / D) < 1e-3
    lam2 = 2 * math.pi * np.array(r.natural_frequencies_hz[:5]) * a * a / math.sqrt(D / rs)
    leissa = np.array([35.99, 73.41, 73.41, 108.27, 131.64])
    assert np.all(np.abs(lam2 / leissa - 1) < 2e-3), lam2
    assert r.uncertainty["center_compliance_m_per_pa"] < 1e-3


@pytest.mark.parametrize("stress_pa", [0.0, 10e6])
def test_simply_supported_square_navier(stress_pa):
    """SS square: Navier series (T&W 1959, ch. 5), exact modes; T&W Table 8 [table number from
    memory] w_max = 0.00406 pa⁴/D at ν = 0.3."""
    pr = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, stress_pa, "simply-supported")
    ex = navier_square(pr)
    if stress_pa == 0.0:
        D, a = raw(pr)[0], pr.size_m
        assert ex["center_compliance_m_per_pa"] == pytest.approx(0.00406 * a**4 / D, rel=2e-3, abs=0)
    _check(solve_plate(pr, "normal"), ex, tol=1e-3,
           keys=["center_compliance_m_per_pa", "volume_compliance_m3_per_pa"])


def test_compressive_stress_below_buckling():
    """Clamped disk in compression at half the buckling stress: exact Bessel solution.

    Buckling of the clamped disk: T a²/D = −j_{1,1}² (T&W 1959 / Timoshenko & Gere, elastic
    stability [from memory]; j_{1,1} from scipy.special.jn_zeros)."""
    probe = disk()
    j11 = special.jn_zeros(1, 1)[0]
    sigma_cr = -j11**2 * raw(probe)[0] / (probe.size_m**2 * probe.thickness_m)
    pr = disk(0.5 * sigma_cr)
    _check(solve_plate(pr, "normal"), disk_exact(pr), tol=1e-3)
    with pytest.raises(BucklingError, match="residual_stress_pa"):
        solve_plate(disk(1.1 * sigma_cr), "draft")


def test_square_compression_and_buckling():
    """SS square in equal biaxial compression: Navier terms D k⁴ + T k² (T&W ch. 5) give the exact
    buckling tension T_cr = −2π²D/a² (mode (1,1)); at 0.8 T_cr the series and modes still hold."""
    base = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, 0.0, "simply-supported")
    sigma_cr = -2 * math.pi**2 * raw(base)[0] / (base.size_m**2 * base.thickness_m)
    pr = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, 0.8 * sigma_cr,
                      "simply-supported")
    _check(solve_plate(pr, "draft"), navier_square(pr), tol=1e-3,
           keys=["center_compliance_m_per_pa", "volume_compliance_m3_per_pa"])
    over = PlateProblem("square", 1e-3, 160e9, 0.3, 1e-6, 2330.0, 1.02 * sigma_cr,
                        "simply-supported")
    with pytest.raises(BucklingError, match="residual_stress_pa"):
        solve_plate(over, "draft")


def test_membrane_dominated_disk_against_plate_with_tension():
    """Thin tensioned nitride-like disk (τ ≈ 4.7e4, membrane model): against the exact Bessel
    solution of the plate with tension, which the shrunk-edge membrane matches to O(1/τ)."""
    pr = PlateProblem("circle", RADIUS, 222e9, 0.28, 0.2e-6, 3000.0, 150e6, "clamped")
    r = solve_plate(pr, "normal")
    assert r.model == "membrane"
    _check(r, disk_exact(pr), tol=1e-3)


def test_membrane_model_near_its_threshold():
    """Tensioned disk just inside the membrane model (τ ≈ 1.25e4): the bending correction of the
    frequencies, (1 + D k²/T) ≈ 1 + j²/τ, is 2e-4 (mode 1) to 2.4e-3 (mode 6) here, so the
    frequencies are checked to 1e-4 against the exact Bessel solution of the plate with tension
    (observed ≤ 3.4e-5); every other quantity to 1e-3."""
    pr = PlateProblem("circle", RADIUS, 222e9, 0.28, 0.2e-6, 3000.0, 40e6, "clamped")
    assert 1e4 < raw(pr)[3] < 1.3e4
    r = solve_plate(pr, "normal")
    assert r.model == "membrane"
    exact = disk_exact(pr)
    _check(r, exact, tol=1e-3)
    err = np.abs(np.array(r.natural_frequencies_hz[:6]) / exact["natural_frequencies_hz"] - 1)
    assert np.all(err < 1e-4), err


def test_pure_membrane_bessel():
    """D → 0: w0 = pa²/(4T), volume πpa⁴/(8T) (classical membrane, Morse 1948); f_0s from the
    Bessel zeros (scipy.special.jn_zeros); m_eff = ρ_s π a² J1(j01)², A_eff = 2πa² J1(j01)/j01."""
    pr = PlateProblem("circle", RADIUS, 1e3, 0.3, 1e-6, 2330.0, 10e6, "clamped")
    r = solve_plate(pr, "normal")
    assert r.model == "membrane"
    _, T, rs, _ = raw(pr)
    a = pr.size_m
    j0, j1, j2 = special.jn_zeros(0, 2), special.jn_zeros(1, 1), special.jn_zeros(2, 1)
    zeros = np.sort(np.concatenate([j0[:1], j1, j1, j2, j2, j0[1:]]))
    omega1 = j0[0] / a * math.sqrt(T / rs)
    m_eff = rs * math.pi * a * a * special.j1(j0[0]) ** 2
    exact = {"center_compliance_m_per_pa": a * a / (4 * T),
             "volume_compliance_m3_per_pa": math.pi * a**4 / (8 * T),
             "natural_frequencies_hz": zeros / a * math.sqrt(T / rs) / (2 * math.pi),
             "effective_mass_kg": m_eff, "effective_stiffness_n_per_m": omega1**2 * m_eff,
             "effective_area_m2": 2 * math.pi * a * a * special.j1(j0[0]) / j0[0]}
    _check(r, exact, tol=1e-3)


def test_square_membrane_navier():
    """Tensioned square membrane (D → 0), simply supported: Navier series (T&W ch. 5, with the
    membrane term T k²) and exact modes ω² = (D k⁴ + T k²)/ρ_s."""
    pr = PlateProblem("square", 1e-3, 1e3, 0.3, 1e-6, 2330.0, 10e6, "simply-supported")
    r = solve_plate(pr, "normal")
    assert r.model == "membrane"
    _check(r, navier_square(pr), tol=1e-3,
           keys=["center_compliance_m_per_pa", "volume_compliance_m3_per_pa"])


def test_fields_and_summary():
    """Shapes at SI points: clamped-disk static shape (1 − r²/a²)² (T&W ch. 3), mode 1 of the
    exact Bessel form, 0 outside; nodal fields and summary keys."""
    pr = disk()
    r = solve_plate(pr, "draft")
    a = pr.size_m
    rng = np.random.default_rng(1)
    x, y = rng.uniform(-a, a, (2, 100_000))
    s = r.static_shape(x, y)
    rr = np.hypot(x, y) / a
    inside = rr <= 1
    assert np.all(s[~inside] == 0)
    assert np.max(np.abs(s[inside] - (1 - rr[inside] ** 2) ** 2)) < 2e-3
    assert r.static_shape(np.array([0.0]), np.array([0.0]))[0] == pytest.approx(1.0, abs=1e-12)
    roots = disk_eigen_roots(0.0, "clamped", pr.poisson_ratio)
    beta = roots[0][2]
    ratio = special.jv(0, beta) / special.iv(0, beta)
    exact_phi = (special.jv(0, beta * rr) - ratio * special.iv(0, beta * rr)) / (1 - ratio)
    phi = r.mode_shape(1, x, y)
    assert np.max(np.abs(phi[inside] - exact_phi[inside])) < 2e-3
    for i in range(2, 7):
        assert np.max(np.abs(r.mode_shape(i, x, y))) <= 1.0 + 1e-2
    with pytest.raises(PlateInputError, match="mode index"):
        r.mode_shape(99, x, y)
    pts, tri, fields = r.nodal_fields()
    assert pts.shape[1] == 2 and tri.shape[0] == 3 and tri.max() < pts.shape[0]
    assert np.max(np.hypot(pts[:, 0], pts[:, 1])) == pytest.approx(a, rel=1e-9, abs=0)
    assert fields["deflection_m_per_pa"].shape == (pts.shape[0],)
    assert fields["mode_1"].shape == (pts.shape[0],)
    w_max = np.max(fields["deflection_m_per_pa"])
    assert 0.5 * r.center_compliance_m_per_pa < w_max <= r.center_compliance_m_per_pa * (1 + 1e-9)
    summary = r.to_summary()
    for key in SCALARS + ("natural_frequencies_hz", "model"):
        assert key in summary
    assert set(SCALARS) <= set(r.uncertainty) and "natural_frequencies_hz" in r.uncertainty
    assert len(summary["natural_frequencies_hz"]) >= 4
    assert summary["natural_frequencies_hz"] == sorted(summary["natural_frequencies_hz"])


def test_assembled_system_reuse():
    """assemble_plate: SPD stiffness, Maxwell–Betti reciprocity of two pressure fields, callable
    and quadrature-point loads agree, point evaluation consistent with the centre functional."""
    pr = disk(10e6)
    system = assemble_plate(pr, "draft")
    f1 = system.load_vector(lambda x, y: 1.0 + x / RADIUS)
    xq, yq = system.quadrature_points_m()
    f2 = system.load_vector(np.exp(-((xq - 0.2 * RADIUS) ** 2 + yq**2) / (0.1 * RADIUS) ** 2))
    q1, q2 = system.solve(f1), system.solve(f2)
    assert f1 @ q2 == pytest.approx(f2 @ q1, rel=1e-10, abs=0)  # Maxwell–Betti reciprocity
    assert np.allclose(system.load_vector(1.0), system.load_vector(np.ones_like(xq)), rtol=1e-12, atol=0)
    w0 = system.center_deflection(q1)
    assert system.evaluate(q1, np.zeros(1), np.zeros(1))[0] == pytest.approx(w0, rel=1e-10, abs=0)
    assert system.quadrature_values(q1).shape == xq.shape
    assert f1 @ q1 > 0 and f2 @ q2 > 0  # positive strain energy
    # ∫ c w v dA with c = ρ_s reproduces the mass matrix
    Mc = system.weighted_mass(np.full_like(xq, raw(pr)[2]))
    assert abs(Mc - system.M).max() <= 1e-12 * abs(system.M).max()


@pytest.mark.parametrize("field, value, match", [
    ("shape", "triangle", "shape"),
    ("edge", "free", "edge"),
    ("size_m", -1.0, "size_m"),
    ("thickness_m", 0.0, "thickness_m"),
    ("youngs_modulus_pa", float("nan"), "youngs_modulus_pa"),
    ("poisson_ratio", 0.5, "poisson_ratio"),
    ("residual_stress_pa", float("inf"), "residual_stress_pa"),
])
def test_invalid_problem(field, value, match):
    params = dict(shape="circle", size_m=RADIUS, residual_stress_pa=0.0, edge="clamped", **POLY)
    params[field] = value
    with pytest.raises(PlateInputError, match=match):
        PlateProblem(**params)


def test_invalid_solver_options():
    with pytest.raises(PlateInputError, match="accuracy"):
        solve_plate(disk(), "extreme")
    with pytest.raises(PlateInputError, match="n_modes"):
        solve_plate(disk(), "draft", n_modes=0)
