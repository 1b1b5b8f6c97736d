"""The coupled solve's fast path gives the equilibria of full Newton, and shared operators stay
with their own design.

- Chord (modified Newton) iteration reusing the last factorised tangent, cubic predictor, secant
  fold search started from the coarser level, against Newton–Raphson with a fresh tangent at
  every iterate and Brent's method for the fold (R. P. Brent, Algorithms for Minimization without
  Derivatives, Prentice-Hall 1973, ch. 4). C. T. Kelley, Iterative Methods for Linear and
  Nonlinear Equations, SIAM 1995, ch. 5: the chord method converges to the same root as Newton's
  method, q-linearly [from memory]. Both solve the same discrete equations to the same tolerance
  (1e-10), so every output must agree far inside its stated error estimate: the check asks for
  1 % of it and, tighter, 1e-10 relative (measured: ≤ 2e-12; a chord tolerance loosened to
  1e-6 fails it).
- The physics of pull-in (the membrane limit of Pelesko & Bernstein 2002, convergence under
  refinement) is checked in tests/test_coupled_plate.py; here only the two solution paths.
"""
from __future__ import annotations

import numpy as np
import pytest

from diagap.fem.coupling.branch import (ElectrostaticLoad, equilibrium_at_voltage,
                                        trace_branch)
from diagap.fem.coupling.plate import coupling_system, plate_levels, solve_coupled
from diagap.fem.plate.solver import PlateProblem

A, H, E, NU, RHO, G = 0.5e-3, 1e-6, 160e9, 0.22, 2330.0, 4e-6
ELECTRODE = 0.45e-3
#: fraction of the reported relative error estimate allowed between fast and reference results
SHARE = 0.01
#: and the agreement asked for in practice (both converge to the Newton tolerance 1e-10)
TIGHT = 1e-10


def _problem(stress=10e6):
    return PlateProblem("circle", A, E, NU, H, RHO, stress, "clamped")


def _counting(monkeypatch):
    from scipy.sparse.linalg._dsolve import _superlu

    count = {"n": 0}
    orig = _superlu.gstrf

    def gstrf(*a, **kw):
        count["n"] += 1
        return orig(*a, **kw)

    monkeypatch.setattr(_superlu, "gstrf", gstrf)
    return count


@pytest.mark.parametrize("bias_v", [10.0, 22.5])  # V_PI = 23.47 V: Newton in V, and Brent near the fold
def test_fast_path_matches_full_newton(monkeypatch, bias_v):
    from diagap.fem.plate.shared import clear_shared_plates

    clear_shared_plates()
    count = _counting(monkeypatch)
    fast = solve_coupled(_problem(), "normal", ELECTRODE, G, bias_v)
    n_fast = count["n"]
    clear_shared_plates()
    count["n"] = 0
    ref = solve_coupled(_problem(), "normal", ELECTRODE, G, bias_v, full_newton=True)
    n_ref = count["n"]
    assert not ref.collapsed
    f, r = fast.to_summary(), ref.to_summary()
    for key, value in r.items():
        if isinstance(value, float):
            tol = min(SHARE * ref.uncertainty.get(key, np.inf), TIGHT) * abs(value)
            assert abs(f[key] - value) <= tol, (key, f[key], value)
    for key in ("resonance_no_bias_hz", "center_compliance_no_bias_m_per_pa"):
        assert getattr(fast, key) == pytest.approx(getattr(ref, key), rel=TIGHT, abs=0), key
    bf, br = np.array(f["branch"]), np.array(r["branch"])
    assert bf.shape == br.shape
    np.testing.assert_allclose(bf, br, rtol=TIGHT, atol=0)
    for key, value in ref.uncertainty.items():  # the estimates themselves are unchanged
        assert fast.uncertainty[key] == pytest.approx(value, rel=1e-4, abs=0), key
    assert n_fast < 0.3 * n_ref, (n_fast, n_ref)


def test_fold_search_from_poor_starts():
    # The fold found from a misleading hint (outside the bracket, or with the wrong curvature
    # sign) is the one found without a hint: the search falls back on the bracket.
    plate = plate_levels(_problem(), "draft", ELECTRODE)[0][-1]
    cs = coupling_system(plate, "circle", ELECTRODE)
    load = ElectrostaticLoad.parallel_plate()
    plain = trace_branch(cs, load, G)
    for hint in ((0.1 * G, -1e15), (plain.pull_in_center_deflection_m * 1.01, +1e15),
                 (plain.pull_in_center_deflection_m, float("nan"))):
        other = trace_branch(cs, load, G, fold_hint=hint)
        assert other.pull_in_center_deflection_m == pytest.approx(
            plain.pull_in_center_deflection_m, rel=1e-8, abs=0)
        assert other.pull_in_voltage_v == pytest.approx(plain.pull_in_voltage_v, rel=1e-12,
                                                        abs=0)
    # the fold is a maximum of V along the branch
    assert plain.pull_in_voltage_v >= plain.voltages().max() * (1 - 1e-14)
    assert plain.fold_curvature_v2_per_m2 < 0


def test_equilibrium_is_kept_and_is_that_of_a_fresh_solve():
    plate = plate_levels(_problem(), "draft", ELECTRODE)[0][-1]
    cs = coupling_system(plate, "circle", ELECTRODE)
    load = ElectrostaticLoad.parallel_plate()
    br = trace_branch(cs, load, G)
    v = 0.6 * br.pull_in_voltage_v
    p1 = equilibrium_at_voltage(cs, load, G, v, br)
    p2 = equilibrium_at_voltage(cs, load, G, v, br)
    assert p2.u is p1.u
    ref = equilibrium_at_voltage(cs, load, G, v, br, full_newton=True)
    assert p1.center_deflection_m == pytest.approx(ref.center_deflection_m, rel=1e-9, abs=0)
    # the equilibrium itself: K u = V² f(u) to the Newton tolerance
    from diagap.fem.coupling.corrector import EquilibriumSolver

    s = EquilibriumSolver(cs, load, G)
    res = cs.K @ p1.u - v**2 * s.force(p1.u)
    assert np.max(np.abs(s.lu.solve(res))) <= 1e-9 * p1.center_deflection_m


def test_shared_plates_belong_to_their_design():
    from diagap.fem.levels import MeshSize
    from diagap.fem.plate import shared
    from diagap.fem.plate.solver import assemble_plate

    shared.clear_shared_plates()
    size = MeshSize(0.6, 0.12, 0.3)
    a = assemble_plate(_problem(10e6), size)
    assert assemble_plate(_problem(10e6), size) is a  # same design, same mesh: shared
    b = assemble_plate(_problem(20e6), size)  # another residual stress
    assert b is not a
    f = a.load_vector(1.0)
    # T = σh enters K: the stiffer diaphragm deflects less
    assert b.center_deflection(b.solve(f)) < 0.9 * a.center_deflection(a.solve(f))
    # another mesh size, or an electrode edge in the mesh: not shared either
    assert assemble_plate(_problem(10e6), MeshSize(0.6, 0.1, 0.3)) is not a
    with_edge = plate_levels(_problem(10e6), "draft", ELECTRODE)[0]
    assert all(p is not a for p in with_edge)
    assert plate_levels(_problem(10e6), "draft", ELECTRODE)[0][-1] is with_edge[-1]
    # bounded: the oldest entries go first
    for k in range(shared.MAX_ENTRIES + 1):
        assemble_plate(_problem(10e6 + k), size)
    assert assemble_plate(_problem(10e6), size) is not a
    shared.clear_shared_plates()
