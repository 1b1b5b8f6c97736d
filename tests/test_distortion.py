"""Harmonic distortion of the nonlinear 1-DOF capsule model.

Harmonic balance is checked against a direct time integration (scipy.integrate.solve_ivp, a
general-purpose reference library), a Taylor expansion of the readout, the small-signal linear
response, and the distortion-free parallel-plate capacitor at constant charge.  Parameter sets
are invented.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import epsilon_0
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from checks import rel_close, rel_close_array

from diagap.lumped.circuit import NonlinearTransducer
from diagap.lumped.distortion import (distortion_vs_spl, harmonic_balance, spl_to_pressure_amplitude,
                               thd_time_domain)
from diagap.lumped.model import LumpedModelError, from_capacitance_curve, parallel_plate_piston
from diagap.lumped.response import frequency_response

GAP = 4e-6


def piston(**over):
    """Invented parallel-plate capsule: f_res ≈ 26 kHz, Q ≈ 2, electrical corner ≈ 100 Hz."""
    kw = dict(area_m2=math.pi * (0.4e-3) ** 2, gap_m=GAP, mass_kg=2e-9, stiffness_n_per_m=50.0,
              damping_n_s_per_m=1.5e-4, bias_voltage_v=10.0, bias_resistance_ohm=1e9,
              back_volume_m3=1e-8, vent_resistance_pa_s_per_m3=5.7e10,
              parasitic_capacitance_f=0.3e-12)
    kw.update(over)
    return parallel_plate_piston(**kw)


def bowed(**over):
    """Invented capsule with a bowed-diaphragm C(x) = C_f + ε0A/(g − x)·(1 + x/(3g))."""
    g = 2.5e-6
    x = np.linspace(-g / 3, g / 3, 41)
    c = 0.05e-12 + 8.854e-12 * 0.2e-6 / (g - x) * (1 + x / (3 * g))
    kw = dict(bias_voltage_v=3.0, stiffness_n_per_m=40.0, mass_kg=5e-10, area_m2=0.12e-6,
              damping_n_s_per_m=5e-5, back_volume_m3=2e-9, vent_resistance_pa_s_per_m3=2e11,
              bias_resistance_ohm=1e14, gap_m=g, parasitic_capacitance_f=0.4e-12)
    kw.update(over)
    return from_capacitance_curve(tuple(zip(x, c)), **kw)


def test_thd_grows_with_pressure_at_small_spl():
    # second-order (quadratic) distortion: HD2 ∝ amplitude, i.e. +1 dB of THD per dB of SPL at
    # small levels (common practice, no single source)
    m = piston()
    t80, t100 = harmonic_balance(m, 80.0).thd, harmonic_balance(m, 100.0).thd
    assert 20 * math.log10(t100 / t80) == pytest.approx(20.0, abs=0.02)
    v = harmonic_balance(m, 100.0).voltage_harmonics_v
    assert abs(v[3]) < 1e-2 * abs(v[2])  # second harmonic dominates


def amplitude_pa(spl_db):
    """Peak pressure of a sine at spl_db re 20 µPa rms: √2·20 µPa·10^(L/20) (ISO convention)."""
    return math.sqrt(2.0) * 20e-6 * 10 ** (spl_db / 20)


def independent_thd(raw: dict, spl_db: float, f_hz: float = 1000.0, periods: int = 90) -> float:
    """THD of the output voltage by direct time integration of the capsule's nonlinear ODEs,
    written here from the raw inputs (no library object is used).

    Parallel-plate capacitor C(x) = ε0A/(g − x) with a stray C_p on the node; node charge q,
    output v = q/(C(x) + C_p), electrostatic force F = ½v²ε0A/(g − x)² (Senturia 2001
    [from memory]); m ẍ = −bẋ − kx + F + A(p − p_b); back volume C_bv ṗ_b = Aẋ + (p − p_b)/R_v,
    C_bv = V/(γp0), γ = 1.4, p0 = 101325 Pa; bias resistor q̇ = (V_b − v)/R; p = P cos ωt.
    Starts at the static bias point and runs until the electrical and vent transients have
    decayed (90 periods ≈ 20 time constants here); THD from the FFT of the last period:
    √(Σ_{n≥2}|V_n|²)/|V_1|. Integrator: scipy.integrate.solve_ivp, DOP853 (general-purpose
    reference library).
    """
    a, g, m, k, b = (raw[n] for n in ("area_m2", "gap_m", "mass_kg", "stiffness_n_per_m",
                                        "damping_n_s_per_m"))
    vb, r, cp = raw["bias_voltage_v"], raw["bias_resistance_ohm"], raw["parasitic_capacitance_f"]
    cbv, rv = raw["back_volume_m3"] / (1.4 * 101325.0), raw["vent_resistance_pa_s_per_m3"]
    ea = epsilon_0 * a
    xb = brentq(lambda x: k * x - 0.5 * vb**2 * ea / (g - x) ** 2, 0.0, g / 3, xtol=1e-22,
                rtol=1e-15)
    qb = vb * (ea / (g - xb) + cp)
    w, pa = 2 * math.pi * f_hz, amplitude_pa(spl_db)
    xs = pa * a / k  # displacement scale

    def rhs(theta, y):  # time in radians of the drive (θ = ωt), scaled states
        x, v_x, pb, q = xb + y[0] * xs, y[1] * xs * w, y[2] * pa, qb * (1 + y[3])
        volts = q / (ea / (g - x) + cp)
        force = 0.5 * volts**2 * ea / (g - x) ** 2
        p = pa * math.cos(theta)
        acc = (-b * v_x - k * x + force + a * (p - pb)) / m
        return [v_x / (xs * w), acc / (xs * w * w), (a * v_x + (p - pb) / rv) / (cbv * pa * w),
                (vb - volts) / (r * qb * w)]

    th_end = 2 * math.pi * periods
    th = th_end - 2 * math.pi + 2 * math.pi * np.arange(256) / 256
    out = solve_ivp(rhs, (0.0, th_end), [0.0, 0.0, 0.0, 0.0], method="DOP853", t_eval=th,
                    rtol=1e-10, atol=1e-12)
    assert out.success
    x, q = xb + out.y[0] * xs, qb * (1 + out.y[3])
    volts = q / (ea / (g - x) + cp)
    spec = np.abs(np.fft.rfft(volts))
    return float(np.sqrt(np.sum(spec[2:64] ** 2)) / spec[1])


RAW_PISTON = dict(area_m2=math.pi * (0.4e-3) ** 2, gap_m=GAP, mass_kg=2e-9, stiffness_n_per_m=50.0,
                  damping_n_s_per_m=1.5e-4, bias_voltage_v=10.0, bias_resistance_ohm=1e9,
                  back_volume_m3=1e-8, vent_resistance_pa_s_per_m3=5.7e10,
                  parasitic_capacitance_f=0.3e-12)


def test_harmonic_balance_matches_independent_time_integration():
    # reference: the capsule's ODEs written out in this file from the raw inputs (no library
    # object shared) and integrated with scipy's DOP853; agreement to 1e-8 relative (observed
    # ~1e-12). The library's own time-domain check must agree as well.
    m = piston()
    assert all(getattr(m, k) == v for k, v in RAW_PISTON.items())  # same raw inputs
    spl = 126.0
    hb = harmonic_balance(m, spl).thd
    assert 0.005 < hb < 0.05
    rel_close(hb, independent_thd(RAW_PISTON, spl), rel=1e-8, what="THD, HB vs independent ODE")
    rel_close(thd_time_domain(m, spl, rtol=1e-8), hb, rel=1e-3, what="library time domain")


def test_parallel_plate_at_constant_charge_is_distortion_free():
    # Senturia, Microsystem Design, 2001 [from memory]: at constant charge a parallel-plate
    # capacitor's voltage V = Q(g − x)/(ε0A) is linear in x and its force is independent of x.
    # No stray capacitance and a bias resistor so large that the charge is held.
    clean = harmonic_balance(piston(parasitic_capacitance_f=0.0, bias_resistance_ohm=1e16), 130.0)
    stray = harmonic_balance(piston(bias_resistance_ohm=1e16), 130.0)
    assert clean.thd < 1e-7
    assert stray.thd > 1e-2  # the same motion with 0.3 pF stray capacitance does distort


def test_readout_second_harmonic_matches_taylor_expansion():
    # v = Q/C_t(x) = Q·[1/C_t0 − (C'/C_t0²)ξ + (C'²/C_t0³ − C''/(2C_t0²))ξ² + …] (Taylor); for
    # ξ = X cos ωt the second harmonic is |a2|X²/2 against a fundamental |a1|X.  Force linearised;
    # bias resistor large so the charge is constant.
    m = bowed()
    es = NonlinearTransducer(m)
    cc = m.curve()
    xb = m.bias_displacement_m
    c, c1, c2 = cc.capacitance(xb), cc.slope(xb), cc.curvature(xb)
    ct = c + m.parasitic_capacitance_f
    q = m.bias_voltage_v * ct
    a1, a2 = -q * c1 / ct**2, q * (c1**2 / ct**3 - c2 / (2 * ct**2))
    spl = 100.0
    x1 = abs(frequency_response(m, [1000.0]).displacement_per_pa[0]) * amplitude_pa(spl)
    sol = harmonic_balance(m, spl, force_nonlinear=False)
    assert abs(sol.displacement_harmonics_m[1]) == pytest.approx(x1, rel=1e-6, abs=0)
    assert sol.thd == pytest.approx(abs(a2) * x1 / (2 * abs(a1)), rel=1e-3, abs=0)
    assert es.q0 == pytest.approx(q, rel=1e-14, abs=0)


def test_fundamental_matches_linear_response():
    # the harmonic-balance fundamental at a small level is the linear response (same circuit)
    m = bowed(bias_resistance_ohm=3e11)
    spl = 70.0
    sol = harmonic_balance(m, spl)
    h = frequency_response(m, [1000.0]).voltage_per_pa[0] * amplitude_pa(spl)
    assert spl_to_pressure_amplitude(spl) == pytest.approx(amplitude_pa(spl), rel=1e-12, abs=0)
    assert sol.voltage_harmonics_v[1] == pytest.approx(h, rel=1e-6, abs=0)


def test_harmonic_truncation_converged():
    # at a high level, doubling the harmonic count from the adaptive choice changes THD by < 1e-6
    m = piston()
    a = harmonic_balance(m, 130.0)
    n = a.voltage_harmonics_v.size - 1
    b = harmonic_balance(m, 130.0, harmonics=2 * n)
    assert a.truncation < 1e-4
    assert b.thd == pytest.approx(a.thd, rel=1e-6, abs=0)


def test_scan_finds_1pct_point_and_reports_curve_limit():
    m = piston()
    r = distortion_vs_spl(m)
    assert r.thd_1pct_spl_db is not None
    assert harmonic_balance(m, r.thd_1pct_spl_db).thd == pytest.approx(0.01, rel=1e-3, abs=0)
    # the C(x) samples end at g/3: the scan stops there before THD reaches 10 %
    assert r.aop_10pct_spl_db is None
    assert "sampled C(x) range" in r.limit_reason
    assert np.all(np.diff(r.thd) > 0)
    s = r.to_summary()
    assert s["thd_1pct_spl_db"] == r.thd_1pct_spl_db and s["aop_10pct_spl_db"] is None


def test_scan_of_distortion_free_capsule_stops_at_curve_end():
    # the constant-charge parallel plate without stray capacitance never distorts (Senturia 2001
    # [from memory]): neither threshold is reached before the displacement leaves the C(x) samples
    m = piston(parasitic_capacitance_f=0.0, bias_resistance_ohm=1e16)
    r = distortion_vs_spl(m)
    assert r.thd_1pct_spl_db is None and r.aop_10pct_spl_db is None
    assert "sampled C(x) range" in r.limit_reason and np.all(r.thd < 1e-7)
    assert r.peak_displacement_m[-1] <= GAP / 3


def test_scan_reports_threshold_not_reached():
    # a stiff diaphragm stays below 10 % THD up to the end of the range
    m = piston(stiffness_n_per_m=5000.0)
    r = distortion_vs_spl(m, spl_db=np.arange(100.0, 141.0, 10.0))
    assert r.aop_10pct_spl_db is None and "below 10 %" in r.limit_reason
    assert r.spl_db.size == 5


def test_missing_curve_is_an_error():
    with pytest.raises(LumpedModelError, match="capacitance_curve"):
        harmonic_balance(piston().replace(capacitance_curve=None), 100.0)


def _raw_scan(model, levels):
    """Continuation over ``levels`` by raw harmonic-balance solves, stopping at the first level
    whose solution leaves the C(x) samples or does not converge: (solutions, stop level)."""
    cc = model.curve()
    sols, prev = [], None
    for spl in levels:
        try:
            s = harmonic_balance(model, float(spl), initial=prev)
        except ArithmeticError:
            return sols, float(spl)
        if s.peak_displacement_m > cc.x_max_m or s.min_displacement_m < cc.x_min_m:
            return sols, float(spl)
        sols.append(s)
        prev = s
    return sols, None


def _bisect(model, s0, s1, level, tol_db):
    """SPL where THD = level in [s0, s1] by plain bisection on raw solves, each continued from
    the highest solution below it."""
    lo, hi, start = s0.spl_db, s1.spl_db, s0
    while hi - lo > tol_db:
        mid = 0.5 * (lo + hi)
        s = harmonic_balance(model, mid, initial=start)
        if s.thd < level:
            lo, start = mid, s
        else:
            hi = mid
    return 0.5 * (lo + hi)


def test_demo_scan_crossing_matches_dense_bisection_with_fewer_solves(monkeypatch):
    # reference: the 2 dB continuation and a bisection to 1e-6 dB written here from raw
    # harmonic-balance solves.  The scan must stop at the same level for the same reason, keep
    # every point with THD >= 0.1 % of the 2 dB grid, hold solved points only, and find the 1 %
    # point within 2e-4 dB with fewer solves than a bisection of the 2 dB bracket to 1e-4 dB.
    from diagap import demo_design
    from diagap.lumped import distortion as dist
    from diagap.pipeline import run_design

    model = run_design(demo_design().with_accuracy("draft"),
                       parallel=False).sections["response"].objects["model"]
    grid = np.arange(60.0, 160.0 + 1e-9, 2.0)
    raw, stop = _raw_scan(model, grid)
    k = next(i for i, s in enumerate(raw) if s.thd >= 0.01)
    ref = _bisect(model, raw[k - 1], raw[k], 0.01, 1e-6)

    calls = []
    original = dist.harmonic_balance

    def counted(model_, spl_db, *a, **kw):
        calls.append(float(spl_db))
        return original(model_, spl_db, *a, **kw)

    monkeypatch.setattr(dist, "harmonic_balance", counted)
    r = distortion_vs_spl(model)
    monkeypatch.undo()

    assert r.thd_1pct_spl_db == pytest.approx(ref, abs=2e-4)
    assert stop is not None and r.spl_db[-1] == raw[-1].spl_db
    assert f"at {stop:.1f} dB SPL" in r.limit_reason and "sampled C(x) range" in r.limit_reason
    by_level = {s.spl_db: s.thd for s in raw}
    assert set(r.spl_db) <= set(by_level)
    rel_close_array(r.thd, np.array([by_level[x] for x in r.spl_db]), rel=1e-6,
                    what="THD on the scan")
    assert {x for x, t in by_level.items() if t >= 1e-3} <= set(r.spl_db)
    n_bisect = math.ceil(math.log2(2.0 / 1e-4))  # halvings of the 2 dB bracket to 1e-4 dB
    crossing_solves = sum(1 for x in calls if x not in by_level and x != stop)
    assert crossing_solves < n_bisect
    assert len(calls) < len(raw) + 1 + n_bisect  # the full 2 dB scan, its stop, the bisection


@pytest.mark.parametrize("make", [
    lambda: bowed(parasitic_capacitance_f=3e-12),        # reaches 1 % and 10 %
    lambda: piston(parasitic_capacitance_f=3e-12, bias_voltage_v=13.0),   # 1 %, then the C(x) end
    lambda: piston(parasitic_capacitance_f=0.0, bias_resistance_ohm=1e16),  # no distortion
    lambda: piston(stiffness_n_per_m=5000.0),            # stays below 10 % up to 160 dB
], ids=["both-thresholds", "curve-end", "distortion-free", "below-10pct"])
@pytest.mark.parametrize("room", [None, 4.0], ids=["default-jumps", "overshooting-jumps"])
def test_sparse_scan_matches_raw_continuation(make, room, monkeypatch):
    # reference: the raw 2 dB continuation and bisections to 1e-6 dB written here from raw
    # harmonic-balance solves.  Without the curve the scan must find the same crossings (to its
    # 1e-4 dB), stop at the same level for the same reason and end on the same solved level,
    # with fewer solves than the scan with the curve (as many when the THD stays below 0.1 %).
    # Jumps allowed 4x the C(x) room left overshoot the curve's end and must be halved back.
    from diagap.lumped import distortion as dist

    if room is not None:
        monkeypatch.setattr(dist, "_SPARSE_ROOM", room)

    model = make()
    grid = np.arange(60.0, 160.0 + 1e-9, 2.0)
    raw, stop = _raw_scan(model, grid)
    ref = {}
    for level in (0.01, 0.10):
        k = next((i for i, s in enumerate(raw) if s.thd >= level), None)
        ref[level] = None if k is None or k == 0 else _bisect(model, raw[k - 1], raw[k], level,
                                                               1e-6)
    counts = {}
    original = dist.harmonic_balance

    def run(curve):
        calls = []

        def counted(model_, spl_db, *a, **kw):
            calls.append(spl_db)
            return original(model_, spl_db, *a, **kw)

        dist.harmonic_balance = counted
        try:
            out = distortion_vs_spl(model, curve=curve)
        finally:
            dist.harmonic_balance = original
        counts[curve] = len(calls)
        return out

    full, sparse = run(True), run(False)
    for got, level in ((sparse.thd_1pct_spl_db, 0.01), (sparse.aop_10pct_spl_db, 0.10)):
        if ref[level] is None:
            assert got is None
        else:
            assert got == pytest.approx(ref[level], abs=2e-4)  # a level in dB
    assert sparse.limit_reason == full.limit_reason
    assert sparse.spl_db[-1] == raw[-1].spl_db == full.spl_db[-1]
    if stop is not None:
        assert f"at {stop:.1f} dB SPL" in sparse.limit_reason
    assert counts[False] <= counts[True] or room is not None
    if ref[0.01] is not None and room is None:  # the jumps pay off once the THD passes 0.1 %
        assert counts[False] < counts[True]


def test_sparse_scan_needs_the_default_grid():
    with pytest.raises(ValueError, match="curve=False"):
        distortion_vs_spl(piston(), spl_db=[100.0, 110.0], curve=False)
