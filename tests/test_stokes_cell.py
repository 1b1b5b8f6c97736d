"""Axisymmetric Stokes flow cell of the perforation (fem.film.stokes, meshes.flow_cell).

External references (each check names its source beside it):
* Hagen–Poiseuille: ΔP = 8μLQ/(πa⁴) for fully developed flow in a circular tube (any fluid
  mechanics text, e.g. White, Viscous Fluid Flow, McGraw-Hill, 1991, eq. 3-52 [from memory]);
  with first-order (Maxwell) slip of slip length ℓ: Q = πa⁴ΔP/(8μL)·(1 + 4ℓ/a)
  (Karniadakis, Beskok & Aluru, Microflows and Nanoflows, Springer 2005, ch. 4 [from memory]).
* Sampson, Phil. Trans. R. Soc. A 182 (1891) 449: creeping flow through a circular hole in a
  plane wall of zero thickness, ΔP = 3μQ/a³.
* Veijola, Kuisma, Lahdenperä, Ryhänen, Sensors and Actuators A 48 (1995) 239: rarefied film,
  flow-rate factor 1 + 9.638 Kn^1.159.
* Škvor (1969) / Bao et al., J. Micromech. Microeng. 13 (2003) 795: per-cell damping of the
  annular Reynolds film, b = (3πμ r_c⁴/2g³)(4A − A² − 2 ln A − 3), A = (a/r_c)²; written out
  here from those inputs (lubrication theory, exact as g/a → 0).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap.fem.air import air_properties
from diagap.fem.film.perforation import PerforationError, perforation
from diagap.fem.film.squeeze import SqueezeError, squeeze_film
from diagap.fem.film.stokes import (ORDER, StokesCellError, cell_flow_resistance,
                                    scaled_cell_resistance, scaled_cell_resistances,
                                    slip_length)
from diagap.meshes.flow_cell import FlowCellGeometry

MU = 1.8e-5  # Pa·s
SQRT_PI = math.sqrt(math.pi)


def square_pitch(cell_radius_m: float) -> float:
    """Pitch of the square lattice whose equal-area circle has the given radius."""
    return SQRT_PI * cell_radius_m


def demo_cell(rc_over_g: float = math.sqrt(math.sqrt(3) / 2 * 400 / math.pi) / 4):
    """The demo cell in gap units: g = r = 4 µm, t = 2 µm, hex pitch 20 µm, H = pitch."""
    return FlowCellGeometry(rc_over_g, 1.0, 0.5, 5.0)


# ------------------------------------------------------------------------ Hagen–Poiseuille
@pytest.mark.parametrize("mfp_m", [0.0, 50e-9])
def test_long_hole_is_hagen_poiseuille(mfp_m):
    """Two hole lengths: end effects cancel, the difference is the fully developed flow."""
    a, g = 1e-6, 1e-6
    p = square_pitch(3e-6)
    z = [cell_flow_resistance(g, a, p, "square", t, MU, mfp_m, accuracy="draft")
         .resistance_pa_s_per_m3 for t in (10e-6, 20e-6)]
    hagen = 8 * MU * 10e-6 / (math.pi * a**4)  # Hagen–Poiseuille, ΔL = 10 µm
    hagen /= 1 + 4 * mfp_m / a  # first-order slip (Karniadakis et al. 2005), ℓ = λ (σ_v = 1)
    assert (z[1] - z[0]) / hagen - 1 == pytest.approx(0.0, abs=5e-3)  # measured < 2e-6


# --------------------------------------------------------------------------------- Sampson
def test_thin_plate_orifice_is_sampson():
    """A hole of radius a in a thin plate between two reservoirs of radius and depth 20a: the
    resistance extrapolated to zero thickness (linear in t from t = 0.02a, 0.05a) is Sampson's
    3μ/a³ (1891); even at t = 0.02a it is within 2 %."""
    a, g, rc = 1e-6, 20e-6, 20e-6
    z = {t: cell_flow_resistance(g, a, square_pitch(rc), "square", t, MU, 0.0,
                                 exit_height_m=35e-6, accuracy="draft").resistance_pa_s_per_m3
         for t in (0.02e-6, 0.05e-6)}
    sampson = 3 * MU / a**3  # Sampson 1891
    z0 = z[0.02e-6] - (z[0.05e-6] - z[0.02e-6]) * 0.02 / 0.03
    assert z0 / sampson - 1 == pytest.approx(0.0, abs=5e-3)  # measured −3e-5
    assert z[0.02e-6] / sampson - 1 == pytest.approx(0.0, abs=2e-2)  # measured +1.6 %


# ---------------------------------------------------------------------------- rarefaction
def test_slip_follows_veijola_trend():
    """Film-dominated cell (a = 10 g, r_c = 2.5a): the resistance falls with Kn = λ/g like
    Veijola's film factor 1/(1 + 9.638 Kn^1.159) — within 2 % for Kn <= 0.03 and 12 % at
    Kn = 0.1 (first-order slip is weaker than the fit there: measured 0.656 vs 0.599)."""
    geo = FlowCellGeometry(25.0, 10.0, 5.0, 50.0)
    cases = ((0.01, 0.02), (0.03, 0.02), (0.1, 0.12))
    z0, *zs = (r["resistance"] for r in
               scaled_cell_resistances(geo, [0.0] + [kn for kn, _ in cases], "draft"))
    ratios = []
    for (kn, tol), z in zip(cases, zs):
        veijola = 1.0 / (1.0 + 9.638 * kn**1.159)  # Veijola et al. 1995
        assert z / z0 / veijola - 1 == pytest.approx(0.0, abs=tol)
        ratios.append(z / z0)
    assert ratios[0] < 1 and np.all(np.diff(ratios) < 0)  # resistance falls with Kn


def test_zero_slip_length_is_no_slip():
    geo = demo_cell()
    no_slip = scaled_cell_resistance(geo, 0.0, "draft")["values"]
    tiny = scaled_cell_resistance(geo, 1e-9, "draft")["values"]
    assert np.all(np.abs(tiny / no_slip - 1) < 1e-6)  # Robin → Dirichlet continuously
    air = air_properties(293.15, 101325.0)
    res = cell_flow_resistance(4e-6, 4e-6, 20e-6, "hex", 2e-6, MU, 0.0, accuracy="draft")
    assert res.slip_length_m == 0.0
    assert res.resistance_pa_s_per_m3 == pytest.approx(MU / (4e-6) ** 3 * no_slip[-1],
                                                       rel=1e-12, abs=0)
    assert slip_length(air.mean_free_path_m, 0.5) == pytest.approx(3 * air.mean_free_path_m,
                                                                   rel=1e-14, abs=0)


def test_several_slip_lengths_on_one_mesh_match_one_at_a_time():
    """The batch along the slip length (one mesh and assembly per level, the wall integrals
    scaled by 1/ℓ̂) gives each slip length's own solve, in any order, no slip included."""
    geo = demo_cell()
    slips = [0.03, 0.0, 1e-9, 0.1]
    batch = scaled_cell_resistances(geo, slips, "draft")
    for slip, got in zip(slips, batch):
        alone = scaled_cell_resistance(geo, slip, "draft")
        np.testing.assert_allclose(got["values"], alone["values"], rtol=1e-12, atol=0)
        assert got["rel_error"] == pytest.approx(alone["rel_error"], rel=1e-9, abs=0)
        np.testing.assert_array_equal(got["dofs"], alone["dofs"])
    assert batch[1]["dofs"][-1] < batch[0]["dofs"][-1]  # no slip: tangential walls fixed


