"""The assumption audit: which simple-model assumptions hold for this design, and by how much.

For every assumption of the textbook capsule model (a rigid parallel-plate piston on a spring, an
ideal capacitor, small linear motion, an incompressible continuum film, an electrical high-pass far
below the audio band) the audit puts the closed-form value (:mod:`lumped.analytic`) beside the
finite-element value and gives a verdict with its stated threshold:

    holds     |deviation| <= the "holds" threshold
    marginal  |deviation| <= the "marginal" threshold
    fails     beyond it

Thresholds are engineering judgement of our own (common practice, no single source); they are
written into every row so that a reader can apply their own. The audit reads the summary sections
only, so it audits exactly what is reported; a row whose inputs were not computed is left out.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from diagap.lumped import analytic

__all__ = ["AuditRow", "Audit", "audit_design", "verdict"]


@dataclass(frozen=True)
class AuditRow:
    assumption: str
    quantity: str
    simple: float
    fe: float
    deviation: float  # as defined in `measure`
    measure: str      # what `deviation` is
    holds_below: float
    marginal_below: float
    verdict: str
    note: str = ""

    def to_summary(self) -> dict:
        return {
            "assumption": self.assumption, "quantity": self.quantity, "simple": self.simple,
            "fe": self.fe, "deviation": self.deviation, "measure": self.measure,
            "threshold": {"holds": self.holds_below, "marginal": self.marginal_below},
            "verdict": self.verdict, "note": self.note,
        }


def verdict(deviation: float, holds_below: float, marginal_below: float) -> str:
    d = abs(deviation)
    return "holds" if d <= holds_below else "marginal" if d <= marginal_below else "fails"


def _rel(simple: float, fe: float) -> float:
    return simple / fe - 1.0


@dataclass(frozen=True)
class Audit:
    rows: tuple[AuditRow, ...]

    def to_summary(self) -> list:
        return [r.to_summary() for r in self.rows]

    uncertainty = {}  # the audit reports no FE quantity of its own


def _row(assumption, quantity, simple, fe, deviation, measure, holds, marginal, note=""):
    return AuditRow(assumption, quantity, float(simple), float(fe), float(deviation), measure,
                    holds, marginal, verdict(deviation, holds, marginal), note)


def _largest_spl_deflection(design, mech, resp) -> tuple[float, float]:
    """(SPL in dB, centre deflection in m) at the largest SPL of interest: the acoustic overload
    point if computed, else 120 dB SPL."""
    spl = (resp or {}).get("aop_10pct_spl_db") or 120.0
    p = 20e-6 * 10 ** (spl / 20.0)
    return spl, p * mech["center_compliance_m_per_pa"]


def audit_design(design, s: dict) -> Audit:
    """Audit from the summary sections ``s`` (dict of section name → summary dict)."""
    rows = []
    d, b, e = design.diaphragm, design.backplate, design.electrical
    mech, es, cp = s.get("mechanics"), s.get("electrostatics"), s.get("coupled")
    damp, resp = s.get("damping"), s.get("response")
    el_area = math.pi * b.electrode_size_m**2 if d.shape == "circle" else b.electrode_size_m**2
    if mech:
        rows.append(_row(
            "rigid piston", "effective area (m^2)", d.area_m2, mech["effective_area_m2"],
            _rel(d.area_m2, mech["effective_area_m2"]), "piston area / FE mode-1 area - 1",
            0.05, 0.20, "the piston moves the whole diaphragm area by the centre displacement"))
        t = d.tension_n_per_m
        if t > 0:
            simple = analytic.membrane_center_compliance(d.shape, d.size_m, t)
            label = "membrane (tension only)"
        else:
            simple = analytic.plate_center_compliance(d.shape, d.edge, d.size_m,
                                                      d.bending_stiffness_n_m, d.poisson_ratio)
            label = "plate (bending only)"
        fe = mech["center_compliance_m_per_pa"]
        rows.append(_row("membrane vs plate", f"centre compliance, {label} (m/Pa)", simple, fe,
                         _rel(simple, fe), "closed form / FE - 1", 0.05, 0.20,
                         f"tension ratio T a^2 / D = {t * d.size_m**2 / d.bending_stiffness_n_m:.3g}"))
        ld = s.get("large_deflection")
        if ld and ld.get("audit_center_deflection_m"):
            rows.append(_small_deflection_row(ld))
        elif ld is None:
            spl, w = _largest_spl_deflection(design, mech, resp)
            ratio = _stretching_ratio(d, w)
            rows.append(_row("small deflection", f"stretching / linear stiffness at {spl:.0f} dB SPL",
                             0.0, ratio, ratio, "cubic (stretching) over linear restoring pressure",
                             0.01, 0.05,
                             "large-deflection energy estimate for a clamped plate (Timoshenko & "
                             "Woinowsky-Krieger 1959, from memory), scaled by the FE stiffness"))
        else:
            rows.append(_row("small deflection", f"centre deflection at {ld['audit_spl_db']:.0f} "
                             "dB SPL (peak, m)", ld["audit_linear_center_deflection_m"],
                             ld["clearance_m"], 1.0, "contact: deviation set to 1", 0.01, 0.05,
                             "the diaphragm reaches the backplate (or stopper) at this level; "
                             "fe = the clearance"))
    if es:
        pp = es["parallel_plate_capacitance_f"]
        fe = es["rest_capacitance_f"]
        rows.append(_row("parallel-plate capacitance", "rest capacitance (F)", pp, fe, _rel(pp, fe),
                         "eps0 A / g over FE - 1", 0.02, 0.10,
                         "FE includes hole fringing, rim fringing and the open area"))
        if b.perforated:
            fraction = es["open_area_fraction"]
            simple = 1.0 - fraction
            rows.append(_row("open-area capacitance rule", "perforation factor", simple,
                             es["perforation_factor"], _rel(simple, es["perforation_factor"]),
                             "(1 - open area) / FE cell factor - 1", 0.02, 0.10))
        if mech and es.get("capacitance_curve"):
            rows.append(_linear_capacitance_row(design, mech, es, resp))
    if cp and mech:
        if "bias_center_deflection_m" in cp:
            ratio = cp["bias_center_deflection_m"] / b.gap_m
            rows.append(_row("negligible bias deflection", "centre deflection at bias / gap", 0.0,
                             ratio, ratio, "bias deflection / gap", 0.02, 0.10))
        if "pull_in_voltage_v" in cp:
            v_pi = analytic.piston_pull_in_voltage(mech["effective_stiffness_n_per_m"], b.gap_m,
                                                   mech["effective_area_m2"])
            margin = e.bias_voltage_v / cp["pull_in_voltage_v"]
            rows.append(AuditRow(
                "pull-in margin", "pull-in voltage (V)", v_pi, cp["pull_in_voltage_v"],
                margin, "bias / FE pull-in voltage", 0.6, 0.8, verdict(margin, 0.6, 0.8),
                f"piston estimate with k_eff and A_eff deviates {100 * _rel(v_pi, cp['pull_in_voltage_v']):+.1f}%"))
    if damp:
        kn = damp.get("knudsen_number")
        if kn is not None:
            factor = 1.0 + 9.638 * kn**1.159
            rows.append(_row("continuum gas", "viscosity / effective viscosity", 1.0, factor,
                             factor - 1.0, "mu / mu_eff - 1 (Veijola et al. 1995)", 0.05, 0.30,
                             f"Knudsen number lambda/g = {kn:.3g}"))
        ratio = damp.get("resonance_to_cutoff_ratio")
        if ratio is not None:
            sig = damp.get("squeeze_number_at_resonance")
            rows.append(_row("incompressible film", "resonance / film cut-off frequency", 0.0,
                             ratio, ratio, "f_res / f_c (f_c: damping force = film spring force)",
                             0.1, 0.5,
                             f"squeeze number at resonance {sig:.3g}; with holes the film stays "
                             "incompressible well above sigma ~ 1, so the cut-off is the measure"
                             if sig is not None else ""))
    if resp and "highpass_corner_hz" in resp:
        c0 = (es or {}).get("rest_capacitance_f")
        fc = resp["highpass_corner_hz"]
        rows.append(_row("high-pass corner below 20 Hz", "electrical corner (Hz)", 20.0, fc,
                         fc / 20.0, "corner / 20 Hz", 0.5, 1.0,
                         "1/(2 pi R C) with C = C0 + Cp + C_in" if c0 else ""))
    return Audit(tuple(rows))


def _small_deflection_row(ld: dict) -> AuditRow:
    """Linear against von Kármán (anchored edge) centre deflection at the peak pressure of the
    largest SPL of interest, both from the finite-element diaphragm without bias."""
    lin, vk = ld["audit_linear_center_deflection_m"], ld["audit_center_deflection_m"]
    return _row("small deflection", f"centre deflection at {ld['audit_spl_db']:.0f} dB SPL (peak, m)",
                lin, vk, _rel(lin, vk), "linear / von Karman centre deflection - 1", 0.01, 0.05,
                "von Karman plate with anchored edge and residual stress (finite elements)")


def _stretching_ratio(d, w0: float) -> float:
    """Ratio of the cubic stretching pressure to the linear restoring pressure at centre deflection
    w0, from the energy estimate for a clamped circular plate (Timoshenko & Woinowsky-Krieger,
    1959, §97, from memory): p a⁴/(E h⁴) = (16/3)/(1−ν²)·(w0/h)·[linear] + (7−ν)/(3(1−ν))·(w0/h)³,
    with the linear term replaced by the FE-consistent stiffness including tension (so the ratio is
    cubic / (plate + tension) linear)."""
    e, h, nu, a = d.youngs_modulus_pa, d.thickness_m, d.poisson_ratio, d.size_m
    cubic = (7.0 - nu) / (3.0 * (1.0 - nu)) * e * h * w0**3 / a**4
    plate = 16.0 / 3.0 / (1.0 - nu**2) * e * h**3 * w0 / a**4
    tension = 4.0 * max(d.tension_n_per_m, 0.0) * w0 / a**2
    return cubic / (plate + tension)


def _linear_capacitance_row(design, mech, es, resp) -> AuditRow:
    import numpy as np

    curve = np.asarray(es["capacitance_curve"], float)
    spl, w = _largest_spl_deflection(design, mech, resp)
    x = min(w, float(curve[-1, 0]))
    c_fe = float(np.interp(x, curve[:, 0], curve[:, 1]))
    c0, slope = es["rest_capacitance_f"], es["capacitance_slope_f_per_m"]
    c_lin = c0 + slope * x
    dev = (c_lin - c_fe) / (c_fe - c0) if c_fe != c0 else 0.0
    return _row("linear C(x)", f"capacitance at {spl:.0f} dB SPL deflection (F)", c_lin, c_fe, dev,
                "(linear - FE) / FE capacitance change", 0.01, 0.10)
