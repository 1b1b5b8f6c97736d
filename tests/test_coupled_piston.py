"""Electromechanical coupling: the rigid-piston limit of the FE coupling solver.

The coupling solver is run on a one-degree-of-freedom "plate" whose deflection is uniform over the
electrode (the FE model forced rigid): its pull-in must be the parallel-plate piston's.
"""
import numpy as np
import pytest
import scipy.sparse as sp
from scipy.constants import epsilon_0

from diagap.fem.coupling.branch import (ElectrostaticLoad, CouplingSystem, equilibrium_at_voltage, softened_modes,
                         trace_branch, center_compliance)

K, G, A, M = 50.0, 4e-6, np.pi * (0.5e-3) ** 2, 2e-9


def _piston(nq=7):
    return CouplingSystem(K=sp.csr_matrix([[K]]), B=sp.csr_matrix(np.ones((nq, 1))),
                       weights=np.full(nq, A / nq), center=np.array([1.0]), M=sp.csr_matrix([[M]]))


def test_piston_pull_in_matches_nathanson():
    # Nathanson et al., IEEE Trans. Electron Devices 14 (1967); Senturia, Microsystem Design (2001):
    # x_PI = g/3 and V_PI = sqrt(8 k g^3 / (27 eps0 A)).
    br = trace_branch(_piston(), ElectrostaticLoad.parallel_plate(), G)
    assert br.pull_in_voltage_v == pytest.approx(np.sqrt(8 * K * G**3 / (27 * epsilon_0 * A)), rel=1e-8, abs=0)
    assert br.pull_in_center_deflection_m == pytest.approx(G / 3, rel=1e-4, abs=0)
    v = br.voltages()
    assert np.all(np.diff(br.deflections()) > 0)
    assert np.argmax(v) not in (0, len(v) - 1)  # the branch passes through the fold


@pytest.mark.parametrize("fraction", [0.3, 0.7, 0.95])
def test_piston_equilibrium_and_softening(fraction):
    # Parallel-plate piston balance k x = eps0 A V^2 / (2 (g - x)^2) and its constant-voltage
    # stiffness k - eps0 A V^2 / (g - x)^3 (Senturia, Microsystem Design, 2001, ch. 6).
    load, sys_ = ElectrostaticLoad.parallel_plate(), _piston()
    br = trace_branch(sys_, load, G)
    v = fraction * br.pull_in_voltage_v
    p = equilibrium_at_voltage(sys_, load, G, v, br)
    x = p.center_deflection_m
    assert K * x == pytest.approx(epsilon_0 * A * v**2 / (2 * (G - x) ** 2), rel=1e-9, abs=0)
    assert x < G / 3
    k_soft = K - epsilon_0 * A * v**2 / (G - x) ** 3
    assert center_compliance(sys_, load, G, p, np.array([A])) == pytest.approx(A / k_soft, rel=1e-8, abs=0)
    f = softened_modes(sys_, load, G, p)[0]
    assert f == pytest.approx(np.sqrt(k_soft / M) / (2 * np.pi), rel=1e-8, abs=0)
    assert p.min_stiffness_ratio == pytest.approx(k_soft / K, rel=1e-6, abs=0)


def test_softened_resonance_goes_to_zero_at_pull_in():
    # common practice: the resonance at bias falls to zero as the bias approaches pull-in; near the
    # saddle-node fold the stiffness vanishes like sqrt(V_PI - V), so f ~ (1 - V/V_PI)^(1/4)
    # (generic fold normal form, e.g. Strogatz, Nonlinear Dynamics and Chaos, 1994, ch. 3).
    load, sys_ = ElectrostaticLoad.parallel_plate(), _piston()
    br = trace_branch(sys_, load, G)
    f = [softened_modes(sys_, load, G, equilibrium_at_voltage(sys_, load, G, s * br.pull_in_voltage_v, br))[0]
         for s in (0.5, 0.9, 0.99, 0.9999)]
    assert np.all(np.diff(f) < 0)
    assert f[3] / f[2] == pytest.approx((1e-4 / 1e-2) ** 0.25, rel=0.05, abs=0)


def test_bias_at_or_above_pull_in_is_refused():
    from diagap.fem.coupling.branch import CoupledError
    load, sys_ = ElectrostaticLoad.parallel_plate(), _piston()
    br = trace_branch(sys_, load, G)
    with pytest.raises(CoupledError, match="at or above pull-in"):
        equilibrium_at_voltage(sys_, load, G, br.pull_in_voltage_v * 1.01, br)