def test_saddle_solve_falls_back_where_diagonal_pivots_fail():
    """The fast LU takes diagonal pivots; where a tiny one ruins it (ε = 1e-14 on the diagonal:
    residual 2e-4 with diagonal pivots), the residual check sends the system to the LU with
    unrestricted pivoting: the solution of numpy's dense solve (LAPACK) comes back."""
    import scipy.sparse as sp

    from diagap.fem.film.stokes import _saddle_solve

    for eps in (1e-14, 1e-17, 0.0):
        k = np.array([[eps, 1.0, 0.0], [1.0, 1.0, 1.0], [0.0, 1.0, 1.0]])
        rhs = np.array([1.0, 2.0, 3.0])
        np.testing.assert_allclose(_saddle_solve(sp.csc_matrix(k), rhs),
                                   np.linalg.solve(k, rhs), rtol=1e-12, atol=0)


# ---------------------------------------------------------------------------- convergence
@pytest.mark.parametrize("slip", [0.0, 65e-9 / 4e-6])
def test_convergence_order_and_honest_estimate(slip):
    """Three radical meshes (s = 0.6, 0.3, 0.15): the observed order is at least ``ORDER`` + 0.5
    (measured 6.2 no slip — still pre-asymptotic —, 2.2 with slip) and the two-level estimate
    of the normal setting (0.6, 0.3) bounds its error against the extrapolated value."""
    geo = demo_cell()
    res = scaled_cell_resistance(geo, slip, levels=(0.6, 0.3, 0.15))
    z = res["values"]
    order = math.log2(abs(z[1] - z[0]) / abs(z[2] - z[1]))
    assert order >= ORDER + 0.5
    assert res["dofs"][2] > 3.3 * res["dofs"][1] > 3.3**2 * res["dofs"][0]
    limit = z[2] + (z[2] - z[1]) / (2**order - 1)
    normal = scaled_cell_resistance(geo, slip, "normal")
    assert normal["values"][-1] == pytest.approx(z[1], rel=1e-12, abs=0)
    actual = abs(normal["resistance"] / limit - 1)
    assert actual <= normal["rel_error"] <= 2e-3


