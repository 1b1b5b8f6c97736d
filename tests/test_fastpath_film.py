"""The damping section from the scaled cell table and the radial film, against the full stage.

References:

- the full damping stage itself (``solve_plate`` + ``damping_stage``, same design and accuracy,
  run in the test): every numeric output within 1e-3 relative (0.01 dB for levels), those
  carrying the tabulated Stokes resistance within the cell table's held-out error
  (:data:`diagap.fastpath.film.CELL_TOL`);
- the squeeze film of a rigid disk, b = 3πμa⁴/(2g³) (W. E. Langlois, "Isothermal squeeze
  films", Quart. Appl. Math. 20 (1962) 131 [from memory]), and of a uniformly moving disk
  with a uniform hole sink α, J = (π/α)(1 − 2 I₁(√α)/(√α I₀(√α))) — the Bessel solution of
  −∇²Π + αΠ = 1, Π(1) = 0 (the perforated-disk form of M. Bao & H. Yang, "Squeeze film air
  damping in MEMS", Sensors and Actuators A 136 (2007) 3, §4 [from memory]);
- the clamped plate under uniform pressure, w = p(a² − r²)²/(64D) (Timoshenko &
  Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, §62, eq. 62 [from memory]),
  and with tension T the I₀ solution of D∇⁴w − T∇²w = p, w = w' = 0 at r = a, written out in
  the test;
- the Hagen–Poiseuille law with first-order Maxwell slip, Q = πr⁴Δp/(8μℓ)·(1 + 4λ/r)
  (G. Karniadakis, A. Beskok, N. Aluru, Microflows and Nanoflows, Springer 2005, §4.1
  [from memory]): the resistance added per length of a long hole.

The checks that need the perforation-cell table (a build of some 10⁴ Stokes solves, tens of
minutes on two cores, too long for the suite's fresh cache) are marked ``tables`` (20 random
designs against the full stage, run with ``pytest -m tables``) or in
tests/bench/bench_fastpath_film.py: more random designs, the demo's fast summary and its time
per evaluation, and the slip Hagen–Poiseuille check of long holes.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import iv

from diagap import demo_design, with_overrides
from diagap.design import DesignError
from diagap.fastpath import FastPathUnavailable
from diagap.fastpath.film import damping_outputs
from diagap.fastpath.grid import is_level_db
from diagap.fastpath.radial import RadialFilm, static_shape

TOL = 1e-3
ACCURACY = "draft"


def random_design(rng, accuracy: str = ACCURACY):
    """A valid design inside the validated range: perforation, gap, air, stress, electrode."""
    from diagap.fastpath.flowcell import CELL_RADIUS_OVER_PITCH
    from diagap.fem.air import air_properties

    while True:
        lattice = str(rng.choice(["hex", "square"]))
        pitch = math.exp(rng.uniform(math.log(10e-6), math.log(200e-6)))
        rc = CELL_RADIUS_OVER_PITCH[lattice] * pitch
        radius = rc * math.exp(rng.uniform(math.log(0.16), math.log(0.74)))
        gap = rc * math.exp(rng.uniform(math.log(0.105), math.log(0.95)))
        thickness = rc * math.exp(rng.uniform(math.log(0.11), math.log(3.8)))
        temp = rng.uniform(250.0, 400.0)
        p0 = math.exp(rng.uniform(math.log(20e3), math.log(200e3)))
        lam = air_properties(temp, p0).mean_free_path_m
        if not (1.2e-3 < lam / gap < 0.09 and lam / radius < 0.5 and 0.5e-6 < gap < 60e-6):
            continue
        changes = {
            "analysis.accuracy": accuracy,
            "backplate.hole_lattice": lattice,
            "backplate.hole_pitch": f"{pitch * 1e6:.6g} um",
            "backplate.hole_radius": f"{radius * 1e6:.6g} um",
            "backplate.gap": f"{gap * 1e6:.6g} um",
            "backplate.thickness": f"{thickness * 1e6:.6g} um",
            "backplate.electrode_radius": f"{rng.uniform(0.3, 0.5):.4g} mm",
            "diaphragm.residual_stress": f"{math.exp(rng.uniform(0.0, math.log(200.0))):.4g} MPa",
            "acoustics.temperature": f"{temp:.6g} K",
            "acoustics.static_pressure": f"{p0:.6g} Pa",
        }
        try:
            return with_overrides(demo_design(), changes)
        except DesignError:
            continue


def stage_outputs(design) -> tuple[dict, dict, float]:
    """(flat damping outputs of the full stage, FE mechanics outputs, resonance used)."""
    from diagap.extract import plate_problem
    from diagap.fem.plate.solver import solve_plate
    from diagap.stages import damping_stage
    from diagap.sweep.point import flatten_summary

    acc = design.analysis.accuracy
    mech = solve_plate(plate_problem(design), accuracy=acc)
    f1 = float(mech.natural_frequencies_hz[0])
    flat, _ = flatten_summary({"damping": damping_stage(design, mech, f1).data})
    return flat, {"mechanics.static_shape_area_m2": mech.static_shape_area_m2}, f1


#: outputs that carry the tabulated cell resistance: held to the cell table's tolerance
RESISTANCE_BORNE = ("damping_n_s_per_m", "cutoff_frequency_hz", "decay_length_m",
                    "resonance_to_cutoff_ratio", "resistance_per_hole_pa_s_per_m3",
                    "hole_resistance_pa_s_per_m3", "mechanical_noise_dba_spl",
                    "force_noise_n_per_rthz")


def errors(fast: dict, full: dict) -> dict:
    """Error of each output in units of its allowed error (1: at the limit): 1e-3 relative
    (0.01 dB) for closed forms and the film, the cell table's CELL_TOL where the Stokes
    resistance enters."""
    from diagap.fastpath.film import CELL_TOL

    out = {}
    for k, v in fast.items():
        ref = full[k]
        e = abs(v - ref) / (0.01 / TOL) if is_level_db(k) else abs(v - ref) / abs(ref)
        tol = CELL_TOL if k.rsplit(".", 1)[-1] in RESISTANCE_BORNE else TOL
        out[k] = e / tol
    return out


# ------------------------------------------------------------------------ outside references
def test_rigid_and_perforated_disk_closed_forms():
    """φ = 1 (ε → 0): no holes gives Langlois' 3πμa⁴/(2g³) (J = π/8 in the scaled form), a
    uniform sink α the Bessel solution; both to 1e-8."""
    assert RadialFilm(0.0, 1e-9, 0.0).response(0j).real == pytest.approx(math.pi / 8, rel=1e-8,
                                                                          abs=0)
    for alpha in (3.0, 120.0, 1.3e4):
        q = math.sqrt(alpha)
        ref = math.pi / alpha * (1.0 - 2.0 * iv(1, q) / (q * iv(0, q)))
        assert RadialFilm(alpha, 1e-9, 0.0).response(0j).real == pytest.approx(ref, rel=1e-8,
                                                                                abs=0)


def test_static_shape_closed_forms():
    """τ = 0: (1 − u²)² (Timoshenko & Woinowsky-Krieger 1959, eq. 62); τ > 0: the I₀ form
    written out here from the plate equation, on both sides of the series/Bessel switch."""
    u = np.linspace(0.0, 0.97, 9)
    np.testing.assert_allclose(static_shape(u, 0.0), (1 - u**2) ** 2, rtol=1e-12, atol=0)
    for tau in (0.5, 29.0, 31.0, 800.0):
        k = math.sqrt(tau)

        def w(x):
            return (1 - x**2) / (4 * tau) - (iv(0, k) - iv(0, k * x)) / (2 * tau * k * iv(1, k))

        np.testing.assert_allclose(static_shape(u, tau), w(u) / w(0.0), rtol=1e-9, atol=0)


# ------------------------------------------------------------------- against the full stage
def test_radial_film_matches_the_full_stage_without_holes():
    """The radial film on the closed-form shape against the stage's 2-D film FE on the plate
    FE's shape (no tables): damping, gas spring and cut-off within 1e-3. The plate FE's own
    shape error (4e-4 at "draft") is inside; :mod:`diagap.fastpath.shape` removes it."""
    from diagap.fastpath.radial import RadialFilm
    from diagap.fem.air import air_properties
    from diagap.fem.film.perforation import film_viscosity

    design = with_overrides(demo_design(), {"analysis.accuracy": ACCURACY,
                                            "backplate.hole_lattice": "none",
                                            "backplate.hole_radius": None,
                                            "backplate.hole_pitch": None})
    full, _, _ = stage_outputs(design)
    d, b = design.diaphragm, design.backplate
    air = air_properties(*design.air_conditions)
    mu = film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, b.gap_m)
    tau = d.residual_stress_pa * d.thickness_m * d.size_m**2 * 12 * (1 - d.poisson_ratio**2) \
        / (d.youngs_modulus_pa * d.thickness_m**3)
    film = RadialFilm(0.0, b.electrode_size_m / d.size_m, tau)
    length, g, p0 = b.electrode_size_m, b.gap_m, air.static_pressure_pa
    damping = 12 * mu * length**4 / b.gap_m**3 * film.response(0j).real
    assert damping == pytest.approx(full["damping.damping_n_s_per_m"], rel=TOL, abs=0)
    spring = p0 * length**2 * film.shape_square_integral() / g
    assert spring == pytest.approx(full["damping.gas_spring_stiffness_n_per_m"], rel=TOL, abs=0)
    cutoff = film.cutoff() * p0 * g**2 / (24 * math.pi * mu * length**2)
    assert cutoff == pytest.approx(full["damping.cutoff_frequency_hz"], rel=TOL, abs=0)


@pytest.mark.parametrize("changes, field", [
    ({"backplate.hole_radius": "9.5 um"}, "backplate.hole_radius / cell radius"),  # 0.90
    ({"backplate.thickness": "70 um"}, "backplate.thickness / cell radius"),
    ({"diaphragm.edge": "simply-supported"}, "diaphragm: shape 'circle', edge"),
])
def test_outside_the_range_is_one_line_naming_the_field(changes, field):
    design = with_overrides(demo_design(), changes)
    with pytest.raises(FastPathUnavailable) as info:
        damping_outputs(design, {"mechanics.static_shape_area_m2": 1e-7})
    msg = str(info.value)
    assert field in msg and "\n" not in msg


def test_summary_calls_do_not_build_tables(monkeypatch):
    """Without a mapper the damping tables are only read: with nothing stored the damping
    outputs are left out at once instead of a table build."""
    from diagap.fastpath import store
    from diagap.fastpath.film import covered_damping_outputs
    from diagap.meshes import cache

    monkeypatch.setattr(store, "_HELD", {})
    monkeypatch.setattr(cache, "enabled", lambda: False)
    design = with_overrides(demo_design(), {"analysis.accuracy": "fine"})
    assert covered_damping_outputs(design, {"mechanics.static_shape_area_m2": 2e-7}) == {}


def test_shape_table_axis_spans_the_plate_model_range():
    """The τ axis of the static-shape correction covers −0.9 τ_b ≤ τ ≤ 1e4 (τ_b = j₁,₁², the
    clamped disk's buckling ratio, Timoshenko & Gere 1961 §9.2 [from memory]) with a segment
    end at τ = 0."""
    import math

    from diagap.fastpath.shape import tau_axis

    axis = tau_axis("draft")
    tb = 14.681970642123893
    ends = [math.exp(b) - tb for b in axis.breaks]
    assert ends[0] == pytest.approx(-0.9 * tb, rel=1e-12, abs=0)
    assert ends[-1] == pytest.approx(1e4, rel=1e-12, abs=0)
    assert min(abs(e) for e in ends) < 1e-9 * tb


# ------------------------------------------------------------------ the radial solve itself
def _reference_response(nodes: np.ndarray, eps: float, tau: float, correction, c: complex
                        ) -> complex:
    """J_h = Fᵀ Π_h on the given nodes, written out: P1 elements of −(ρΠ')'/ρ + cΠ = φ(ερ),
    Π(1) = 0, ρ-weighted stiffness and mass integrated by 4-point Gauss (exact for them), the
    load by the 3-point Gauss rule of the fast solver, one sparse direct solve per c."""
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    a, b = nodes[:-1], nodes[1:]
    h = b - a
    n = nodes.size
    rows, cols, vals = [], [], []
    x4, w4 = np.polynomial.legendre.leggauss(4)
    load = np.zeros(n)
    x3, w3 = np.polynomial.legendre.leggauss(3)
    for e in range(a.size):
        rho = 0.5 * (a[e] + b[e]) + 0.5 * h[e] * x4
        wq = 0.5 * h[e] * w4 * rho
        shape = [(b[e] - rho) / h[e], (rho - a[e]) / h[e]]
        grad = [-1.0 / h[e], 1.0 / h[e]]
        for i in range(2):
            for j in range(2):
                rows.append(e + i)
                cols.append(e + j)
                vals.append(np.sum(wq * (grad[i] * grad[j] + c * shape[i] * shape[j])))
        rho3 = 0.5 * (a[e] + b[e]) + 0.5 * h[e] * x3
        w = 0.5 * h[e] * w3 * rho3
        phi = static_shape(eps * rho3, tau) * (1.0 + correction(eps * rho3))
        load[e] += np.sum(w * phi * (b[e] - rho3) / h[e])
        load[e + 1] += np.sum(w * phi * (rho3 - a[e]) / h[e])
    k = sp.csc_matrix((np.array(vals, complex), (rows, cols)), shape=(n, n))[:-1, :-1]
    sol = spla.spsolve(k.tocsc(), load[:-1].astype(complex))
    return complex(2.0 * math.pi * load[:-1] @ sol)


@pytest.mark.parametrize("alpha, eps, tau", [(0.0, 0.8, 3.0), (250.0, 0.55, 400.0),
                                             (4.0e4, 1.0, -12.0)])
def test_radial_solve_matches_a_direct_solve_per_frequency(alpha, eps, tau):
    """The tridiagonal solves of the radial film (both meshes, Richardson) reproduce a
    straightforward sparse assembly and solve per frequency on the same nodes to 1e-9."""
    def correction(u):
        return -2e-3 * np.asarray(u) ** 6

    film = RadialFilm(alpha, eps, tau, correction)
    s = np.array([0.0, 0.3j, 30j, 3e3j, 3e5j])
    fast = film.responses(s)
    for v, got in zip(s, fast):
        c = alpha + v
        coarse, fine = film._pair(c)
        ref = (4 * _reference_response(fine.x, eps, tau, correction, c)
               - _reference_response(coarse.x, eps, tau, correction, c)) / 3
        assert abs(got - ref) <= 1e-9 * abs(ref), (v, got, ref)


def test_noise_from_the_audio_band_slice_equals_the_whole_spectrum(monkeypatch):
    """The A-weighted mechanical noise from the slice of the spectrum the level reads equals the
    level from all 51 frequencies (each solved on its own), and the force noise is 4kT·b(1 Hz)."""
    import diagap.fastpath.film as film_mod
    from diagap.fem.air import air_properties
    from diagap.fem.constants import BOLTZMANN_J_PER_K
    from diagap.fem.film.perforation import film_viscosity
    from diagap.lumped.noise import mechanical_thermal_noise

    def correction(u):
        return -1e-3 * np.asarray(u) ** 4

    monkeypatch.setattr(film_mod, "_correction", lambda design, tau, mapper: correction)
    design = with_overrides(demo_design(), {"analysis.accuracy": ACCURACY,
                                            "backplate.hole_lattice": "none",
                                            "backplate.hole_radius": None,
                                            "backplate.hole_pitch": None,
                                            "backplate.gap": "3 um"})
    area = 2e-7
    fast = damping_outputs(design, {"mechanics.static_shape_area_m2": area})
    d, b = design.diaphragm, design.backplate
    temperature_k, p0 = design.air_conditions
    air = air_properties(temperature_k, p0)
    mu = film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, b.gap_m)
    tau = d.residual_stress_pa * d.thickness_m * d.size_m**2 * 12 * (1 - d.poisson_ratio**2) \
        / (d.youngs_modulus_pa * d.thickness_m**3)
    film = RadialFilm(0.0, b.electrode_size_m / d.size_m, tau, correction)
    length, g = b.electrode_size_m, b.gap_m
    sig = 12 * mu * length**2 / (p0 * g**2) * 2 * math.pi * film_mod.SPECTRUM_HZ
    spectrum = 12 * mu * length**4 / g**3 * np.array([film.response(1j * v).real for v in sig])
    assert spectrum[-1] < 0.99 * spectrum[0]  # the film does roll off inside the spectrum
    level = mechanical_thermal_noise(film_mod.SPECTRUM_HZ, spectrum, temperature_k,
                                     area).a_weighted_spl_db()
    assert fast["damping.mechanical_noise_dba_spl"] == pytest.approx(level, rel=1e-9, abs=0)
    force = math.sqrt(4 * BOLTZMANN_J_PER_K * temperature_k * spectrum[0])
    assert fast["damping.force_noise_n_per_rthz"] == pytest.approx(force, rel=1e-7, abs=0)


# ------------------------------------------------------ random designs (tables, on purpose)
@pytest.mark.tables
def test_random_designs_match_the_stage_within_1e3():
    """20 random designs inside the validated range (perforation, gap, air, stress,
    electrode): every damping output within 1e-3 relative (0.01 dB for the noise level) of
    ``solve_plate`` + ``damping_stage`` at "draft"; builds (or reads) the draft cell and shape
    tables."""
    from diagap.fastpath.film import prepare_damping_tables

    prepare_damping_tables(ACCURACY)
    rng = np.random.default_rng(20261203)
    worst = 0.0
    for _ in range(20):
        design = random_design(rng)
        full, mech, f1 = stage_outputs(design)
        fast = damping_outputs(design, mech, resonance_hz=f1)
        assert len(fast) >= 15
        for key, value in fast.items():
            if is_level_db(key):
                assert abs(value - full[key]) <= 0.01, (key, value, full[key])
            else:
                assert value == pytest.approx(full[key], rel=TOL, abs=0), (key, design.backplate)
                worst = max(worst, abs(value / full[key] - 1.0))
    assert worst > 0.0  # the fast path is an approximation, not the stage itself
