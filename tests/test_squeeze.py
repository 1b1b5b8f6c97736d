"""Squeeze-film damping (diagap.fem.film.squeeze) and perforation resistances (diagap.fem.film.perforation).

External references used here:
* Griffin, Richardson & Yamanami, J. Basic Eng. 88 (1966): rigid disk b = 3πμa⁴/(2g³) [from memory].
* Blech, J. Lubrication Technology 105 (1983) 615: double Fourier series of the linearised
  Reynolds equation on a rectangle, incl. the squeeze number; square b = 0.4217 μa⁴/g³
  [from memory] (the series is summed here).
* Closed-form disk solutions of the same equation with modified Bessel functions, evaluated with
  scipy.special (reference library) — derived in this file (``_disk_exact``).
* Škvor (1969) / Bao et al., J. Micromech. Microeng. 13 (2003) 795: per-cell damping.
* Veijola et al., Sensors and Actuators A 48 (1995): μ_eff = μ/(1 + 9.638 Kn^1.159).
* Burgdorfer, J. Basic Eng. 81 (1959): first-order slip, μ_eff = μ/(1 + 6 Kn) [from memory].
* Sampson, Phil. Trans. R. Soc. A 182 (1891): orifice 3μ/r³; Hagen–Poiseuille 8μl/(πr⁴)
  (Beranek, Acoustics, 1954, narrow tube [from memory]).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, special

from diagap.fem.air import air_properties
from diagap.fem.film.perforation import (
    PerforationError,
    cell_damping,
    cell_resistance,
    film_viscosity,
    hole_resistance,
    lattice_cell_area,
    perforation,
    poiseuille_resistance,
    rarefaction_factor,
    sampson_resistance,
)
from diagap.fem.film.squeeze import SqueezeError, film_impedance, squeeze_film

MU = 1.8e-5        # Pa·s
GAP = 4e-6         # m
P0 = 101325.0      # Pa


def rigid(x, y):
    return np.ones_like(x)


def clamped_shape(radius_m):
    """Clamped-plate static shape (1 − r²/a²)² (Timoshenko & Woinowsky-Krieger 1959, ch. 3)."""
    return lambda x, y: (1.0 - (x * x + y * y) / radius_m**2) ** 2


# ------------------------------------------------------------------- closed-form disk solution
def _disk_exact(k2: complex, beta: float) -> complex:
    """∫Πφ dξ on the unit disk for −∇²Π + k²Π = φ, Π(1) = 0, φ = (1 − βρ²)².

    Derived here: polynomial particular solution plus the regular homogeneous part
    D·I0(kρ), D fixed by the vented rim. Bessel functions from scipy.special.
    """
    phi = lambda r: (1 - beta * r * r) ** 2  # noqa: E731
    if k2 == 0:
        c0 = 0.25 - beta / 8 + beta**2 / 36
        pi_ = lambda r: c0 - r**2 / 4 + beta * r**4 / 8 - beta**2 * r**6 / 36  # noqa: E731
    else:
        k = np.sqrt(complex(k2))
        cc = beta**2 / k2
        bb = (-2 * beta + 16 * cc) / k2
        aa = (1 + 4 * bb) / k2
        rim = aa + bb + cc
        pi_ = lambda r: (aa + bb * r**2 + cc * r**4  # noqa: E731
                         - rim * special.ive(0, k * r) / special.ive(0, k)
                         * np.exp(k.real * (r - 1)))
    fr = lambda r: (2 * np.pi * pi_(r) * phi(r) * r).real  # noqa: E731
    fi = lambda r: (2 * np.pi * pi_(r) * phi(r) * r).imag  # noqa: E731
    kw = dict(limit=400, epsabs=1e-13, epsrel=1e-12)
    edge = 1.0 - min(0.5, 20.0 / max(abs(np.sqrt(complex(k2))), 1.0))  # rim boundary layer
    return sum(integrate.quad(fr, lo, hi, **kw)[0] + 1j * integrate.quad(fi, lo, hi, **kw)[0]
               for lo, hi in ((0.0, edge), (edge, 1.0)))


def _blech_square(side, gap, mu, p0, omega):
    """Blech (1983) double series for a rigid a×a plate: Z = b + k/(jω) (m, n odd)."""
    m = np.arange(1, 2001, 2.0)[:, None]
    n = m.T
    denom = (gap**3 / (12 * mu)) * np.pi**2 * (m**2 + n**2) / side**2 + 1j * omega * gap / p0
    z = np.sum(64 * side**2 / (np.pi**4 * m**2 * n**2) / denom)
    return z.real, -omega * z.imag


# ---------------------------------------------------------------------------- rigid plates
def test_rigid_disk_matches_griffin():
    a = 0.45e-3
    res = film_impedance("circle", a, GAP, MU, P0, 0.0, rigid, [10.0])
    griffin = 3 * np.pi * MU * a**4 / (2 * GAP**3)  # Griffin et al. 1966 [from memory]
    err = abs(res.damping_n_s_per_m / griffin - 1)
    assert err < 0.005
    assert err <= 3 * res.damping_relative_uncertainty  # estimate is honest
    assert res.damping_relative_uncertainty < 1e-5


def test_rigid_square_matches_blech_series():
    side = 0.9e-3
    res = film_impedance("square", side, GAP, MU, P0, 0.0, rigid, [10.0])
    b_blech, _ = _blech_square(side, GAP, MU, P0, 0.0)  # Blech 1983, series summed here
    assert abs(res.damping_n_s_per_m / b_blech - 1) < 0.01
    assert abs(res.damping_n_s_per_m - b_blech) <= 3 * res.damping_uncertainty_n_s_per_m + 1e-12
    # cross-check of the coefficient: 0.4217 μa⁴/g³ (Blech 1983 [from memory])
    assert b_blech / (MU * side**4 / GAP**3) == pytest.approx(0.4217, abs=1e-4)


def test_square_spectrum_matches_blech_with_squeeze_number():
    side = 0.9e-3
    res0 = film_impedance("square", side, GAP, MU, P0, 0.0, rigid, [1.0])
    fc = res0.cutoff_frequency_hz
    freqs = fc * np.array([0.1, 1.0, 10.0])
    res = film_impedance("square", side, GAP, MU, P0, 0.0, rigid, freqs)
    for i, f in enumerate(freqs):
        b, k = _blech_square(side, GAP, MU, P0, 2 * np.pi * f)  # Blech 1983
        zmag = abs(b + k / (2j * np.pi * f))
        assert abs(res.damping_spectrum_n_s_per_m[i] - b) < 2e-3 * zmag
        assert abs(res.film_stiffness_n_per_m[i] / (2 * np.pi * f) - k / (2 * np.pi * f)) \
            < 2e-3 * zmag


# -------------------------------------------------------------- squeeze-number dependence
def test_disk_spectrum_matches_bessel_solution_and_limits():
    """Low σ: incompressible damping, k → 0; high σ: gas spring p0·A/g, b → 0.

    Limits as stated by Griffin et al. 1966 and Blech 1983 [from memory]; the whole curve is
    compared with the closed-form Bessel solution (scipy.special).
    """
    a = 0.45e-3
    sig_per_hz = 12 * MU * 2 * np.pi * a**2 / (P0 * GAP**2)
    sigmas = np.array([1e-3, 0.3, 3.0, 10.0, 30.0, 300.0, 3e3])
    res = film_impedance("circle", a, GAP, MU, P0, 0.0, rigid, sigmas / sig_per_hz, "draft")
    z0 = 12 * MU * a**4 / GAP**3
    for i, s in enumerate(sigmas):
        z = z0 * _disk_exact(1j * s, 0.0)
        omega = s / sig_per_hz * 2 * np.pi
        assert abs(res.damping_spectrum_n_s_per_m[i] - z.real) < 1e-4 * abs(z)
        assert abs(res.film_stiffness_n_per_m[i] + omega * z.imag) < 1e-4 * omega * abs(z)
        assert abs(res.damping_spectrum_n_s_per_m[i] - z.real) \
            <= 3 * res.damping_spectrum_uncertainty_n_s_per_m[i] + 1e-9 * abs(z)
    b, k = res.damping_spectrum_n_s_per_m, res.film_stiffness_n_per_m
    assert np.all(np.diff(b) < 0) and np.all(np.diff(k) > 0)
    griffin = 3 * np.pi * MU * a**4 / (2 * GAP**3)
    assert b[0] == pytest.approx(griffin, rel=1e-5, abs=0)  # incompressible limit
    assert k[0] < 1e-2 * (2 * np.pi * sigmas[0] / sig_per_hz) * b[0]
    spring = P0 * np.pi * a**2 / GAP  # isothermal gas spring
    assert res.gas_spring_stiffness_n_per_m == pytest.approx(spring, rel=1e-9, abs=0)
    assert k[-1] == pytest.approx(spring, rel=0.03, abs=0)  # rim layer ~ √2/√σ
    assert b[-1] * 2 * np.pi * sigmas[-1] / sig_per_hz < 0.05 * k[-1]


def test_disk_cutoff_matches_bessel_crossing():
    a = 0.45e-3
    res = film_impedance("circle", a, GAP, MU, P0, 0.0, rigid, [1.0])
    h = lambda s: (lambda z: z.real + z.imag)(_disk_exact(1j * s, 0.0))  # noqa: E731
    s_c = optimize.brentq(h, 1.0, 30.0, xtol=1e-12)
    sig_per_hz = 12 * MU * 2 * np.pi * a**2 / (P0 * GAP**2)
    assert res.cutoff_frequency_hz == pytest.approx(s_c / sig_per_hz, rel=1e-5, abs=0)
    assert res.squeeze_number(res.cutoff_frequency_hz) == pytest.approx(s_c, rel=1e-5, abs=0)
    # single-mode estimate σ_c ≈ j01² = 5.78 (lowest film mode) within 10%
    assert res.squeeze_number(res.cutoff_frequency_hz) == pytest.approx(5.783, rel=0.1, abs=0)


# ------------------------------------------------------ distributed sink and mode shape
@pytest.mark.parametrize("alpha,sigma", [(0.0, 0.0), (400.0, 0.0), (400.0, 2000.0),
                                         (30.0, 50.0)])
def test_clamped_shape_with_sink_matches_bessel_solution(alpha, sigma):
    a_d, a_e = 0.5e-3, 0.45e-3
    beta = (a_e / a_d) ** 2
    sink = alpha * GAP**3 / (12 * MU * a_e**2)
    f = sigma * P0 * GAP**2 / (12 * MU * 2 * np.pi * a_e**2)
    res = film_impedance("circle", a_e, GAP, MU, P0, sink, clamped_shape(a_d), [f], "draft")
    z = 12 * MU * a_e**4 / GAP**3 * _disk_exact(alpha + 1j * sigma, beta)
    err = abs(res.damping_spectrum_n_s_per_m[0] - z.real)
    assert err < 1e-4 * abs(z)
    assert err <= 3 * res.damping_spectrum_uncertainty_n_s_per_m[0] + 1e-10 * abs(z)
    if sigma:  # Z = b + k/(jω) against the closed form
        zf = res.damping_spectrum_n_s_per_m[0] + res.film_stiffness_n_per_m[0] / (2j * np.pi * f)
        assert abs(zf - z) < 1e-4 * abs(z)
    z_static = 12 * MU * a_e**4 / GAP**3 * _disk_exact(alpha, beta)
    assert abs(res.damping_n_s_per_m - z_static.real) \
        <= 3 * res.damping_uncertainty_n_s_per_m + 1e-10 * abs(z_static)


def test_convergence_rate_and_honest_estimate():
    """P2 on nested meshes: the damping functional converges like h⁴ (energy error squared)."""
    a_d, a_e = 0.5e-3, 0.45e-3
    alpha = 100.0
    sink = alpha * GAP**3 / (12 * MU * a_e**2)
    res = film_impedance("circle", a_e, GAP, MU, P0, sink, clamped_shape(a_d), [0.0])
    exact = (12 * MU * a_e**4 / GAP**3 * _disk_exact(alpha, (a_e / a_d) ** 2)).real
    errors = np.abs(np.array(res.damping_levels_n_s_per_m) - exact)  # h = 4, 2, 1
    slope = np.polyfit(np.log([4.0, 2.0, 1.0]), np.log(errors), 1)[0]
    assert slope > 3.3  # measured 3.57
    assert np.log2(errors[1] / errors[2]) > 3.6  # finest pair, measured 3.76
    assert errors[-1] / exact < 1e-5
    assert errors[-1] <= 3 * res.damping_uncertainty_n_s_per_m
    assert 3.0 < res.convergence_order <= 4.0


# ------------------------------------------------------------------------- perforation
def test_rarefaction_factor_veijola():
    # Veijola et al. 1995: Q = 1 + 9.638 Kn^1.159, written out independently
    for kn in (0.001, 0.01, 0.03, 0.1):
        assert rarefaction_factor(kn) == pytest.approx(1 + 9.638 * math.exp(1.159 * math.log(kn)),
                                                       rel=1e-14, abs=0)
    assert rarefaction_factor(0.0) == 1.0
    assert rarefaction_factor(0.1) == pytest.approx(1.6683, abs=1e-4)  # 1 + 9.638·10^-1.159
    # first-order slip flow (Burgdorfer 1959 [from memory]): 1 + 6 Kn, within 5% here
    for kn in np.geomspace(1e-3, 0.1, 9):
        assert rarefaction_factor(kn) == pytest.approx(1 + 6 * kn, rel=0.05, abs=0)
    air = air_properties(293.15, P0)
    kn = air.mean_free_path_m / GAP
    assert film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, GAP) == pytest.approx(
        air.viscosity_pa_s / (1 + 9.638 * kn**1.159), rel=1e-14, abs=0)


def test_hole_resistance_limits():
    r = 4e-6
    # Sampson (1891): zero-thickness orifice 3μ/r³
    assert hole_resistance(MU, r, 0.0) == pytest.approx(3 * MU / r**3, rel=1e-14, abs=0)
    assert sampson_resistance(MU, r) == pytest.approx(3 * MU / r**3, rel=1e-14, abs=0)
    # Hagen–Poiseuille (Beranek 1954 narrow tube [from memory]) dominates long holes
    long_t = 1e-2
    hp = 8 * MU * long_t / (np.pi * r**4)
    assert poiseuille_resistance(MU, r, long_t) == pytest.approx(hp, rel=1e-14, abs=0)
    assert hole_resistance(MU, r, long_t) == pytest.approx(hp, rel=1e-3, abs=0)
    # the end correction equals 3π/8 ≈ 1.18 radii of extra tube length
    t = 2e-6
    extra = (hole_resistance(MU, r, t) - poiseuille_resistance(MU, r, t)) * np.pi * r**4 / (8 * MU)
    assert extra / r == pytest.approx(3 * np.pi / 8, rel=1e-12, abs=0)


def test_annulus_cell_damping_is_bao_formula():
    """Axisymmetric cell: −(rP')'/r = q, P(r0) = 0, P'(rc) = 0, integrated with scipy."""
    r0, rc, mu, g = 4e-6, 10.5e-6, MU, GAP
    q = 12 * mu / g**3
    p = lambda r: q * ((r0**2 - r**2) / 4 + rc**2 / 2 * np.log(r / r0))  # noqa: E731
    force = integrate.quad(lambda r: 2 * np.pi * r * p(r), r0, rc, epsrel=1e-13)[0]
    assert cell_damping(mu, g, r0, rc) == pytest.approx(force, rel=1e-10, abs=0)  # Bao et al. 2003
    assert cell_resistance(mu, g, r0, rc) == pytest.approx(force / (np.pi * rc**2) ** 2,
                                                           rel=1e-10, abs=0)


def test_demo_perforation_numbers():
    air = air_properties(293.15, P0)
    perf = perforation("hex", 4e-6, 20e-6, 2e-6, GAP, air.viscosity_pa_s, air.mean_free_path_m)
    assert perf.holes_per_m2 == pytest.approx(2 / (np.sqrt(3) * 20e-6**2), rel=1e-12, abs=0)
    assert perf.open_area_fraction == pytest.approx(np.pi * 16 / (np.sqrt(3) / 2 * 400), rel=1e-12, abs=0)
    assert perf.cell_radius_m**2 * np.pi == pytest.approx(lattice_cell_area(20e-6, "hex"), rel=1e-6, abs=0)
    assert perf.sink_m_per_pa_s == pytest.approx(perf.holes_per_m2 / perf.resistance_pa_s_per_m3, rel=1e-6, abs=0)


@pytest.mark.parametrize("kwargs,match", [
    (dict(lattice="tri"), "lattice"),
    (dict(hole_radius_m=11e-6), "half the pitch"),
    (dict(hole_radius_m=-1e-6), "hole_radius_m"),
    (dict(backplate_thickness_m=-1e-6), "length_m"),
    (dict(gap_m=0.0), "gap_m"),
])
def test_perforation_errors(kwargs, match):
    args = dict(lattice="hex", hole_radius_m=4e-6, hole_pitch_m=20e-6, backplate_thickness_m=2e-6,
                gap_m=GAP, viscosity_pa_s=MU, mean_free_path_m=65e-9)
    args.update(kwargs)
    with pytest.raises(PerforationError, match=match):
        perforation(**args)


@pytest.mark.parametrize("kwargs,match", [
    (dict(shape="ellipse"), "shape"),
    (dict(electrode_size_m=0.0), "electrode_size_m"),
    (dict(gap_m=-1e-6), "gap_m"),
    (dict(lattice="tri"), "lattice"),
    (dict(accuracy="best"), "accuracy"),
    (dict(mode_shape=lambda x, y: 2 * np.ones_like(x)), "normalised"),
    (dict(mode_shape=3.0), "callable"),
    (dict(frequencies_hz=[-1.0]), "frequencies_hz"),
])
def test_squeeze_input_errors(kwargs, match):
    args = dict(shape="circle", electrode_size_m=0.45e-3, gap_m=GAP, hole_radius_m=4e-6,
                hole_pitch_m=20e-6, lattice="hex", backplate_thickness_m=2e-6,
                air=air_properties(293.15, P0), mode_shape=rigid, frequencies_hz=[100.0])
    args.update(kwargs)
    with pytest.raises(SqueezeError, match=match):
        squeeze_film(**args)


# ----------------------------------------------------- perforated films, resolved holes
def _film_mesh_with_holes(outline: str, size: float, pitch: float, r: float, h: float):
    """Linear triangles of a film region minus circular holes (lengths in units of the pitch).

    outline "hexcell"/"squarecell": one lattice cell (Wigner–Seitz cell) around a hole at the
    origin; "disk": a disk of radius ``size`` with every lattice hole whose centre lies inside.
    Returns the mesh and the hole centres.
    """
    from skfem import MeshTri

    from diagap.meshes.cache import cached_arrays

    params = dict(outline=outline, size=size, pitch=pitch, r=r, h=h)
    arr = cached_arrays("test-film-holes", params,
                        lambda: _build_film_with_holes(outline, size, pitch, r, h))
    return MeshTri(np.ascontiguousarray(arr["p"]), np.ascontiguousarray(arr["t"])), arr["c"]


def _build_film_with_holes(outline, size, pitch, r, h):
    from diagap.meshes._gmsh import gmsh_session, triangles

    with gmsh_session("film-holes") as gmsh:
        occ = gmsh.model.occ
        if outline == "disk":
            body = occ.addDisk(0, 0, 0, size, size)
            n = int(size / pitch) + 2
            centres = [(pitch * (i + 0.5 * j), pitch * math.sqrt(3) / 2 * j)
                       for i in range(-2 * n, 2 * n + 1) for j in range(-n - 1, n + 2)]
            centres = [c for c in centres if math.hypot(*c) < size]
        else:
            nv, rv, a0 = (6, pitch / math.sqrt(3), math.pi / 6) if outline == "hexcell" else \
                (4, pitch / math.sqrt(2), math.pi / 4)
            pts = [occ.addPoint(rv * math.cos(a0 + 2 * math.pi * k / nv),
                                rv * math.sin(a0 + 2 * math.pi * k / nv), 0) for k in range(nv)]
            lines = [occ.addLine(pts[k], pts[(k + 1) % nv]) for k in range(nv)]
            body = occ.addPlaneSurface([occ.addCurveLoop(lines)])
            centres = [(0.0, 0.0)]
        occ.cut([(2, body)], [(2, occ.addDisk(x, y, 0, r, r)) for x, y in centres])
        occ.synchronize()
        gmsh.option.setNumber("Mesh.MeshSizeMax", h)
        gmsh.option.setNumber("Mesh.MeshSizeMin", r / 4)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 16)
        gmsh.option.setNumber("Mesh.Algorithm", 5)
        gmsh.model.mesh.generate(2)
        p, t = triangles(gmsh)
    return {"p": p, "t": t, "c": np.array(centres, dtype=float).T}