# -------------------------------------------------------------------- thin-film limit
def test_film_part_tends_to_skvor_bao_for_thin_films():
    """Film part = FE − (Sampson + Poiseuille) vs the Škvor/Bao annulus: the excess (entrance
    flow at the hole rim) falls like g/a and vanishes in the lubrication limit g/a → 0."""
    dev = []
    for ag in (10.0, 20.0):
        a, rc, t = ag, 2.5 * ag, 0.5 * ag  # gap units, μ = 1
        z = scaled_cell_resistance(FlowCellGeometry(rc, a, t, 5 * ag), 0.0, "draft")
        hole = 3 / a**3 + 8 * t / (math.pi * a**4)  # Sampson 1891 + Hagen–Poiseuille
        area = (a / rc) ** 2
        bao = 3 * math.pi * rc**4 / 2 * (4 * area - area**2 - 2 * math.log(area) - 3)
        bao /= (math.pi * rc**2) ** 2  # Škvor / Bao et al. 2003, as resistance p̄/Q
        dev.append((z["resistance"] - hole) / bao - 1)
    assert 0 < dev[1] < dev[0] < 0.2  # measured 0.150, 0.073
    assert dev[0] / dev[1] == pytest.approx(2.0, rel=0.15, abs=0)  # first order in g/a
    assert 2 * dev[1] - dev[0] == pytest.approx(0.0, abs=0.01)  # extrapolated to g/a → 0


# ------------------------------------------------------------- exit and wiring into film
def test_exit_height_insensitive_beyond_the_pitch():
    base = cell_flow_resistance(4e-6, 4e-6, 20e-6, "hex", 2e-6, MU, 0.0, accuracy="draft")
    tall = cell_flow_resistance(4e-6, 4e-6, 20e-6, "hex", 2e-6, MU, 0.0, exit_height_m=40e-6,
                                accuracy="draft")
    assert base.exit_height_m == 20e-6
    assert tall.resistance_pa_s_per_m3 / base.resistance_pa_s_per_m3 - 1 == pytest.approx(
        0.0, abs=1e-4)  # measured 1.4e-6


