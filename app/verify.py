"""``diagap verify``: built-in validation cases against published references, as a table.

Each case runs the production solver on a problem with a published closed form or table value and
reports the FE value and the reference in the unit of the check, the relative deviation, the
solver's own relative error estimate and the tolerance (all three in per cent). The same checks
(and more) are in the test suite; this command lets a user confirm an installation on their own
machine.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass

from diagap.lumped import analytic

__all__ = ["Check", "run_checks", "checks_table"]


@dataclass(frozen=True)
class Check:
    name: str
    source: str
    fe: float
    reference: float
    estimate: float | None
    tolerance: float
    seconds: float
    unit: str = ""      # display unit of fe and reference ("" for a pure number)
    scale: float = 1.0  # display value = SI value × scale

    @property
    def deviation(self) -> float:
        return self.fe / self.reference - 1.0

    @property
    def passed(self) -> bool:
        return abs(self.deviation) <= self.tolerance


def _clamped_disk(accuracy):
    from diagap.fem.plate.solver import PlateProblem, solve_plate

    e, nu, h, a = 160e9, 0.22, 1e-6, 0.5e-3
    d = e * h**3 / (12 * (1 - nu**2))
    r = solve_plate(PlateProblem("circle", a, e, nu, h, 2330.0, 0.0, "clamped"), accuracy)
    yield ("clamped disk centre compliance a^4/(64D)",
           "Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 1959, ch. 3",
           r.center_compliance_m_per_pa, a**4 / (64 * d),
           r.uncertainty["center_compliance_m_per_pa"], 1e-3, "nm/Pa", 1e9)
    lam2 = r.natural_frequencies_hz[0] * 2 * math.pi * a**2 / math.sqrt(d / (2330.0 * h))
    yield ("clamped disk lambda^2 of mode (0,0)", "Leissa, NASA SP-160, 1969, Table 2.1 (10.2158)",
           lam2, 10.2158, r.uncertainty["natural_frequencies_hz"], 1e-3, "", 1.0)


def _membrane(accuracy):
    from scipy.special import jn_zeros

    from diagap.fem.plate.solver import PlateProblem, solve_plate

    a, h, s, rho = 0.5e-3, 0.2e-6, 150e6, 3000.0
    r = solve_plate(PlateProblem("circle", a, 222e9, 0.28, h, rho, s, "simply-supported"),
                    accuracy)
    f = jn_zeros(0, 1)[0] / (2 * math.pi * a) * math.sqrt(s / rho)
    yield ("membrane-like SS disk f1 = j01/(2 pi a) sqrt(T/rho_s)", "Bessel zero from scipy.special",
           r.natural_frequencies_hz[0], f, r.uncertainty["natural_frequencies_hz"], 1e-3, "kHz",
           1e-3)


def _cells(accuracy):
    from diagap.fem.constants import EPSILON_0_F_PER_M
    from diagap.fem.field.cell import cell_capacitance


    g = 4e-6
    r = cell_capacitance(g, 0.0, 0.0, "none", 2e-6, accuracy)
    yield ("solid gap capacitance density eps0/g", "parallel plates (CODATA eps0)",
           r.capacitance_density_f_per_m2, EPSILON_0_F_PER_M / g, r.rel_error, 1e-6, "µF/m²", 1e6)


def _pull_in(accuracy):
    import numpy as np
    import scipy.sparse as sp

    from diagap.fem.coupling.branch import CouplingSystem, ElectrostaticLoad, trace_branch

    k, g, area = 50.0, 4e-6, 7.85e-7
    sys_ = CouplingSystem(sp.csr_matrix([[k]]), sp.csr_matrix(np.ones((4, 1))),
                          np.full(4, area / 4), np.array([1.0]))
    br = trace_branch(sys_, ElectrostaticLoad.parallel_plate(), g)
    yield ("rigid piston pull-in voltage", "Nathanson et al., IEEE Trans. Electron Devices, 1967",
           br.pull_in_voltage_v, analytic.piston_pull_in_voltage(k, g, area), None, 1e-6,
           "V", 1.0)


def _damping(accuracy):
    from diagap.fem.constants import STANDARD_PRESSURE_PA
    from diagap.fem.film.squeeze import film_impedance

    mu, a, g = 1.8e-5, 0.5e-3, 4e-6
    r = film_impedance("circle", a, g, mu, STANDARD_PRESSURE_PA, 0.0, lambda x, y: 1.0 + 0 * x, [1.0],
                       accuracy)
    yield ("rigid disk squeeze-film damping 3 pi mu a^4/(2 g^3)",
           "Griffin, Richardson & Yamanami, J. Basic Eng., 1966",
           r.damping_n_s_per_m, analytic.griffin_damping(mu, a, g),
           r.damping_relative_uncertainty, 5e-3, "mN·s/m", 1e3)


def _weighting(accuracy):
    from diagap.lumped.weighting import a_weighting_db

    for f, ref in ((63.0, -26.2), (125.0, -16.1), (4000.0, 1.0), (8000.0, -1.1)):
        yield (f"A-weighting at {f:g} Hz (as gain; tol 0.1 dB)", "IEC 61672-1:2013, table",
               10 ** (a_weighting_db(f) / 20), 10 ** (ref / 20), None, 10 ** (0.1 / 20) - 1,
               "(gain)", 1.0)


CASES = (_clamped_disk, _membrane, _cells, _pull_in, _damping, _weighting)


def run_checks(accuracy: str = "normal") -> list[Check]:
    """Run the built-in validation cases (what ``diagap verify`` prints).

    Parameters
    ----------
    accuracy : {"draft", "normal", "fine"}
        Mesh levels of the solvers.

    Returns
    -------
    list of Check
        FE value, published reference, deviation, the solver's own estimate, tolerance and
        wall time per case; ``check.passed`` tells whether the deviation is within tolerance.
    """
    out = []
    for case in CASES:
        t0 = time.perf_counter()
        rows = list(case(accuracy))
        dt = (time.perf_counter() - t0) / max(len(rows), 1)
        out += [Check(*row[:6], seconds=dt, unit=row[6], scale=row[7]) for row in rows]
    return out


def checks_table(checks: list[Check]) -> str:
    """FE value and reference in the check's unit; deviation, estimate and tolerance in %."""
    lines = [f"{'check':<52} {'FE':>11} {'reference':>11} {'unit':<7} {'deviation':>10} "
             f"{'estimate':>9} {'tolerance':>9}  result  source"]
    for c in checks:
        est = f"{100 * c.estimate:.2g} %" if c.estimate is not None else "-"
        lines.append(f"{c.name:<52} {c.fe * c.scale:>11.6g} {c.reference * c.scale:>11.6g} "
                     f"{c.unit:<7} {100 * c.deviation:>+8.2g} % {est:>9} "
                     f"{100 * c.tolerance:>7.2g} %  {'pass' if c.passed else 'FAIL':<6}  "
                     f"{c.source}")
    n = sum(c.passed for c in checks)
    lines.append(f"{n} of {len(checks)} checks pass")
    return "\n".join(lines)
