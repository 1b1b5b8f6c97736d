"""Harmonic distortion of the capsule versus sound pressure level (1-DOF nonlinear model).

Model (SI; x = x_b + ξ, ξ the motion about the bias point; q the charge of the output node)::

    m ξ̈ + b ξ̇ + k ξ = A·(p(t) − p_b) + F_e(x, q) − F_e(x_b, Q0)
    C_bv ṗ_b = A ξ̇ + (p − p_b)/R_v                         (back volume, vent; linear)
    q̇ = (V_b − v)/R_bias,   v = q / C_t(x),   C_t = C(x) + C_p + C_in
    F_e = ½ v² C'(x)                                       (co-energy ½C v², force by dC/dx)

with p(t) = √2·p_rms·cos ωt, p_rms = 20 µPa·10^(SPL/20), Q0 = V_b·C_t(x_b).  In the mid band
(ωR_biasC_t ≫ 1) q is nearly constant over a cycle — the constant-charge regime, v = Q/C_t(x)
with Q = C_t(x_b)·V_b — and its level is set by the resistor carrying no mean current,
mean(v) = V_b.  The charge is kept as an unknown rather than frozen because the ripple
q̃ ≈ −ṽ/(jωR) mixes with C(x) into the harmonics: with the corner a decade below the drive this
changes THD by ~10 %.  Both electrostatic nonlinearities appear: the readout v = q/C_t(x) and the
force F_e(x, q).  For a parallel-plate capacitor with C_p = C_in = 0 at held charge the readout
v = Q(g − x)/(ε0A) is linear in x and the force ½Q²/(ε0A) does not depend on x (Senturia,
*Microsystem Design*, 2001 [from memory]): no distortion in the constant-charge limit — a check
used in the tests.  Mechanics and acoustics are linear (small-deflection stiffness, adiabatic
back volume); they enter per harmonic with their exact frequency dependence (film b(f),
k_film(f); vent high-pass H_v).

Main method: harmonic balance.  ξ(θ) and q(θ) (θ = ωt) are truncated Fourier series
a0 + Σ_{n≤N} a_n cos nθ + b_n sin nθ; the linear operators act per harmonic; the nonlinear force
and voltage are sampled at M = 4N points and projected back (alternating frequency–time
Galerkin); Newton's method with the exact Jacobian on unknowns scaled by the gap and by Q0.
N doubles until the upper half of the harmonics carries less than 1e-4 of the THD (or
1e-10 of the fundamental, the round-off floor).  Check:
direct integration of the same equations with ``scipy.integrate.solve_ivp`` (DOP853), started
from the linear steady state and run until the transients have decayed.

THD = √(Σ_{n≥2}|V_n|²)/|V_1| of the output voltage (ratio to the fundamental).  A scan over SPL
continues each solution from the one below it; it stops when the centre displacement leaves the
sampled C(x) range (the curve is not known beyond it; it ends short of the backplate, where C
diverges) or Newton fails; the reason is reported.  The default scan is the 2 dB grid 60 … 160 dB,
passing over grid levels only while THD < 0.1 % (the nearly linear range; which levels are
solved: :func:`distortion_vs_spl`).  The SPL where THD first reaches 1 % (10 %) lies in the
first step of the scan across the level (2 dB by default); there Brent's method (``scipy.optimize.brentq``)
finds the root of g(L) = ln(THD(L)/level) to 1e-4 dB — g is nearly linear in L, since THD grows
like a power of the pressure, so a few solves suffice — each trial continued from the nearest
solution below it.

Without the curve (``curve=False``, the summary's figures only: the fast path) the scan also
passes over grid levels above 0.1 %: each jump aims just past the next of 1 % and 10 % (THD
extrapolated as a power of the pressure), within the same excursion limit, and a jump that ends
outside the C(x) range or fails to converge is halved on the grid (continued from the highest
solved level below) until the first failing level of the grid is found.  With THD and the
excursion growing monotonically with the level between solved points, the crossings (to the
same 1e-4 dB) and the stopping level and reason are those of the full scan; the demo needs 13
solves instead of 27.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from diagap.fem.constants import P_REF_PA
from diagap.lumped.circuit import NonlinearTransducer, solve_circuit
from diagap.lumped.model import CapacitanceCurve, LumpedModel, LumpedModelError

__all__ = ["HarmonicSolution", "DistortionResult", "ConvergenceError", "harmonic_balance",
           "thd_time_domain", "distortion_vs_spl", "spl_to_pressure_amplitude"]



class ConvergenceError(ArithmeticError):
    """Newton's method or the time integration did not reach a periodic solution."""


