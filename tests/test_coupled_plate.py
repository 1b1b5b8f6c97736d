"""Electromechanical coupling of the FE diaphragm: published limits and convergence of pull-in."""
import numpy as np
import pytest
from scipy.constants import epsilon_0

from diagap.fem.coupling.branch import ElectrostaticLoad, equilibrium_at_voltage, softened_modes, trace_branch
from diagap.fem.coupling.plate import coupling_system, plate_levels, solve_coupled
from diagap.fem.plate.solver import PlateProblem

A, H, E, NU, RHO, G = 0.5e-3, 1e-6, 160e9, 0.22, 2330.0, 4e-6
D = E * H**3 / (12 * (1 - NU**2))


def _demo_problem(stress=10e6, edge="clamped"):
    return PlateProblem("circle", A, E, NU, H, RHO, stress, edge)


def test_membrane_limit_pull_in_parameter():
    # Pelesko & Bernstein, Modeling MEMS and NEMS (2002), ch. 7: a clamped circular membrane under
    # a full electrode pulls in at lambda* = eps0 V^2 a^2 / (2 T g^3) = 0.789 [value from memory].
    # A simply supported plate with T a^2 / D = 1e4 is membrane-like (no clamped edge layer).
    tension = 1e4 * D / A**2
    res = solve_coupled(_demo_problem(tension / H, "simply-supported"), "draft", A, G, 1.0)
    lam = epsilon_0 * res.pull_in_voltage_v**2 * A**2 / (2 * tension * G**3)
    assert lam == pytest.approx(0.789, rel=0.01, abs=0)
    # distributed diaphragms pull in between g/3 (piston) and g/2 (common practice)
    assert G / 3 < res.pull_in_center_deflection_m < G / 2


def test_demo_branch_and_softening_to_zero():
    # common practice: a bending diaphragm pulls in at a centre deflection between g/3 and g/2,
    # and its resonance at bias falls towards zero as the bias approaches pull-in.
    plate = plate_levels(_demo_problem(), "draft", 0.45e-3)[0][-1]
    cs = coupling_system(plate, "circle", 0.45e-3)
    load = ElectrostaticLoad.parallel_plate()
    br = trace_branch(cs, load, G)
    assert G / 3 < br.pull_in_center_deflection_m < G / 2
    v = br.voltages()
    i = int(np.argmax(v))
    assert np.all(np.diff(v[: i + 1]) > 0)  # continuous, rising stable branch
    assert v[i] == pytest.approx(br.pull_in_voltage_v, rel=1e-9, abs=0)
    f = [softened_modes(cs, load, G, equilibrium_at_voltage(cs, load, G, s * br.pull_in_voltage_v, br))[0]
         for s in (0.0, 0.5, 0.9, 0.999)]
    assert np.all(np.diff(f) < 0)
    assert f[-1] < 0.3 * f[0]


def test_pull_in_converges_under_refinement():
    # Convergence study: V_PI on three nested-size mesh levels (sizes x1.5 apart); the observed
    # order is positive (~2, the disk's boundary order) and "normal" is within 0.5 % of "fine".
    from diagap.fem.levels import MeshSize
    from diagap.fem.plate.solver import assemble_plate
    from diagap.meshes.diaphragm import disk_mesh

    prob = _demo_problem()
    vs = []
    for k in (2, 1, 0):
        s = MeshSize(0.3, 0.03, 0.3).scaled(1.5**k)
        plate = assemble_plate(prob, disk_mesh(s.h_center, s.h_edge, s.grading, inner=0.9))
        vs.append(trace_branch(coupling_system(plate, "circle", 0.45e-3),
                               ElectrostaticLoad.parallel_plate(), G).pull_in_voltage_v)
    e1, e2 = abs(vs[1] - vs[0]), abs(vs[2] - vs[1])
    order = np.log(e1 / e2) / np.log(1.5)
    assert order > 1.0
    normal = solve_coupled(prob, "normal", 0.45e-3, G, 10.0)
    assert normal.uncertainty["pull_in_voltage_v"] < 5e-3
    assert abs(normal.pull_in_voltage_v - vs[-1]) / vs[-1] < 5e-3
    # the estimate is honest against the finest level (factor 3 allowed)
    assert abs(normal.pull_in_voltage_v - vs[-1]) / vs[-1] <= 3 * normal.uncertainty["pull_in_voltage_v"] + 1e-5
    # against the Richardson extrapolation of the three levels (observed order, Richardson 1911)
    # the estimate is honest to a factor 1.5 (measured: true error 2.4e-4, estimate 2.6e-4)
    v_star = vs[2] + (vs[2] - vs[1]) / (1.5**order - 1)
    true = abs(normal.pull_in_voltage_v - v_star) / v_star
    assert true <= 1.5 * normal.uncertainty["pull_in_voltage_v"], (true, normal.uncertainty)


def test_bias_above_pull_in_is_collapsed():
    res = solve_coupled(_demo_problem(), "draft", 0.45e-3, G, 40.0)
    assert res.collapsed and res.bias_center_deflection_m is None
    assert res.to_summary()["collapsed"] is True
    assert "bias_center_deflection_m" not in res.to_summary()