def _poisson_on_holes(mesh, centres, r, outer_radius=None):
    """∫Π for −∇²Π = 1, Π = 0 on the hole rims (and on the outer rim if given), P2 with the
    rim nodes on the circles; zero flux elsewhere (lattice-cell symmetry planes)."""
    from dataclasses import replace

    from skfem import Basis, BilinearForm, ElementTriP2, LinearForm, MeshTri2, condense, solve
    from skfem.helpers import dot, grad

    m2 = MeshTri2.from_mesh(mesh)
    facets = m2.boundary_facets()
    loc = m2.doflocs.copy()
    dofs = m2.dofs.get_facet_dofs(facets).flatten()
    x = loc[:, dofs]
    dist = np.hypot(x[0][:, None] - centres[0], x[1][:, None] - centres[1])
    hole = dist.min(axis=1) < 1.5 * r
    if outer_radius is not None:
        hole &= np.hypot(*x) < outer_radius * (1 - 1e-9)
        loc[:, dofs[~hole]] *= outer_radius / np.linalg.norm(x[:, ~hole], axis=0)
    c = centres[:, dist.argmin(axis=1)[hole]]
    v = x[:, hole] - c
    loc[:, dofs[hole]] = c + r * v / np.linalg.norm(v, axis=0)
    mid = m2.p[:, m2.facets[:, facets]].mean(axis=1)
    on_hole = np.hypot(mid[0][:, None] - centres[0],
                       mid[1][:, None] - centres[1]).min(axis=1) < 1.5 * r
    m2 = replace(m2, doflocs=loc)
    basis = Basis(m2, ElementTriP2())
    lap = BilinearForm(lambda u, v, w: dot(grad(u), grad(v))).assemble(basis)
    rhs = LinearForm(lambda v, w: v).assemble(basis)
    fixed = facets if outer_radius is not None else facets[on_hole]
    u = solve(*condense(lap, rhs, D=basis.get_dofs(fixed)))
    return rhs @ u