def spl_to_pressure_amplitude(spl_db: float) -> float:
    """Peak pressure (Pa) of a sine of the given SPL (dB re 20 µPa rms)."""
    return math.sqrt(2.0) * P_REF_PA * 10.0 ** (spl_db / 20.0)


@dataclass(frozen=True)
class HarmonicSolution:
    """Periodic steady state at one SPL and frequency.

    Attributes
    ----------
    spl_db, frequency_hz : drive.
    displacement_harmonics_m : complex (N+1,), ξ = Re Σ X_n e^{jnωt} (X_0 the mean shift).
    voltage_harmonics_v : complex (N+1,), output voltage about V_b (V_0 the mean shift).
    thd : THD of the output voltage (fraction, ratio to the fundamental).
    peak_displacement_m, min_displacement_m : extremes of x = x_b + ξ over the cycle (m).
    charge_c : mean node charge (C).
    truncation : share of the THD carried by the upper half of the harmonics.
    """

    spl_db: float
    frequency_hz: float
    displacement_harmonics_m: np.ndarray
    voltage_harmonics_v: np.ndarray
    thd: float
    peak_displacement_m: float
    min_displacement_m: float
    charge_c: float
    truncation: float
    _coefficients: np.ndarray = field(repr=False)


@functools.lru_cache(maxsize=16)
def _basis(n_harm: int, m_time: int):
    """Samples e (M × (2N+1)) of [1, cos θ, sin θ, …] and the projection w back (read-only,
    shared by every solve with the same N and M)."""
    th = 2.0 * np.pi * np.arange(m_time) / m_time
    cols = [np.ones(m_time)]
    for n in range(1, n_harm + 1):
        cols += [np.cos(n * th), np.sin(n * th)]
    e = np.column_stack(cols)
    w = e.T * (2.0 / m_time)
    w[0] /= 2.0
    e.flags.writeable = False
    w.flags.writeable = False
    return e, w


def _vent_highpass(model: LumpedModel, w):
    rc = model.vent_resistance_pa_s_per_m3 * model.back_volume_compliance_m3_per_pa
    return 1j * w * rc / (1.0 + 1j * w * rc)


def _linear_operator(model: LumpedModel, f_hz: float, n_harm: int) -> np.ndarray:
    """Block-diagonal linear operator (N/m) on [a0, a1, b1, ...] (displacement to force)."""
    n = np.arange(1, n_harm + 1)
    w = 2.0 * np.pi * f_hz * n
    b, k_film = model.film(f_hz * n)
    h_v = _vent_highpass(model, w)
    kn = (model.stiffness_n_per_m + k_film - w**2 * model.mass_kg + 1j * w * b
          + model.area_m2**2 / model.back_volume_compliance_m3_per_pa * h_v)
    lop = np.zeros((2 * n_harm + 1, 2 * n_harm + 1))
    lop[0, 0] = model.stiffness_n_per_m
    for i, kk in enumerate(kn):
        j = 1 + 2 * i
        lop[j:j + 2, j:j + 2] = [[kk.real, kk.imag], [-kk.imag, kk.real]]
    return lop


def _forcing(model: LumpedModel, f_hz: float, spl_db: float, n_harm: int) -> np.ndarray:
    g = model.area_m2 * _vent_highpass(model, 2.0 * np.pi * f_hz) * \
        spl_to_pressure_amplitude(spl_db)
    out = np.zeros(2 * n_harm + 1)
    out[1], out[2] = g.real, -g.imag
    return out


@functools.lru_cache(maxsize=16)
def _derivative_operator(n_harm: int) -> np.ndarray:
    """d/dθ on [a0, a1, b1, ...]: (a_n, b_n) → (n b_n, −n a_n) (read-only, shared)."""
    d = np.zeros((2 * n_harm + 1, 2 * n_harm + 1))
    for n in range(1, n_harm + 1):
        j = 2 * n - 1
        d[j, j + 1], d[j + 1, j] = n, -n
    d.flags.writeable = False
    return d


