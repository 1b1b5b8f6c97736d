"""Deflection versus pressure of the von Kármán diaphragm, both signs, up to contact.

Model: :mod:`diagap.fem.plate.vonkarman` (anchored edge, residual stress), optionally with the
electrostatic attraction of the bias on the electrode,

    p_e(w) = ½ V² π(g − w),   π(ĝ) = −dc/dĝ   (Pa; :mod:`diagap.fem.coupling.branch`),

added to the uniform sound pressure p (positive toward the backplate, like w).

Method. The centre deflection w0 is traced by displacement control (the pressure an unknown,
bordered Newton), from the equilibrium at p = 0 up to the clearance (the gap, or the gap minus a
stopper height) and down to the same travel away from the backplate. With bias the pressure
p(w0) may have a maximum before the clearance (snap-through to the backplate); the contact
pressure is max p(w0) over w0 ≤ clearance: the pressure at which the diaphragm first touches
(at the fold, located by successive parabolic interpolation of p(w0) through exact bordered
solves, else at the clearance itself). Deflections at
requested pressures are solved by Newton with the pressure prescribed, started from the nearest
traced state below (load continuation, halving the step on failure); pressures at or beyond the
contact pressure give None. Contact is judged at the centre, the largest deflection under a
uniform load. Each trace step starts from the cubic extrapolation in w0 of the four states before
it and reuses the last factorised tangent (chord iteration, :mod:`diagap.fem.plate.newton`); a
step that needs more than ``STEP_FACTORISATIONS`` factorisations is abandoned and bisected. The
equilibria are those of full Newton to the solver tolerance (tested against ``reference``).

Errors: every quantity is computed on the two finest mesh levels of the accuracy setting
(:mod:`diagap.fem.levels`) and the finest is reported with a Richardson estimate (order 2, the
disk's polygonal boundary; observed order 1.96 against the axisymmetric boundary-value problem in
the tests). The coarse level serves only the estimates: it is traced toward the backplate only,
with steps twice as long. The electrostatic table range is extended below its smallest gap by
the parallel-plate law π ∝ 1/ĝ² (a model reduction that matters only within the last fraction of
the stroke, where the snap has already happened).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from diagap.fem.levels import ORDER, RATIO, richardson
from diagap.fem.plate.vonkarman import NewtonError, WLoad, build_von_karman

__all__ = ["LargeDeflectionResult", "ElectrostaticBias", "solve_large_deflection",
           "level_systems", "trace_states", "requested_deflections"]

#: largest centre-deflection step of the trace, in thicknesses, and the fewest and most trace
#: steps per direction (the most win over the step for deep strokes)
STEP_THICKNESS = 0.5
MIN_STEPS = 8
MAX_STEPS = 12
#: states extrapolated (polynomial in the centre deflection) to start each trace step; 1: start
#: from the last state
PREDICTOR_POINTS = 4
#: tangent factorisations after which a trace step is abandoned (and bisected)
STEP_FACTORISATIONS = 8


@dataclass(frozen=True)
class ElectrostaticBias:
    """The bias load: electrode radius (circle) or side (square) in m, rest gap (m), bias (V), and
    π(ĝ) = −dc/dĝ with its slope (an :class:`~diagap.fem.coupling.branch.ElectrostaticLoad`),
    valid for local gaps in ``gap_range_m`` (None: everywhere); outside it π is extended by the
    parallel-plate law π ∝ 1/ĝ² from the nearest end of the range."""

    electrode_size_m: float
    gap_m: float
    bias_voltage_v: float
    load: object
    gap_range_m: tuple | None = None

    def pressure(self, w_m: np.ndarray):
        """(p_e in Pa, dp_e/dw in Pa/m) at local deflections w_m."""
        g = np.maximum(self.gap_m - np.asarray(w_m, dtype=float), 1e-4 * self.gap_m)
        lo, hi = self.gap_range_m if self.gap_range_m is not None else (0.0, np.inf)
        gc = np.clip(g, lo, hi)
        pi = np.array(self.load.pressure_per_v2(gc), dtype=float)
        dpi = np.array(self.load.pressure_slope_per_v2(gc), dtype=float)
        out = (g < lo) | (g > hi)
        if np.any(out):  # parallel-plate extension outside the table
            pi[out] = pi[out] * (gc[out] / g[out]) ** 2
            dpi[out] = -2.0 * pi[out] / g[out]
        half_v2 = 0.5 * self.bias_voltage_v**2
        return half_v2 * pi, -half_v2 * dpi


@dataclass(frozen=True)
class LargeDeflectionResult:
    """Static deflection versus uniform pressure (SI), finest mesh level, with error estimates.

    ``center_deflection_m[i]`` is the centre deflection at ``pressures_pa[i]`` (None at or past
    contact); ``linear_center_deflection_m`` the linear prediction (compliance at the p = 0
    equilibrium); ``curve_*`` the traced curve (both signs, ordered by deflection);
    ``contact_pressure_pa`` the pressure at which the centre reaches ``clearance_m`` (or snaps
    there), None without a clearance. ``uncertainty``: relative error estimates.
    """

    pressures_pa: tuple
    center_deflection_m: tuple
    linear_center_deflection_m: tuple
    contact_pressure_pa: float | None
    clearance_m: float | None
    curve_pressures_pa: tuple
    curve_deflections_m: tuple
    compliance_m_per_pa: float
    uncertainty: dict
    accuracy: str
    mesh_dofs: tuple
    _states: tuple = field(default=(), repr=False, compare=False)
    _system: object = field(default=None, repr=False, compare=False)

    def curve_field_m(self, i: int, x_m, y_m) -> np.ndarray:
        """Deflection (m) of traced state ``i`` at SI points (no domain mask); not available on
        a :meth:`detached` copy."""
        vk = self._system
        if vk is None:
            raise RuntimeError("the traced fields were not kept (a detached result)")
        q = vk.split(self._states[i])[0] * vk.h
        return vk.plate.evaluate(q, x_m, y_m)

    def detached(self) -> "LargeDeflectionResult":
        """This result without its FE system and states (picklable, small): every number stays,
        :meth:`curve_field_m` goes."""
        from dataclasses import replace

        return replace(self, _states=(), _system=None)

    def to_summary(self) -> dict:
        return {
            "pressures_pa": [float(p) for p in self.pressures_pa],
            "center_deflection_m": [None if w is None else float(w)
                                    for w in self.center_deflection_m],
            "linear_center_deflection_m": [float(w) for w in self.linear_center_deflection_m],
            "contact_pressure_pa": None if self.contact_pressure_pa is None
            else float(self.contact_pressure_pa),
            "clearance_m": None if self.clearance_m is None else float(self.clearance_m),
            "curve": [[float(p), float(w)] for p, w in zip(self.curve_pressures_pa,
                                                           self.curve_deflections_m)],
            "accuracy": self.accuracy,
            "mesh_dofs": list(self.mesh_dofs),
        }


def _electrode_elements(plate, shape: str, electrode_size_m: float) -> np.ndarray:
    mesh, L = plate.mesh, plate.length_m
    cent = mesh.p[:, mesh.t].mean(axis=1)
    inner = electrode_size_m / L if shape == "circle" else 0.5 * electrode_size_m / L
    r = np.hypot(cent[0], cent[1]) if shape == "circle" else np.abs(cent).max(axis=0)
    return np.nonzero(r < inner * (1 + 1e-9))[0]


def level_systems(problem, accuracy: str, bias: ElectrostaticBias | None = None):
    """The von Kármán systems of the two finest mesh levels (coarse first) of the mesh family used
    for ``accuracy``. For the disk one family coarser than the linear mechanics, as for the
    electromechanical coupling (``COUPLING_MESHES``), since the centre deflection is a global
    quantity (measured: error ≤ 5e-4 of the draft family against the fine one, up to 5
    thicknesses; its Richardson estimate is of the same size). The square keeps the family of
    ``accuracy`` (its meshes are small; one family coarser, the contact pressure's estimate fell
    short of the error by 15 % on a clamped square)."""
    from diagap.fem.coupling.plate import COUPLING_MESHES, plate_levels
    from diagap.fem.plate.solver import _layer_width, _mesh, assemble_plate
    from diagap.fem.levels import mesh_sizes

    if problem.shape == "circle":  # the square's meshes are small: keep its own family
        accuracy = COUPLING_MESHES.get(accuracy, accuracy)
    if bias is None:
        plates = [assemble_plate(problem, _mesh(problem.shape, s))
                  for s in mesh_sizes(problem.shape, accuracy, _layer_width(problem))[-2:]]
        return [build_von_karman(p, problem.thickness_m) for p in plates]
    plates, _ = plate_levels(problem, accuracy, bias.electrode_size_m)
    out = []
    for p in plates[-2:]:
        el = _electrode_elements(p, problem.shape, bias.electrode_size_m)
        out.append(build_von_karman(p, problem.thickness_m, (WLoad(el, bias.pressure),)))
    return out


def _continue_pressure(vk, P_target, x, P):
    """Pressure-controlled continuation from (x, P) to P_target, halving failed steps."""
    step = P_target - P
    for _ in range(40):
        if P == P_target:
            return x
        trial = P + step if abs(step) < abs(P_target - P) else P_target
        try:
            x, _ = vk.solve_pressure(trial, x)
            P = trial
            step *= 1.5
        except NewtonError:
            step *= 0.5
    raise NewtonError(f"continuation to scaled pressure {P_target:.6g} failed")


def _predict(history, W, points: int = PREDICTOR_POINTS):
    """(x, P) at centre deflection W extrapolated from the last converged states of a trace
    (Lagrange polynomial in W through up to ``points`` of them): the start of the next
    Newton solve. With one state, that state itself (the first chord step is then the tangent
    predictor)."""
    pts = history[-points:]
    Ws = [h[0] for h in pts]
    if len(set(Ws)) < len(Ws):
        return pts[-1][2].copy(), pts[-1][1]
    x = np.zeros_like(pts[-1][2])
    P = 0.0
    for i, (Wi, Pi, xi) in enumerate(pts):
        li = math.prod((W - Wj) / (Wi - Wj) for j, Wj in enumerate(Ws) if j != i)
        x += li * xi
        P += li * Pi
    return x, P


def _trace_side(vk, x0, P0, W0, W_end, n_steps, stop_after_fold, reference=False):
    """Displacement-controlled states from W0 to W_end: a list of (W, P, x). A step that fails is
    bisected (up to five times in a row); with ``stop_after_fold`` the trace ends once P has
    passed its maximum (or a step fails beyond it: past the snap, the gap closes). Each solve
    starts from the extrapolation of the states before it (:func:`_predict`); ``reference``:
    from the last state, with a fresh tangent at every Newton iterate."""
    out = []
    history = [(W0, P0, x0)]
    x, P, W_cur = x0, P0, W0
    queue = list(np.linspace(W0, W_end, n_steps + 1)[1:])
    fails = 0

    def folded():
        return stop_after_fold and len(out) >= 2 and out[-1][1] < out[-2][1]

    while queue:
        W = queue[0]
        try:
            if len(history) > 1 and not reference:
                xp, Pp = _predict(history, W)
                x, P, _ = vk.solve_deflection(W, xp, Pp, predicted=True,
                                              max_factorisations=STEP_FACTORISATIONS)
            else:
                x, P, _ = vk.solve_deflection(W, history[-1][2], history[-1][1],
                                              max_factorisations=STEP_FACTORISATIONS)
        except NewtonError:
            fails += 1
            if fails > 5:
                if folded():
                    break
                raise
            queue.insert(0, 0.5 * (W_cur + W))
            continue
        fails = 0
        queue.pop(0)
        out.append((W, P, x))
        history.append((W, P, x))
        W_cur = W
        if folded():
            break
    return out


def trace_states(vk, clearance_m=None, travel_m=None, full: bool = True,
                 both_signs: bool = True, reference: bool = False) -> dict:
    """The traced curve of one mesh level (see :func:`solve_large_deflection`): the p = 0
    equilibrium, its compliance, the states (both signs when asked), the stable ones (starts for
    requested pressures) and the scaled contact pressure. With ``full`` False (the coarse level,
    used only for the error estimates) the trace away from the backplate is skipped and the steps
    toward it are twice as long; ``both_signs`` False skips it on every level."""
    h, ps = vk.h, vk.pressure_scale_pa
    x0, _ = vk.solve_pressure(0.0, vk.zero())
    W_b = float(vk.center @ vk.split(x0)[0])
    f = np.concatenate([vk.unit_load, np.zeros(vk.n - vk.nq_dofs)])
    compliance = float(vk.center @ vk.split(vk.tangent_lu_at(x0, 0.0).solve(f))[0]) * h / ps
    travel = clearance_m if clearance_m is not None else travel_m
    states = [(W_b, 0.0, x0)]
    stable = list(states)
    contact = None
    if travel is not None:
        W_end = travel / h
        step, fewest = (STEP_THICKNESS, MIN_STEPS) if full else (2 * STEP_THICKNESS, MIN_STEPS // 2)
        n = min(max(fewest, math.ceil(abs(W_end - W_b) / step)), MAX_STEPS)
        up = _trace_side(vk, x0, 0.0, W_b, W_end, n, bool(vk.loads), reference)
        dn = _trace_side(vk, x0, 0.0, W_b, -W_end, n, False, reference) \
            if full and both_signs else []
        states = dn[::-1] + states + up
        k = int(np.argmax([s[1] for s in up])) if up else -1
        stable = dn + stable + up[:k + 1]
        if clearance_m is not None:
            contact = _contact(vk, up, reference)
    return {"contact": contact, "compliance": compliance, "states": states, "stable": stable}


def requested_deflections(vk, traced: dict, pressures_pa) -> list:
    """Centre deflections (m) at ``pressures_pa`` on the level of ``traced`` (a
    :func:`trace_states` result; None at or past contact), each solved by pressure continuation
    from the nearest stable traced state; the solved states join ``traced["stable"]``."""
    stable, contact = traced["stable"], traced["contact"]
    results = []
    for p in pressures_pa:
        P = p / vk.pressure_scale_pa
        if contact is not None and P >= contact:
            results.append(None)
            continue
        start = _nearest(stable, P)
        x = _continue_pressure(vk, P, start[2], start[1])
        W = float(vk.center @ vk.split(x)[0])
        results.append(W * vk.h)
        stable.append((W, P, x))  # a start for the next pressures of a ramp
    return results


def _contact(vk, up, reference=False):
    """Scaled contact pressure: the maximum of P over the positive trace (fold or end point).
    An interior maximum (the fold) is refined by successive parabolic interpolation of P(W)
    through three bracketing states, each new point an exact bordered solve."""
    P = np.array([s[1] for s in up])
    k = int(np.argmax(P))
    if k == len(up) - 1:
        return float(P[k])
    if k == 0:
        k = 1  # the fold within the first step: bracket with the first two points beyond it
    pts = [(up[i][0], up[i][1], up[i][2]) for i in (k - 1, k, k + 1)]
    for _ in range(6):
        W, Pw = np.array([p[0] for p in pts]), np.array([p[1] for p in pts])
        a, b, _ = np.polyfit(W, Pw, 2)
        if not a < 0:
            break
        W_star = float(np.clip(-b / (2 * a), W.min(), W.max()))
        best = pts[int(np.argmax(Pw))]
        if reference:
            x, P_star, _ = vk.solve_deflection(W_star, best[2], best[1])
        else:  # start from the interpolation between the bracketing states
            x0, P0 = _predict(pts, W_star)
            x, P_star, _ = vk.solve_deflection(W_star, x0, P0, predicted=True)
        far = int(np.argmax(np.abs(W - W_star)))
        pts[far] = (W_star, P_star, x)
        if abs(W_star - best[0]) <= 1e-4 * max(abs(W_star), 1.0):
            break
    return float(max(max(p[1] for p in pts), P[k]))


def _nearest(stable, P):
    """Stable traced state with the largest |pressure| not beyond P, of the same sign."""
    same = [s for s in stable if 0 <= s[1] <= P or P <= s[1] <= 0]
    return max(same, key=lambda s: abs(s[1]))


def solve_large_deflection(problem, pressures_pa, accuracy: str = "normal",
                           clearance_m: float | None = None,
                           bias: ElectrostaticBias | None = None,
                           travel_m: float | None = None,
                           both_signs: bool = True,
                           reference: bool = False) -> LargeDeflectionResult:
    """Centre deflection of the von Kármán diaphragm at uniform pressures, and contact.

    Parameters
    ----------
    problem : :class:`~diagap.fem.plate.solver.PlateProblem`
    pressures_pa : sequence of uniform pressures (Pa, positive toward the backplate)
    accuracy : "draft" | "normal" | "fine"
    clearance_m : centre travel to contact (gap, or gap minus stopper height), None: no contact
    bias : electrostatic load of the bias (None: no bias)
    travel_m : travel of the traced curve when ``clearance_m`` is None (None: no curve)
    both_signs : also trace the curve away from the backplate (same travel)
    reference : full Newton (a fresh tangent at every iterate) started from the last traced state
        instead of the chord iteration from extrapolated starts; the same equilibria to the
        solver tolerance, for checks of the fast path

    ``pressures_pa`` may be a callable returning the sequence: it is called once, after both
    levels are traced (the requested deflections come last, so a caller can compute them in
    parallel with other work and supply the pressures when known).
    """
    systems = level_systems(problem, accuracy, bias)
    for vk in systems:
        vk.FULL_NEWTON = reference
    traced = [trace_states(vk, clearance_m, travel_m, full=(i == len(systems) - 1),
                           both_signs=both_signs, reference=reference)
              for i, vk in enumerate(systems)]
    if callable(pressures_pa):
        pressures_pa = pressures_pa()
    levels = [{"w": requested_deflections(vk, t, pressures_pa),
               "contact": None if t["contact"] is None else t["contact"] * vk.pressure_scale_pa,
               "compliance": t["compliance"], "states": t["states"]}
              for vk, t in zip(systems, traced)]
    coarse, fine = levels
    order = ORDER[problem.shape]
    unc = {}
    pairs = [(c, f) for c, f in zip(coarse["w"], fine["w"]) if c is not None and f is not None
             and f != 0.0]
    if pairs:
        c, f = np.array(pairs).T
        unc["center_deflection_m"] = float(np.max(richardson(c, f, order, RATIO)))
    if fine["contact"] is not None and coarse["contact"] is not None:
        unc["contact_pressure_pa"] = float(richardson(coarse["contact"], fine["contact"],
                                                      order, RATIO))
    unc["compliance_m_per_pa"] = float(richardson(coarse["compliance"], fine["compliance"],
                                                  order, RATIO))
    vk = systems[-1]
    st = fine["states"]
    return LargeDeflectionResult(
        pressures_pa=tuple(float(p) for p in pressures_pa),
        center_deflection_m=tuple(fine["w"]),
        linear_center_deflection_m=tuple(float(p) * fine["compliance"] for p in pressures_pa),
        contact_pressure_pa=fine["contact"], clearance_m=clearance_m,
        curve_pressures_pa=tuple(s[1] * vk.pressure_scale_pa for s in st),
        curve_deflections_m=tuple(s[0] * vk.h for s in st),
        compliance_m_per_pa=fine["compliance"], uncertainty=unc, accuracy=accuracy,
        mesh_dofs=tuple(v.n for v in systems), _states=tuple(s[2] for s in st), _system=vk)
