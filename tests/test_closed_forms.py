"""Tabulated closed forms of the simple capsule model against their published values: the square
plates' compliance coefficients, the square membrane's series and the buckling tensions
(diagap.lumped.analytic, diagap.lumped.buckling). The other closed forms are checked in
tests/test_analytic.py. Parameter values are invented."""
from __future__ import annotations

import math

import numpy as np
import pytest

from checks import kirchhoff_plate, rel_close
from diagap.lumped import analytic as an

E, H, NU, RHO = 160e9, 1e-6, 0.22, 2330.0
A = 0.5e-3


@pytest.mark.parametrize("edge,coefficient", [("clamped", 0.00126), ("simply-supported", 0.00406)])
def test_square_plate_compliance(edge, coefficient):
    # T&W 1959, tables for the square plate (ν = 0.3) [from memory]: w_max = α p a⁴/D
    d = kirchhoff_plate(E, H, 0.3, RHO)[0]
    rel_close(an.plate_center_compliance("square", edge, 1e-3, d, 0.3), coefficient * 1e-12 / d,
              rel=1e-12)


def test_membrane_compliance():
    # disk: w0 = p a²/(4T) (Morse 1948); square of side a: Fourier series of the Poisson problem
    # T∇²w = −p summed here to 2000 terms per direction; ≈ 0.0737 a²/T [from memory]
    t = 10e6 * H
    rel_close(an.membrane_center_compliance("circle", A, t), A**2 / (4 * t), rel=1e-12)
    m = np.arange(1, 4000, 2)[:, None]
    n = m.T
    series = np.sum((-1.0) ** ((m + n) // 2 - 1) * 16 / (np.pi**4 * m * n * (m * m + n * n)))
    value = an.membrane_center_compliance("square", 1e-3, t)
    rel_close(value, series * 1e-6 / t, rel=1e-4, what="square membrane")
    rel_close(value * t / 1e-6, 0.0737, rel=2e-3, what="0.0737 a²/T")


def test_buckling_tensions():
    # compressive membrane force N_cr at which the flat plate buckles (Timoshenko & Gere, Theory
    # of Elastic Stability, 1961 [from memory]): clamped disk j_{1,1}² D/a² (j_{1,1} from
    # scipy.special.jn_zeros); simply supported disk λ² D/a² with λ the first root of
    # λ J0(λ) = (1 − ν) J1(λ); clamped square ≈ 5.30 π² D/a²; simply supported square 2 π² D/a²
    # (Navier term (1,1)). a = radius (disk) or side (square); D from raw inputs.
    from scipy.optimize import brentq
    from scipy.special import j0, j1, jn_zeros

    from diagap.lumped.buckling import critical_tension_n_per_m

    d = kirchhoff_plate(E, H, NU, RHO)[0]
    rel_close(critical_tension_n_per_m("circle", "clamped", A, d, NU),
              jn_zeros(1, 1)[0] ** 2 * d / A**2, rel=1e-12)
    lam = brentq(lambda x: x * j0(x) - (1 - NU) * j1(x), 1.0, 3.0, xtol=1e-14)
    rel_close(critical_tension_n_per_m("circle", "simply-supported", A, d, NU), lam**2 * d / A**2,
              rel=1e-9)
    lam3 = brentq(lambda x: x * j0(x) - 0.7 * j1(x), 1.0, 3.0, xtol=1e-14)
    rel_close(lam3**2, 4.20, rel=2e-3, what="SS disk N_cr = 4.20 D/a² at ν = 0.3 [from memory]")
    rel_close(critical_tension_n_per_m("circle", "simply-supported", A, d, 0.3),
              lam3**2 * d / A**2, rel=1e-9)
    rel_close(critical_tension_n_per_m("square", "clamped", 1e-3, d, NU),
              5.30 * math.pi**2 * d / 1e-6, rel=1e-12)
    rel_close(critical_tension_n_per_m("square", "simply-supported", 1e-3, d, NU),
              2 * math.pi**2 * d / 1e-6, rel=1e-12)