def _newton(model, es: NonlinearTransducer, f_hz, spl_db, n_harm, guess, lops=None):
    """Solve the harmonic-balance equations; unknowns [ξ/g coefficients, (q − Q0)/Q0 ones].
    ``lops``: a dict keeping the linear operator per (f, N) over a scan of one model."""
    m_time, nb = 4 * n_harm, 2 * n_harm + 1
    e, w = _basis(n_harm, m_time)
    if lops is None:
        lop = _linear_operator(model, f_hz, n_harm)
    else:
        lop = lops.get((f_hz, n_harm))
        if lop is None:
            lop = lops[(f_hz, n_harm)] = _linear_operator(model, f_hz, n_harm)
    fext = _forcing(model, f_hz, spl_db, n_harm)
    dop = 2.0 * np.pi * f_hz * model.bias_resistance_ohm * _derivative_operator(n_harm)
    g, kref, q0, vb = model.gap_m, model.stiffness_n_per_m, es.q0, es.vb
    u = np.zeros(2 * nb) if guess is None else guess.copy()

    def residual(u):
        xi, q = e @ (g * u[:nb]), q0 * (1.0 + e @ u[nb:])
        f, f_x, f_q = es.force(xi, q)
        v, v_x, v_q = es.voltage(xi, q)
        r_mech = (lop @ (g * u[:nb]) - fext - w @ f) / (kref * g)
        r_elec = (dop @ (q0 * u[nb:]) + w @ v) / vb
        r_elec[0] -= 1.0
        jac = np.empty((2 * nb, 2 * nb))
        jac[:nb, :nb] = (lop - w @ (f_x[:, None] * e)) / kref
        jac[:nb, nb:] = (w @ (f_q[:, None] * e)) * (-q0 / (kref * g))
        jac[nb:, :nb] = (w @ (v_x[:, None] * e)) * (g / vb)
        jac[nb:, nb:] = (dop + w @ (v_q[:, None] * e)) * (q0 / vb)
        return np.concatenate([r_mech, r_elec]), jac

    r, jac = residual(u)
    for _ in range(60):
        step = np.linalg.solve(jac, -r)
        lam = 1.0
        while True:
            r_new, jac_new = residual(u + lam * step)
            if np.all(np.isfinite(r_new)) and (np.linalg.norm(r_new) < np.linalg.norm(r)
                                               or lam < 1e-3):
                break
            lam *= 0.5
        u, r, jac = u + lam * step, r_new, jac_new
        if np.max(np.abs(lam * step)) < 1e-13 and np.linalg.norm(r) < 1e-9:
            return u
    raise ConvergenceError(f"harmonic balance did not converge at {spl_db:.1f} dB SPL")


def _harmonics(samples: np.ndarray, n_harm: int) -> np.ndarray:
    """Complex amplitudes (phasors of e^{jnθ}) of samples over one period, n = 0..N."""
    z = np.fft.rfft(samples) / samples.size
    z[1:] *= 2.0
    return z[:n_harm + 1]


def _thd(vh: np.ndarray) -> float:
    return float(np.sqrt(np.sum(np.abs(vh[2:]) ** 2)) / np.abs(vh[1]))