@pytest.mark.parametrize("lattice,ratio,tol", [("hex", 0.1, 0.01), ("hex", 0.2, 0.01),
                                               ("square", 0.2, 0.04)])
def test_bao_cell_damping_vs_fe_of_the_actual_cell(lattice, ratio, tol):
    """FE of one real lattice cell (hexagon/square with a hole at zero pressure, symmetry planes
    at the cell sides) vs the equal-area-circle formula of Škvor / Bao et al. 2003.

    Measured FE/formula − 1: hex r/p = 0.1: +0.13 %, r/p = 0.2: +0.35 % (hex r/p = 0.35, 44 %
    open area: +2.4 %); square r/p = 0.2: +2.9 % — the circle of equal area fits the hexagon
    far better than the square, hence the wider tolerance there (a model error of the cell
    formula, not part of the discretisation estimate).
    """
    mesh, centres = _film_mesh_with_holes(f"{lattice}cell", 0.0, 1.0, ratio, 0.05)
    fe = _poisson_on_holes(mesh, centres, ratio)  # in units of 12 μ v p⁴ / g³
    rc = math.sqrt(lattice_cell_area(1.0, lattice) / math.pi)
    bao = cell_damping(1.0 / 12.0, 1.0, ratio, rc)  # μ = 1/12, g = 1: same units
    assert fe / bao - 1 == pytest.approx(0.0, abs=tol)
    assert fe > bao  # the circle of equal area drains slightly better than the real cell