def test_demo_closed_forms_below_stokes_and_wiring():
    """Demo hole pattern at g = r = 4 µm: the closed-form sum is 4 % below the Stokes cell
    (no slip: 6.4 %); at 1 µm 28 % below. The film's sink uses the Stokes value."""
    air = air_properties(293.15, 101325.0)
    mu, lam = air.viscosity_pa_s, air.mean_free_path_m
    for gap, lo, hi in ((4e-6, -0.06, -0.02), (1e-6, -0.33, -0.22)):
        perf = perforation("hex", 4e-6, 20e-6, 2e-6, gap, mu, lam)
        closed = perforation("hex", 4e-6, 20e-6, 2e-6, gap, mu, lam, hole_model="closed-form")
        flow = perf.hole_flow
        assert perf.hole_model == "stokes" and closed.hole_flow is None
        assert perf.resistance_pa_s_per_m3 == flow.resistance_pa_s_per_m3
        assert closed.resistance_pa_s_per_m3 == pytest.approx(
            flow.closed_form_pa_s_per_m3, rel=1e-12, abs=0)
        assert lo < flow.closed_form_deviation < hi
        assert perf.sink_m_per_pa_s == pytest.approx(
            perf.holes_per_m2 / flow.resistance_pa_s_per_m3, rel=1e-12, abs=0)
        assert 0 < flow.rel_error < 2e-3
        summary = perf.to_summary()
        assert summary["hole_model"] == "stokes"
        assert summary["resistance_per_hole_closed_form_pa_s_per_m3"] == pytest.approx(
            closed.resistance_pa_s_per_m3, rel=1e-12, abs=0)


def test_audit_row_for_hole_flow():
    from diagap.audit import audit_design
    from diagap.design import demo_design

    damp = {"hole_resistance_pa_s_per_m3": 1.0e12,
            "hole_resistance_closed_form_pa_s_per_m3": 0.72e12,
            "perforation": {"hole_model": "stokes"}}
    rows = [r for r in audit_design(demo_design(), {"damping": damp}).rows
            if r.assumption == "hole flow closed forms"]
    assert len(rows) == 1
    assert rows[0].deviation == pytest.approx(-0.28, rel=1e-12, abs=0)
    assert rows[0].verdict == "fails"
    damp["hole_resistance_closed_form_pa_s_per_m3"] = 0.96e12
    assert [r.verdict for r in audit_design(demo_design(), {"damping": damp}).rows
            if r.assumption == "hole flow closed forms"] == ["holds"]


@pytest.mark.parametrize("kwargs,match", [
    (dict(hole_radius_m=11e-6), "half the pitch"),
    (dict(backplate_thickness_m=0.0), "backplate_thickness_m"),
    (dict(accommodation=0.0), "accommodation"),
    (dict(accuracy="best"), "accuracy"),
    (dict(lattice="tri"), "lattice"),
    (dict(exit_height_m=-1.0), "exit_height_m"),
])
def test_stokes_cell_input_errors(kwargs, match):
    args = dict(gap_m=4e-6, hole_radius_m=4e-6, hole_pitch_m=20e-6, lattice="hex",
                backplate_thickness_m=2e-6, viscosity_pa_s=MU, mean_free_path_m=65e-9)
    args.update(kwargs)
    with pytest.raises(StokesCellError, match=match):
        cell_flow_resistance(**args)


def test_hole_model_errors():
    with pytest.raises(PerforationError, match="hole_model"):
        perforation("hex", 4e-6, 20e-6, 2e-6, 4e-6, MU, 65e-9, hole_model="fem")
    with pytest.raises(PerforationError, match="backplate_thickness_m"):
        perforation("hex", 4e-6, 20e-6, 0.0, 4e-6, MU, 65e-9)
    with pytest.raises(SqueezeError, match="hole_model"):
        squeeze_film("circle", 0.45e-3, 4e-6, 4e-6, 20e-6, "hex", 2e-6,
                     air_properties(293.15, 101325.0), lambda x, y: np.ones_like(x), [100.0],
                     hole_model="fem")
