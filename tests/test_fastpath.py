"""The fast path: interpolation tables refined against the full FE, their cache, their limits.

References: the full FE analysis itself (``solve_plate`` and the pipeline's stages, run in the
test on the same design), the clamped-plate closed form c0 = p a⁴/(64 D) (Timoshenko &
Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, §62, eq. 62), and polynomial
reproduction of barycentric Chebyshev interpolation (Berrut & Trefethen, "Barycentric Lagrange
Interpolation", SIAM Review 46, 2004, §5). The 50-design validation at "normal" accuracy is
tests/bench/bench_fastpath.py; squares, simply supported edges, the membrane range and the
limits of the validated range are in tests/test_fastpath_plates.py.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.fastpath import FastPathUnavailable, fast_summary
from diagap.fastpath.grid import Axis, TensorTable, scaled_error
from diagap.fastpath.refine import build_table, serial_mapper

TOL = 1e-3


def test_polynomial_reproduced_by_the_tensor_rule():
    """Degree ≤ n−1 per axis is reproduced exactly (Berrut & Trefethen 2004, §5); the values
    are negative, so they are interpolated as they are (not as logarithms)."""
    def f(x):
        a, b = x
        return {"p": -(100.0 + 2 * a - 3 * a**3 * b + 0.5 * b**4)}

    axes = [Axis("a", False, (-1.0, 0.0, 2.0), 5), Axis("b", False, (0.5, 3.0), 5)]
    table, facts = build_table(f, axes, tol=1e-9, validate=5)
    assert facts["uncertified"] == []
    for x in [(-0.3, 0.7), (1.7, 2.9), (0.0, 1.2)]:
        assert table(x)[0] == pytest.approx(f(x)["p"], rel=1e-9, abs=0)


def test_kink_makes_segments_split_until_held_out_points_agree():
    """|u − 0.3|^1.5 has a kink that a single polynomial cannot follow: the segment holding it
    is halved until the midpoint checks pass; random points then agree within the tolerance."""
    def f(x):
        return {"y": 2.0 + abs(x[0] - 0.3) ** 1.5}

    table, facts = build_table(f, [Axis("u", False, (0.0, 1.0), 5)], tol=1e-4, max_splits=8)
    assert len(table.axes[0].breaks) > 2
    rng = np.random.default_rng(1)
    for u in rng.random(30):
        assert table((u,))[0] == pytest.approx(f((u,))["y"], rel=1e-4, abs=0)


def test_batches_along_the_last_axis_give_the_pointwise_table():
    """``along_last`` computes the points sharing all but the last coordinate in one call:
    the same table as point by point, with one call per group of points."""
    def f(x):
        a, b = x
        return {"p": 1.0 + abs(a - 0.37) ** 1.5 + a * b**3}

    groups: list = []

    def f_last(head, lasts):
        groups.append(len(lasts))
        return [f((*head, b)) for b in lasts]

    axes = [Axis("a", False, (0.0, 1.0), 5), Axis("b", False, (0.0, 2.0), 4)]
    plain, facts = build_table(f, axes, tol=1e-4, max_splits=2, validate=6)
    batched, facts_b = build_table(f, axes, tol=1e-4, max_splits=2, validate=6,
                                   along_last=f_last)
    assert [a.breaks for a in batched.axes] == [a.breaks for a in plain.axes]
    np.testing.assert_array_equal(batched.values, plain.values)
    assert facts_b == facts
    assert sum(groups) == facts["reference_points"] and len(groups) < sum(groups)
    assert max(groups) == 4  # a whole tensor line along b in one call


def test_decibel_levels_are_measured_in_decibels():
    err = scaled_error(["response.sensitivity_db_v_per_pa", "coupled.pull_in_voltage_v"],
                       [-47.005, 20.02], [-47.0, 20.0])
    assert err[0] == pytest.approx(0.5e-3, rel=1e-9, abs=0)  # 0.005 dB = half of 0.01 dB
    assert err[1] == pytest.approx(1e-3, rel=1e-9, abs=0)
    group = scaled_error(["response.noise_contributions_dba_spl.vent"], [17.004], [17.0])
    assert group[0] == pytest.approx(0.4e-3, rel=1e-9, abs=0)


# ----------------------------------------------------------------------------- the scaled disk

def _disk(radius_m, thickness_m, stress_pa, e_pa=160e9, rho=2330.0, nu=0.22):
    from diagap.fem.plate.solver import PlateProblem

    return PlateProblem("circle", radius_m, e_pa, nu, thickness_m, rho, stress_pa, "clamped")


@pytest.fixture(scope="session")
def draft_disk_design():
    return demo_design().with_accuracy("draft")


@pytest.mark.parametrize("radius_m,thickness_m,stress_pa,e_pa,rho,nu", [
    (0.5e-3, 1e-6, 10e6, 160e9, 2330.0, 0.22),     # the demo's diaphragm
    (1.2e-3, 2.5e-6, -3e5, 70e9, 2700.0, 0.33),    # compressed, 0.72 of buckling
    (0.3e-3, 0.4e-6, 150e6, 250e9, 3100.0, 0.25),  # τ near the plate model's upper end
    (2e-3, 20e-6, 0.0, 160e9, 2330.0, 0.0),        # no stress
])
def test_scaled_disk_matches_the_fe(draft_disk_design, radius_m, thickness_m, stress_pa, e_pa,
                                     rho, nu):
    from diagap.fem.plate.solver import solve_plate
    from diagap.sweep.point import flatten_summary

    changes = {"diaphragm.radius": radius_m, "diaphragm.thickness": thickness_m,
               "diaphragm.residual_stress": stress_pa, "diaphragm.youngs_modulus": e_pa,
               "diaphragm.density": rho, "diaphragm.poisson_ratio": nu,
               "backplate.electrode_radius": 0.9 * radius_m}
    design = with_overrides(draft_disk_design, changes)
    fast = fast_summary(design)
    full, _ = flatten_summary({"mechanics": solve_plate(
        _disk(radius_m, thickness_m, stress_pa, e_pa, rho, nu), "draft").to_summary()})
    assert "mechanics.center_compliance_m_per_pa" in fast
    assert "mechanics.natural_frequencies_hz_1" in fast
    for key, value in fast.items():
        if key.startswith("mechanics."):  # electrostatics: tests/test_fastpath_field.py
            assert value == pytest.approx(full[key], rel=TOL, abs=0), key
    if stress_pa == 0.0:  # Timoshenko & Woinowsky-Krieger 1959, §62, eq. 62: c0 = a⁴/(64 D)
        d = e_pa * thickness_m**3 / (12 * (1 - nu**2))
        assert fast["mechanics.center_compliance_m_per_pa"] == pytest.approx(
            radius_m**4 / (64 * d), rel=2e-3, abs=0)


# ----------------------------------------------------------------------------- a study box

@pytest.fixture(scope="session")
def gap_box(draft_disk_design):
    from diagap.fastpath import StudyBox

    return StudyBox(draft_disk_design, (("backplate.gap", 3.6e-6, 4.4e-6),))


#: small table options for the default suite (the benchmark uses the defaults)
SMALL = {"nodes": 3, "max_nodes": 5, "validate": 2}
KEY_OUTPUTS = ("response.sensitivity_db_v_per_pa", "response.noise_dba_spl",
               "coupled.pull_in_voltage_v", "electrostatics.rest_capacitance_f",
               "coupled.resonance_at_bias_hz", "damping.damping_n_s_per_m",
               "mechanics.natural_frequencies_hz_1")


@pytest.mark.parametrize("gap_m", [3.71e-6, 4.23e-6])
def test_study_box_matches_the_full_fe(draft_disk_design, gap_box, gap_m):
    """Every certified output within 1e-3 relative (levels within 0.01 dB) of the full FE
    analysis of the same design."""
    from diagap.fastpath.study import pipeline_outputs

    design = with_overrides(draft_disk_design, {"backplate.gap": gap_m})
    fast = fast_summary(design, gap_box, **SMALL)
    full = pipeline_outputs(design)
    for key in KEY_OUTPUTS:
        assert key in fast, key
    names = sorted(fast)
    err = scaled_error(names, [fast[n] for n in names], [full[n] for n in names])
    worst = names[int(np.argmax(err))]
    assert np.max(err) <= TOL, (worst, fast[worst], full[worst])


def test_study_box_refuses_designs_outside_it(draft_disk_design, gap_box):
    with pytest.raises(FastPathUnavailable, match="backplate.gap"):
        fast_summary(with_overrides(draft_disk_design, {"backplate.gap": "5 um"}), gap_box,
                     **SMALL)
    with pytest.raises(FastPathUnavailable, match="diaphragm.thickness_m"):
        fast_summary(with_overrides(draft_disk_design, {"diaphragm.thickness": "1.1 um"}),
                     gap_box, **SMALL)


# ----------------------------------------------------------------------------- the cache

def _counting(log):
    def mapper(func, points):
        log.append(len(points))
        return serial_mapper(func, points)
    return mapper


def _cubic(x):
    return {"y": math.exp(x[0]) * (1 + x[0] ** 2)}


def test_tables_are_reused_and_damaged_ones_rebuilt(tmp_path, monkeypatch):
    from diagap.fastpath.store import cached_table
    from diagap.meshes import cache

    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(cache, "_STATE", dict(cache._STATE, enabled=True))
    calls: list = []

    def build():
        return build_table(_cubic, [Axis("x", False, (0.0, 1.0), 5)], tol=1e-6,
                           mapper=_counting(calls))

    first, _ = cached_table("fastpath-check", {"n": 1}, build)
    built = len(calls)
    assert built > 0
    again, _ = cached_table("fastpath-check", {"n": 1}, build)
    assert len(calls) == built  # read from disk: no reference point computed
    np.testing.assert_array_equal(again.values, first.values)
    entry, = tmp_path.glob("fastpath-check-*.npz")
    raw = bytearray(entry.read_bytes())
    raw[len(raw) // 2] ^= 0xFF  # flip one byte in the middle of the entry
    entry.write_bytes(bytes(raw))
    rebuilt, _ = cached_table("fastpath-check", {"n": 1}, build)
    assert len(calls) > built  # the damaged entry was discarded and the table built again
    np.testing.assert_allclose(rebuilt.values, first.values, rtol=1e-14, atol=0)
    assert isinstance(rebuilt, TensorTable)


def test_tables_build_on_a_dask_client_as_in_this_process():
    """The same table from a Dask client's workers as from the serial mapper."""
    distributed = pytest.importorskip("distributed")
    from diagap.fastpath.refine import mapper_for

    axes = [Axis("x", True, (math.log(0.5), math.log(2.0)), 5)]
    serial, _ = build_table(_cubic, axes, tol=1e-6)
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=1,
                            dashboard_address=None) as client:
        remote, _ = build_table(_cubic, axes, tol=1e-6, mapper=mapper_for(client=client))
    assert [a.breaks for a in remote.axes] == [a.breaks for a in serial.axes]
    np.testing.assert_allclose(remote.values, serial.values, rtol=1e-14, atol=0)