def test_distributed_sink_vs_resolved_holes():
    """Homogenised perforation (sink n_h/R_cell, ideal holes) vs a film with every hole resolved.

    Electrode radius 5 pitches, hex lattice, r/p = 0.2, holes at zero pressure, vented rim.
    The difference comes from the ragged rim (cells cut by the rim); it falls with electrode
    size (bench: 3.9 % at 3 pitches, 1.3 % at 5 and 8 pitches).
    """
    radius, ratio = 5.0, 0.2
    mesh, centres = _film_mesh_with_holes("disk", radius, 1.0, ratio, 0.15)
    resolved = _poisson_on_holes(mesh, centres, ratio, outer_radius=radius)
    mu, g = 1.0 / 12.0, 1.0  # scaled: damping in units of 12 μ v p⁴ / g³
    rc = math.sqrt(lattice_cell_area(1.0, "hex") / math.pi)
    sink = 1.0 / (lattice_cell_area(1.0, "hex") * cell_resistance(mu, g, ratio, rc))
    model = film_impedance("circle", radius, g, mu, 1e30, sink, rigid, [0.0])
    assert model.damping_n_s_per_m / resolved - 1 == pytest.approx(0.0, abs=0.03)


def test_demo_estimate_is_honest_against_fine_solution():
    air = air_properties(293.15, P0)
    args = ("circle", 0.45e-3, GAP, 4e-6, 20e-6, "hex", 2e-6, air, clamped_shape(0.5e-3),
            [1e3])
    normal = squeeze_film(*args, accuracy="normal")
    fine = squeeze_film(*args, accuracy="fine")
    err = abs(normal.damping_n_s_per_m - fine.damping_n_s_per_m)
    assert err <= 3 * normal.damping_uncertainty_n_s_per_m
    assert normal.damping_relative_uncertainty < 1e-2
    assert fine.damping_uncertainty_n_s_per_m < normal.damping_uncertainty_n_s_per_m
    # the perforation lowers the damping by orders of magnitude (Bao et al. 2003 trend)
    solid = squeeze_film("circle", 0.45e-3, GAP, 0, 0, "none", 2e-6, air,
                         clamped_shape(0.5e-3), [1e3], accuracy="draft")
    assert normal.damping_n_s_per_m < 0.01 * solid.damping_n_s_per_m


