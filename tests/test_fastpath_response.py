"""The response section from fast pieces, and the radial film table, against the full analysis.

References:

- the full pipeline (:func:`diagap.pipeline.run_design`, same design, "draft", run in the test):
  every numeric response output the fast path gives within 0.01 dB (levels) or 1e-3 relative,
  with the pipeline's own mechanics, electrostatics, coupled and damping outputs and device C(x)
  fed in (the tables are not built in the default suite), and the set of outputs equal to the
  pipeline's less the documented left-out ones;
- the squeeze film of a rigid disk, b = 3πμa⁴/(2g³) (J. J. Blech, "On isothermal squeeze
  films", J. Lubrication Technol. 105 (1983) 615; W. S. Griffin, H. H. Richardson &
  S. Yamanami, "A study of fluid squeeze-film damping", J. Basic Eng. 88 (1966) 451
  [from memory]), and its compressible, perforated form for a uniformly moving disk,
  −∇²Π + cΠ = 1, Π(1) = 0: ∫Πρdρ = (1/c)(1/2 − I₁(√c)/(√c I₀(√c))) (the Bessel solution
  of the same papers, complex c [from memory]);
- the two-dimensional P2 film operator of the stage (:mod:`diagap.fem.response.film`) on the
  same shape: the radial film within 1e-4 relative at every frequency of the table.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import iv

from diagap import demo_design, with_overrides
from diagap.fastpath import FastPathUnavailable
from diagap.fastpath.field import static_shape
from diagap.fastpath.filmspectrum import FilmSpectrum, _System, radial_mesh
from diagap.fastpath.response import fast_lumped_model, model_outputs, response_outputs
from diagap.fem.response.film import FilmCoefficients

LEVEL_DB, REL = 0.01, 1e-3
ACCURACY = "draft"
#: outputs the fast path leaves out (module docstring of diagap.fastpath.response)
LEFT_OUT = ("response.distributed_", "response.reduction_error_", "response.lumped_peak_")
_OVERLOAD = ("response.capsule_aop_db_spl", "response.aop_db_spl", "response.dynamic_range_db")


def is_level(name: str) -> bool:
    return "_db" in name or "dba" in name


def _tau(design) -> float:
    d = design.diaphragm
    nu = d.poisson_ratio
    bend = d.youngs_modulus_pa * d.thickness_m**3 / (12.0 * (1.0 - nu * nu))
    return d.residual_stress_pa * d.thickness_m * d.size_m**2 / bend


def _stage_shape(design, mech):
    """The fast path's shape (closed form × the FE's departure at the shape table's radii),
    with the departure read from this run's plate FE instead of the shape table."""
    from diagap.fastpath.shape import SHAPE_POINTS, shape_correction

    a, tau = design.diaphragm.size_m, _tau(design)
    u = np.array(SHAPE_POINTS)
    q = mech.static_shape(u * a, 0.0 * u) / static_shape(u, tau)
    corr = shape_correction(lambda x: q, tau)
    return lambda v: static_shape(v, tau) * (1.0 + corr(np.asarray(v, float)))


def _stage_hole_resistance(design):
    """The stage film's per-hole resistance (the Stokes cell at the design's accuracy, as in
    the damping stage)."""
    from diagap.fem.air import air_properties
    from diagap.fem.film.perforation import perforation

    b = design.backplate
    if b.hole_lattice == "none":
        return None
    air = air_properties(*design.air_conditions)
    return perforation(b.hole_lattice, b.hole_radius_m, b.hole_pitch_m, b.thickness_m, b.gap_m,
                       air.viscosity_pa_s, air.mean_free_path_m,
                       accuracy=design.analysis.accuracy).resistance_pa_s_per_m3


def _pipeline(design):
    from diagap.pipeline import run_design
    from diagap.sweep.point import flatten_summary

    res = run_design(design, parallel=False)
    flat, _ = flatten_summary(res.summary())
    return res, {k: v for k, v in flat.items() if v is not None and not isinstance(v, bool)}


def _compare(fast: dict, ref: dict) -> list:
    bad = []
    for k, v in fast.items():
        r = ref[k]
        dev = abs(v - r) if is_level(k) else abs(v - r) / abs(r) if r else abs(v)
        if dev > (LEVEL_DB if is_level(k) else REL):
            bad.append((k, v, r, dev))
    return bad


DESIGNS = {
    "demo": {},
    "packaged": "packaged",
    # no holes: the film's cut-off (≈ 30 kHz) inside the band, b(f) and k(f) vary in band
    "solid_backplate": {"backplate.hole_lattice": "none", "backplate.hole_radius": None,
                        "backplate.hole_pitch": None, "backplate.gap": "3 um"},
}