def _solution(model, es, f_hz, spl_db, n_harm, u) -> HarmonicSolution:
    m_fine, nb = 16 * n_harm, 2 * n_harm + 1
    e, _ = _basis(n_harm, m_fine)
    xi, q = e @ (model.gap_m * u[:nb]), es.q0 * (1.0 + e @ u[nb:])
    v, _, _ = es.voltage(xi, q)
    vh = _harmonics(v - es.vb, n_harm)
    thd = _thd(vh)
    upper = np.sqrt(np.sum(np.abs(vh[n_harm // 2 + 1:]) ** 2)) / np.abs(vh[1])
    return HarmonicSolution(float(spl_db), float(f_hz), _harmonics(xi, n_harm), vh, thd,
                            float(es.xb + xi.max()), float(es.xb + xi.min()), float(q.mean()),
                            float(upper / thd) if thd > 0 else 0.0, u)


def _pad(u: np.ndarray, n_harm: int) -> np.ndarray:
    """Coefficients of a solution re-cut to N harmonics (zeros added or dropped)."""
    old, new = u.size // 2, 2 * n_harm + 1
    k = min(old, new)
    out = np.zeros(2 * new)
    out[:k], out[new:new + k] = u[:k], u[old:old + k]
    return out


def _predict(u: np.ndarray, n_harm: int, ratio: float) -> np.ndarray:
    """A continued solution's coefficients scaled to a drive ``ratio`` times larger, as the
    weakly nonlinear solution scales: the mean and harmonic n (cos and sin) of both unknowns
    like ratio², ratio^n (n capped at 2)."""
    pw = np.concatenate([[2.0], np.repeat(np.minimum(np.arange(1, n_harm + 1), 2), 2)])
    scale = ratio ** np.concatenate([pw, pw])
    return u * scale


def harmonic_balance(model: LumpedModel, spl_db: float, frequency_hz: float = 1000.0, *,
                     harmonics: int = 16, max_harmonics: int = 256,
                     readout_nonlinear: bool = True, force_nonlinear: bool = True,
                     initial: HarmonicSolution | None = None) -> HarmonicSolution:
    """Periodic steady state by harmonic balance (see the module docstring).

    Parameters
    ----------
    spl_db : sound pressure level, dB re 20 µPa.
    frequency_hz : drive frequency (Hz).
    harmonics : starting harmonic count N (doubled until converged, up to ``max_harmonics``).
    readout_nonlinear, force_nonlinear : switch either nonlinearity off (linearised instead).
    initial : a solution to continue from (e.g. at a nearby SPL).
    """
    es = _scan_state.get("es")
    if es is None or _scan_state.get("key") != (id(model), readout_nonlinear, force_nonlinear):
        es = NonlinearTransducer(model, readout_nonlinear, force_nonlinear)
    lops = _scan_state.get("lops")
    n = harmonics
    guess = None if initial is None else _predict(_pad(initial._coefficients, n), n,
                                                  10.0 ** ((spl_db - initial.spl_db) / 20.0))
    while True:
        sol = _solution(model, es, frequency_hz, spl_db, n,
                        _newton(model, es, frequency_hz, spl_db, n, guess, lops))
        if sol.truncation * sol.thd < max(1e-4 * sol.thd, 1e-10) or 2 * n > max_harmonics:
            return sol
        guess, n = _pad(sol._coefficients, 2 * n), 2 * n


def _decay_time_s(model: LumpedModel) -> float:
    c_d = model.area_m2**2 / model.net_stiffness_n_per_m
    tau_v = model.vent_resistance_pa_s_per_m3 * (model.back_volume_compliance_m3_per_pa + c_d)
    tau_e = model.bias_resistance_ohm * (model.node_capacitance_f
                                         + model.transduction_n_per_v**2
                                         / model.net_stiffness_n_per_m)
    tau_m = 2.0 * model.mass_kg / max(model.damping_n_s_per_m, 1e-300)
    return max(tau_v, tau_e, tau_m)


def thd_time_domain(model: LumpedModel, spl_db: float, frequency_hz: float = 1000.0, *,
                    periods: int | None = None, rtol: float = 1e-10) -> float:
    """THD of the output by direct integration (``scipy.integrate.solve_ivp``, DOP853).

    The bias resistor is included (no constant-charge assumption).  Started from the linear
    steady state; ``periods`` defaults to 6 decay times of the slowest mode plus 10 periods.
    Needs ``film_damping = None`` (constant b, no film stiffness).
    """
    if model.film_damping is not None:
        raise LumpedModelError("film_damping: must be None for the time-domain check "
                               "(constant damping only)")
    es = NonlinearTransducer(model, True, True)
    w = 2.0 * np.pi * frequency_hz
    pa = spl_to_pressure_amplitude(spl_db)
    m_, b_, k_, a_ = (model.mass_kg, model.damping_n_s_per_m, model.stiffness_n_per_m,
                      model.area_m2)
    cbv, rv = model.back_volume_compliance_m3_per_pa, model.vent_resistance_pa_s_per_m3
    rb = model.bias_resistance_ohm
    x0 = pa * a_ / k_
    sol = solve_circuit(model, [frequency_hz])
    xlin = sol.displacement(pressure_pa=pa)[0]
    vlin = sol.output_voltage(pressure_pa=pa)[0]
    pblin = (1j * w * a_ * xlin + pa / rv) / sol.back_admittance[0]
    qlin = -vlin / (1j * w * rb)
    y0 = [xlin.real / x0, -xlin.imag / x0, pblin.real / pa, qlin.real / es.q0]

    def rhs(th, y):
        xi, q, p, pb = y[0] * x0, es.q0 * (1.0 + y[3]), pa * math.cos(th), y[2] * pa
        f, v = es.scalar(xi, q)
        acc = (-b_ * w * y[1] * x0 - k_ * xi + a_ * (p - pb) + f) / (m_ * w**2)
        dpb = (a_ * w * y[1] * x0 + (p - pb) / rv) / (cbv * w)
        dq = (es.vb - v) / (rb * w)
        return [y[1], acc / x0, dpb / pa, dq / es.q0]

    if periods is None:
        periods = int(math.ceil(6.0 * _decay_time_s(model) * frequency_hz)) + 10
    t_end = 2.0 * np.pi * periods
    th = t_end - 2.0 * np.pi + 2.0 * np.pi * np.arange(256) / 256
    out = solve_ivp(rhs, (0.0, t_end), y0, method="DOP853", t_eval=th, rtol=rtol,
                    atol=rtol * 1e-2)
    if not out.success:
        raise ConvergenceError(f"time integration failed at {spl_db:.1f} dB SPL: {out.message}")
    v, _, _ = es.voltage(out.y[0] * x0, es.q0 * (1.0 + out.y[3]))
    return _thd(_harmonics(v - es.vb, 32))


@dataclass(frozen=True)
class DistortionResult:
    """THD versus SPL at one frequency, and the SPLs where THD reaches 1 % and 10 %.

    Attributes
    ----------
    frequency_hz : drive frequency (Hz).
    spl_db, thd, peak_displacement_m : arrays over the SPLs that were solved (dB, fraction, m).
    thd_1pct_spl_db, aop_10pct_spl_db : SPL (dB re 20 µPa) where THD = 1 % / 10 %, or None.
    limit_reason : why the scan ended before its last SPL (None if it did not), or why a
        threshold was not reached.
    """

    frequency_hz: float
    spl_db: np.ndarray
    thd: np.ndarray
    peak_displacement_m: np.ndarray
    thd_1pct_spl_db: float | None
    aop_10pct_spl_db: float | None
    limit_reason: str | None

    def to_summary(self) -> dict:
        """The distortion keys of summary.json's ``response`` section."""
        return {"thd_1pct_spl_db": self.thd_1pct_spl_db,
                "aop_10pct_spl_db": self.aop_10pct_spl_db,
                "thd_frequency_hz": self.frequency_hz,
                "thd_limit_note": self.limit_reason}


def _limit(model: LumpedModel, curve: CapacitanceCurve, sol: HarmonicSolution) -> str | None:
    """Why this solution is outside the model's validity, or None.

    C(x) diverges where the diaphragm meets the backplate (x = g), so a sampled curve always ends
    short of contact: leaving its range is the first sign of approaching the backplate.
    """
    hi, lo = sol.peak_displacement_m, sol.min_displacement_m
    if hi > curve.x_max_m or lo < curve.x_min_m:
        return (f"the centre displacement leaves the sampled C(x) range "
                f"[{curve.x_min_m:.3g}, {curve.x_max_m:.3g}] m at {sol.spl_db:.1f} dB SPL "
                f"(x from {lo:.3g} to {hi:.3g} m, peak {100 * hi / model.gap_m:.0f} % of the gap "
                f"to the backplate)")
    return None


def _crossing(model, f_hz, level, sols, pool, kw) -> float | None:
    """SPL where THD first reaches ``level``: the first bracket of the scan with
    THD(L0) < level ≤ THD(L1), then Brent's method (``scipy.optimize.brentq``, xtol 1e-4 dB) on
    g(L) = ln(THD(L)/level), nearly linear in L because THD grows like a power of the pressure.

    Every trial solve starts from the solved point of ``pool`` (the scan and earlier trials)
    with the highest SPL below the trial level, so the continuation keeps to the branch the scan
    followed upward; the trial's solution joins ``pool``.
    """
    for s0, s1 in zip(sols[:-1], sols[1:]):
        if s0.thd < level <= s1.thd:
            def g(spl):
                if spl <= s0.spl_db:
                    s = s0
                elif spl >= s1.spl_db:
                    s = s1
                else:
                    start = max((p for p in pool if p.spl_db < spl), key=lambda p: p.spl_db)
                    s = harmonic_balance(model, spl, f_hz, initial=start, **kw)
                    pool.append(s)
                return math.log(max(s.thd, 1e-300) / level)

            return float(brentq(g, s0.spl_db, s1.spl_db, xtol=_CROSSING_XTOL_DB))
    return None


#: the crossing's tolerance (dB)
_CROSSING_XTOL_DB = 1e-4
#: THD below which the default scan may pass over levels of its 2 dB grid
_SKIP_BELOW_THD = 1e-3
#: a pass-over aims at this THD, at most this share of the C(x) room left on either side of the
#: bias point, and at most this many dB
_SKIP_AIM_THD, _SKIP_ROOM, _SKIP_MAX_DB = 5e-4, 0.5, 40.0


def distortion_vs_spl(model: LumpedModel, frequency_hz: float = 1000.0, spl_db=None,
                      curve: bool = True, **kw) -> DistortionResult:
    """THD versus SPL by harmonic balance with continuation, and the 1 % / 10 % points.

    ``spl_db``: the levels to solve, in increasing order, each one solved (continuation from
    the previous one).  By default the grid 60, 62, …, 160 dB, of which the levels solved are:
    60 dB; then, while the last solved THD is below 0.1 %, the highest grid level within all of
    (a) the SPL where the THD extrapolated as a power of the pressure reaches 0.05 % (exponent
    from the last two solved points, at least 1 (THD ∝ p)), (b) the SPL where the excursion,
    scaled ∝ p, reaches half the C(x) range left on either side of the bias point, and
    (c) +40 dB; every grid level from the first solved THD ≥ 0.1 % on.  A passed-over stretch
    whose end does not converge, leaves the C(x) range or has THD ≥ 0.1 % is not kept: the scan
    goes back to every 2 dB level from the last kept point, so the level where the scan stops
    and every point with THD ≥ 0.1 % (hence the crossings' brackets) are those of the full 2 dB
    grid.  The returned arrays hold the solved levels only.

    The scan stops at the first SPL whose solution leaves the C(x) range (it ends short of the
    backplate) or does not converge; thresholds not reached by then are None (see
    ``limit_reason``).  The crossings are found by :func:`_crossing`.  Keywords go to
    :func:`harmonic_balance`.

    ``curve=False`` (default grid only): the sparse scan of the module docstring, for the
    crossings, stopping level and reason alone; the arrays then hold the few levels solved.
    """
    skip = spl_db is None
    if not curve and not skip:
        raise ValueError("curve=False needs the default grid (spl_db=None)")
    levels = np.arange(60.0, 160.0 + 1e-9, 2.0) if skip else np.asarray(spl_db, float)
    key = (id(model), kw.get("readout_nonlinear", True), kw.get("force_nonlinear", True))
    _scan_state.update(key=key, es=NonlinearTransducer(model, key[1], key[2]), lops={})
    try:
        if not curve:
            return _sparse_scan(model, frequency_hz, levels, kw)
        return _scan(model, frequency_hz, levels, kw, skip)
    finally:
        _scan_state.clear()


#: the transducer and linear operators of the scan in progress (one model, many solves)
_scan_state: dict = {}


def _jump_db(sols, es, room: float, aim_thd: float | None, room_share: float) -> float:
    """The longest step (dB) from the last solution ``sols[-1]``: THD extrapolated as a power
    of the pressure (the slope of the last two solutions, at least 1: THD ∝ p) to reach
    ``aim_thd`` at most, the displacement amplitude to reach ``room_share`` of the C(x)
    ``room`` at most, and :data:`_SKIP_MAX_DB` at most."""
    s = sols[-1]
    k = math.log(10.0) / 20.0
    if len(sols) > 1 and s.thd > 0 and sols[-2].thd > 0:
        k = max(k, math.log(s.thd / sols[-2].thd) / (s.spl_db - sols[-2].spl_db))
    step = _SKIP_MAX_DB
    if aim_thd is not None and s.thd > 0:
        step = min(step, math.log(aim_thd / s.thd) / k)
    amp = max(s.peak_displacement_m - es.xb, es.xb - s.min_displacement_m)
    if amp > 0:
        step = min(step, 20.0 * math.log10(room_share * room / amp))
    return step


def _skip_to(levels, i, sols, es) -> int:
    """Index of the highest level from ``levels[i]`` on that the scan may go to directly from its
    last solution (``i`` itself when no level may be passed over); see
    :func:`distortion_vs_spl`."""
    curve = es.curve
    room = min(curve.x_max_m - es.xb, es.xb - curve.x_min_m)
    top = sols[-1].spl_db + _jump_db(sols, es, room, _SKIP_AIM_THD, _SKIP_ROOM)
    j = i
    while j + 1 < len(levels) and levels[j + 1] <= top + 1e-9:
        j += 1
    return j


def _scan(model: LumpedModel, frequency_hz: float, levels, kw, skip) -> DistortionResult:
    es = _scan_state["es"]
    sols, reason, i = [], None, 0
    while i < len(levels):
        prev = sols[-1] if sols else None
        j = _skip_to(levels, i, sols, es) if skip and sols else i
        try:
            s = harmonic_balance(model, float(levels[j]), frequency_hz, initial=prev, **kw)
            bad = _limit(model, es.curve, s)
        except ConvergenceError as exc:
            s, bad = None, str(exc)
        if j > i and (bad is not None or s.thd >= _SKIP_BELOW_THD):
            skip = False  # back to every level from the last kept solution
            continue
        if bad is not None:
            reason = bad
            break
        sols.append(s)
        skip = skip and s.thd < _SKIP_BELOW_THD
        i = j + 1
    return _result(model, frequency_hz, levels, sols, reason, kw)


def _result(model, frequency_hz, levels, sols, reason, kw) -> DistortionResult:
    """The crossings of the solved ``sols`` (increasing SPL) and the scan's limit reason."""
    pool = list(sols)
    x1 = _crossing(model, frequency_hz, 0.01, sols, pool, kw)
    x10 = _crossing(model, frequency_hz, 0.10, sols, pool, kw)
    if sols and sols[0].thd >= 0.01:
        reason = f"THD is above 1 % already at the lowest SPL {sols[0].spl_db:.1f} dB"
    elif x10 is None and reason is None:
        reason = f"THD stays below 10 % up to {levels[-1]:.1f} dB SPL"
    return DistortionResult(float(frequency_hz), np.array([s.spl_db for s in sols]),
                            np.array([s.thd for s in sols]),
                            np.array([s.peak_displacement_m for s in sols]), x1, x10, reason)


#: the sparse scan aims at this multiple of the next threshold (just past it: the jump then
#: brackets the crossing) and at most at this share of the C(x) room left
_SPARSE_AIM, _SPARSE_ROOM = 1.25, 0.5


def _sparse_scan(model: LumpedModel, frequency_hz: float, levels, kw) -> DistortionResult:
    """The scan without the curve (module docstring): jumps over the grid aimed just past the
    next THD threshold; a failed jump is halved on the grid until the first failing level."""
    es, curve = _scan_state["es"], _scan_state["es"].curve
    room = min(curve.x_max_m - es.xb, es.xb - curve.x_min_m)
    sols, reason, i = [], None, -1  # i: index of the last solved level
    bad_at = len(levels)  # the lowest level known to fail (continued from further below)
    while i + 1 < len(levels):
        j = 0
        if sols:
            nxt = [t for t in (0.01, 0.10) if t > sols[-1].thd]
            top = sols[-1].spl_db + _jump_db(sols, es, room,
                                             _SPARSE_AIM * nxt[0] if nxt else None,
                                             _SPARSE_ROOM)
            j = i + 1
            while j + 1 < min(len(levels), bad_at) and levels[j + 1] <= top + 1e-9:
                j += 1
            if bad_at < len(levels):
                j = min(j, max(i + 1, (i + bad_at) // 2))
        try:
            s = harmonic_balance(model, float(levels[j]), frequency_hz,
                                 initial=sols[-1] if sols else None, **kw)
            bad = _limit(model, curve, s)
        except ConvergenceError as exc:
            s, bad = None, str(exc)
        if bad is None:
            sols.append(s)
            i = j
        elif j == i + 1:  # fails continued from the level below: where the full scan stops
            reason = bad
            break
        else:
            bad_at = j
    return _result(model, frequency_hz, levels, sols, reason, kw)