def test_summary_section_and_squeeze_number():
    air = air_properties(293.15, P0)
    res = squeeze_film("square", 0.9e-3, GAP, 4e-6, 20e-6, "square", 2e-6, air, rigid,
                       [100.0, 1e3], accuracy="draft")
    summary = res.to_summary(resonance_hz=1e4)
    assert summary["damping_n_s_per_m"] == res.damping_n_s_per_m
    assert [row[0] for row in summary["damping_vs_frequency"]] == [100.0, 1e3]
    mu_eff = film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, GAP)
    # Blech 1983: σ = 12 μ ω L² / (p0 g²), L the side of the square
    sigma = 12 * mu_eff * 2 * np.pi * 1e4 * 0.9e-3**2 / (P0 * GAP**2)
    assert summary["squeeze_number_at_resonance"] == pytest.approx(sigma, rel=1e-12, abs=0)
    assert summary["perforation"]["lattice"] == "square"
    assert summary["knudsen_number"] == pytest.approx(air.mean_free_path_m / GAP, rel=1e-6, abs=0)
    assert summary["resonance_to_cutoff_ratio"] == pytest.approx(1e4 / res.cutoff_frequency_hz, rel=1e-6, abs=0)
    assert res.to_summary()["squeeze_number_at_resonance"] is None