def _design(name):
    spec = DESIGNS[name]
    if spec == "packaged":
        from pathlib import Path

        from diagap import load_design

        path = Path(__file__).resolve().parents[1] / "examples" / "packaged.toml"
        return load_design(path).with_accuracy(ACCURACY)
    return with_overrides(demo_design().with_accuracy(ACCURACY), spec)


@pytest.mark.parametrize("name", list(DESIGNS))
def test_response_from_fast_pieces_matches_pipeline(name):
    design = _design(name)
    res, ref = _pipeline(design)
    es = res.sections["electrostatics"]
    inputs = {k: v for k, v in ref.items()
              if k.split(".", 1)[0] in ("mechanics", "electrostatics", "coupled", "damping")}
    model, film_err = fast_lumped_model(design, inputs, es.objects["device"],
                                        _stage_shape(design, res.mechanics),
                                        _stage_hole_resistance(design))
    assert film_err < 1e-6
    stage = res.lumped_model
    for field in ("stiffness_n_per_m", "electrostatic_stiffness_n_per_m", "mass_kg", "area_m2",
                  "rest_capacitance_f", "capacitance_slope_f_per_m", "bias_displacement_m"):
        assert getattr(model, field) == pytest.approx(getattr(stage, field), rel=1e-9, abs=0)
    # the film table: the stage's 2-D film on the FE shape (its own error ~5e-5)
    f = np.asarray(stage.film_damping.frequency_hz)
    for fast_v, stage_v in zip(model.film(f), stage.film(f)):
        np.testing.assert_allclose(fast_v, stage_v, rtol=2e-4, atol=0)
    fast = model_outputs(design, model)
    expected = {k for k in ref if k.startswith("response.") and not k.startswith(LEFT_OUT)}
    if "response.aop_10pct_spl_db" not in ref:
        expected -= set(_OVERLOAD)
    assert set(fast) == expected
    assert _compare(fast, ref) == []
    for key in ("response.sensitivity_db_v_per_pa", "response.noise_dba_spl", "response.snr_db"):
        assert fast[key] == pytest.approx(ref[key], rel=0, abs=LEVEL_DB)


def test_not_covered_is_one_line():
    from dataclasses import replace

    design = replace(demo_design().with_accuracy(ACCURACY), electrical=None)
    with pytest.raises(FastPathUnavailable, match="electrical"):
        response_outputs(design, {})
    with pytest.raises(FastPathUnavailable, match="coupled.bias_center_deflection_m"):
        response_outputs(demo_design().with_accuracy(ACCURACY),
                         {"mechanics.static_shape_stiffness_n_per_m": 1.0,
                          "mechanics.static_shape_mass_kg": 1.0,
                          "mechanics.static_shape_area_m2": 1.0,
                          "damping.damping_n_s_per_m": 1.0})


# ---------------------------------------------------------------- the radial film
MU, GAP, L = 1.8e-5, 4e-6, 0.45e-3


def _rigid(u):
    return np.ones_like(np.asarray(u, float))


def test_rigid_disk_squeeze_film():
    """Blech 1983 / Griffin, Richardson & Yamanami 1966: b = 3πμL⁴/(2g³)."""
    coef = FilmCoefficients(gap_m=GAP, film_viscosity_pa_s=MU, static_pressure_pa=1e5)
    z, err = FilmSpectrum(coef, L, _rigid, 1.0).impedance([0.0])
    assert z[0].real == pytest.approx(3 * math.pi * MU * L**4 / (2 * GAP**3), rel=1e-9, abs=0)
    assert err[0] < 1e-9


def _bessel_functional(c: complex) -> complex:
    """∫Πρdρ of −∇²Π + cΠ = 1, Π(1) = 0 (module docstring)."""
    k = np.sqrt(complex(c))
    return (0.5 - iv(1, k) / (k * iv(0, k))) / c


def test_rigid_disk_compressible_perforated():
    """The uniformly moving disk with holes and compression, inertia off, against the Bessel
    solution at every frequency (Z = 2πL⁴/Y · ∫Πρdρ)."""
    coef = FilmCoefficients(gap_m=GAP, film_viscosity_pa_s=MU, static_pressure_pa=1e5,
                            holes_per_m2=3e9, hole_resistance_pa_s_per_m3=1.4e12,
                            inertia=False)
    f = np.logspace(0, 5, 11)
    z, _ = FilmSpectrum(coef, L, _rigid, 1.0).impedance(2 * np.pi * f)
    y = GAP**3 / (12 * MU)
    for fi, zi in zip(f, z):
        w = 2 * np.pi * fi
        c = (coef.sink(w) + coef.compression(w)) * L**2 / y
        ref = 2 * math.pi * L**4 / y * _bessel_functional(c)
        assert abs(zi - ref) / abs(ref) < 1e-6


def test_radial_film_converges_as_h4():
    """P2 on the graded mesh: the functional's error falls by 2⁴ per halving (Bessel reference
    with a boundary layer at the rim)."""
    c = 400.0 + 900.0j
    ref = _bessel_functional(c)
    layer = 1.0 / math.sqrt(abs(c))
    errs = [abs(_System(radial_mesh(layer, r), _rigid).functional(np.array([c]))[0] - ref)
            / abs(ref) for r in (1, 2, 4)]
    rates = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    assert errs[0] < 1e-5
    assert all(3.7 < r < 4.3 for r in rates), (errs, rates)


@pytest.mark.parametrize("tau,eps,holes", [(178.4, 0.9, True), (-20.0, 0.8, False),
                                           (3000.0, 1.0, True)])
def test_radial_film_matches_2d_operator(tau, eps, holes):
    """The stage's 2-D P2 film operator (its mesh family and level for the lumped film) on the
    same closed-form shape: within 1e-4 at every frequency of the table."""
    from diagap.fem.response.coupled import F_MAX_HZ, FILM_FAMILY, FILM_LEVELS
    from diagap.fem.response.film import film_layer, film_operator
    from diagap.fastpath.film import SPECTRUM_HZ
    from diagap.fastpath.filmspectrum import film_spectrum

    a = L / eps
    extra = dict(holes_per_m2=2.9e9, hole_resistance_pa_s_per_m3=1.44e12,
                 hole_inertance_kg_per_m4=1.2e8) if holes else {}
    coef = FilmCoefficients(gap_m=GAP, film_viscosity_pa_s=MU, static_pressure_pa=101325.0,
                            **extra)
    f = np.asarray(SPECTRUM_HZ)
    layer = film_layer(coef, L, F_MAX_HZ)
    fo = film_operator("circle", FILM_FAMILY[ACCURACY], layer, FILM_LEVELS[1], L)
    z2 = fo.impedance_spectrum(coef, 2 * np.pi * f,
                               static_shape(np.hypot(fo.xq_m, fo.yq_m) / a, tau))
    b, k, err = film_spectrum(coef, L, lambda u: static_shape(u, tau), eps, f, tau)
    z1 = b - 1j * k / (2 * np.pi * f)
    assert np.max(err) < 1e-6
    assert np.max(np.abs(z1 - z2) / np.abs(z2)) < 1e-4


# ---------------------------------------------------------------- with the tables
def _random_design(rng):
    d = demo_design().with_accuracy(ACCURACY)
    a = rng.uniform(0.5e-3, 0.65e-3)  # radius/gap > 100: the rim table's range
    return with_overrides(d, {
        "diaphragm.radius": f"{a * 1e3:.4f} mm",
        "diaphragm.residual_stress": f"{rng.uniform(5.0, 40.0):.3f} MPa",
        "backplate.electrode_radius": f"{a * rng.uniform(0.75, 0.95) * 1e3:.4f} mm",
        "backplate.gap": f"{rng.uniform(3.5, 4.5):.3f} um",
        "electrical.bias_voltage": f"{rng.uniform(4.0, 10.0):.3f} V",
    })


@pytest.mark.tables
def test_fast_summary_response_matches_pipeline():
    """~5 random clamped circles: ``fast_summary``'s response outputs against the pipeline.
    Where the fast path has no coupled section yet, the pipeline's coupled outputs are fed in.
    Builds every "draft" table on first use (the flow-cell table of the damping: thousands of
    Stokes solves, hours on two busy cores)."""
    from diagap.fastpath import fast_summary
    from diagap.fastpath.refine import mapper_for
    from diagap.fastpath.response import covered_response_outputs

    rng = np.random.default_rng(7)
    mapper = mapper_for()
    checked = 0
    for _ in range(5):
        design = _random_design(rng)
        res, ref = _pipeline(design)
        if res.collapsed:
            continue
        fast = fast_summary(design, mapper=mapper)
        if "coupled.bias_center_deflection_m" not in fast:
            fast.update({k: v for k, v in ref.items() if k.startswith("coupled.")})
            fast.update(covered_response_outputs(design, fast, mapper))
        resp = {k: v for k, v in fast.items() if k.startswith("response.")}
        assert "response.sensitivity_db_v_per_pa" in resp
        assert _compare(resp, ref) == []
        checked += 1
    assert checked >= 3
