"""The assumption audit: which simple-model assumptions hold for this design, and by how much.

For every assumption of the textbook capsule model (a rigid parallel-plate piston on a spring, an
ideal capacitor, small linear motion, an incompressible continuum film, closed-form hole flow, an
electrical high-pass far below the audio band) the audit puts the closed-form value
(:mod:`diagap.lumped.analytic`) beside the finite-element value and gives a verdict with its
stated threshold:

    holds     |deviation| <= the "holds" threshold
    marginal  |deviation| <= the "marginal" threshold
    fails     beyond it

Thresholds are engineering judgement of our own (common practice, no single source); they are
written into every row so that a reader can apply their own. The audit reads the summary sections
only, so it audits exactly what is reported; a row whose inputs were not computed is left out.

Each row states what its deviation is (``label``, one meaning per row) and how it is shown
(``unit``): "%" for relative deviations (shown × 100), "" for ratios (bias / pull-in voltage,
resonance / film cut-off) and "dB" for the resonance peak; summary.json carries them as
``deviation_kind`` and ``deviation_unit`` beside the unchanged ``deviation`` (a fraction or ratio).

The "well-damped resonance" row flags a high Q: the peak of a second-order system with the
lumped model's Q over its low-frequency response, M_r = Q / sqrt(1 - 1/(4 Q^2)) for
Q > 1/sqrt(2) (resonant peak of a second-order system; Ogata, Modern Control Engineering,
sec. 7-2, from memory); holds up to +3 dB, marginal up to +6 dB (common practice for a flat
capsule response).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from diagap.fem.constants import P_REF_PA
from diagap.lumped import analytic

__all__ = ["AuditRow", "Audit", "audit_design", "verdict", "deviation_text", "threshold_text",
           "resonance_peak_db"]


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
    label: str = ""   # what the deviation is, for tables ("closed form vs FE, %")
    unit: str = "%"   # how the deviation is shown: "%" (x 100), "" (a ratio) or "dB"

    def to_summary(self) -> dict:
        return {
            "assumption": self.assumption, "quantity": self.quantity, "simple": self.simple,
            "fe": self.fe, "deviation": self.deviation, "measure": self.measure,
            "threshold": {"holds": self.holds_below, "marginal": self.marginal_below},
            "verdict": self.verdict, "note": self.note,
            "deviation_kind": self.kind, "deviation_unit": self.unit,
        }

    @property
    def kind(self) -> str:
        """One meaning of the deviation per row, with the unit it is shown in."""
        text = self.label or self.measure
        return f"{text}, {self.unit}" if self.unit else f"{text} (ratio)"

    def deviation_text(self) -> str:
        return deviation_text(self.deviation, self.unit)

    def threshold_text(self) -> str:
        return threshold_text(self.holds_below, self.marginal_below, self.unit)


def _shown(value: float, unit: str) -> float:
    return 100.0 * value if unit == "%" else value


def deviation_text(deviation: float, unit: str) -> str:
    """A deviation with 3 significant digits in its display unit: ``+165 %``, ``0.412``."""
    v = _shown(deviation, unit)
    if unit == "%":
        return f"{v:+.3g} %"
    return f"{v:+.3g} dB" if unit == "dB" else f"{v:.3g}"


def threshold_text(holds_below: float, marginal_below: float, unit: str,
                   compact: bool = False) -> str:
    """``holds ≤ 5 %, marginal ≤ 20 %`` (bounds on |deviation|, in the display unit);
    ``compact``: ``5 % / 20 %``."""
    u = f" {unit}" if unit else ""
    h, m = f"{_shown(holds_below, unit):.3g}{u}", f"{_shown(marginal_below, unit):.3g}{u}"
    return f"{h} / {m}" if compact else f"holds ≤ {h}, marginal ≤ {m}"


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


def _row(assumption, quantity, simple, fe, deviation, measure, holds, marginal, note="",
         label="", unit="%"):
    return AuditRow(assumption, quantity, float(simple), float(fe), float(deviation), measure,
                    holds, marginal, verdict(deviation, holds, marginal), note, label, unit)


def _largest_spl_deflection(design, mech, resp) -> tuple[float, float]:
    """(SPL in dB, centre deflection in m) at the largest SPL of interest: the acoustic overload
    point if computed, else 120 dB SPL."""
    spl = (resp or {}).get("aop_10pct_spl_db") or 120.0
    p = P_REF_PA * 10 ** (spl / 20.0)
    return spl, p * mech["center_compliance_m_per_pa"]


def audit_design(design, s: dict) -> Audit:
    """The assumption audit of ``design`` from its computed summary sections.

    Parameters
    ----------
    design : Design
        The design that was run.
    s : dict
        Section name → summary dictionary (``{k: v.to_summary() for k, v in
        result.sections.items()}`` of a :class:`diagap.RunResult`); a row whose inputs are
        missing is left out.

    Returns
    -------
    Audit
        ``.rows`` of :class:`AuditRow`, each with the simple and FE values, the deviation, the
        thresholds and the verdict ("holds", "marginal" or "fails").
    """
    rows = []
    d, b, e = design.diaphragm, design.backplate, design.electrical
    mech, es, cp = s.get("mechanics"), s.get("electrostatics"), s.get("coupled")
    damp, resp = s.get("damping"), s.get("response")
    el_area = math.pi * b.electrode_size_m**2 if d.shape == "circle" else b.electrode_size_m**2
    if mech:
        rows.append(_row(
            "rigid piston", "effective area (m^2)", d.area_m2, mech["effective_area_m2"],
            _rel(d.area_m2, mech["effective_area_m2"]), "piston area / FE mode-1 area - 1",
            0.05, 0.20, "the piston moves the whole diaphragm area by the centre displacement",
            label="piston area vs FE mode-1 area"))
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
                         f"tension ratio T a^2 / D = "
                         f"{t * d.size_m**2 / d.bending_stiffness_n_m:.3g}",
                         label="closed form vs FE compliance"))
        ld = s.get("large_deflection")
        if ld and ld.get("audit_center_deflection_m"):
            rows.append(_small_deflection_row(ld))
        elif ld is None:
            spl, w = _largest_spl_deflection(design, mech, resp)
            ratio = _stretching_ratio(d, w)
            rows.append(_row("small deflection",
                             f"stretching / linear stiffness at {spl:.0f} dB SPL", 0.0, ratio,
                             ratio, "cubic (stretching) over linear restoring pressure",
                             0.01, 0.05,
                             "large-deflection energy estimate for a clamped plate (Timoshenko "
                             "& Woinowsky-Krieger, Theory of Plates and Shells, 1959, §97), "
                             "scaled by the FE stiffness", label="stretching / linear stiffness"))
        else:
            rows.append(_row("small deflection", f"centre deflection at {ld['audit_spl_db']:.0f} "
                             "dB SPL (peak, m)", ld["audit_linear_center_deflection_m"],
                             ld["clearance_m"], 1.0, "contact: deviation set to 1", 0.01, 0.05,
                             "the diaphragm reaches the backplate (or stopper) at this level; "
                             "fe = the clearance", label="contact at this level"))
    if es:
        pp = analytic.parallel_plate_capacitance(el_area, _electrical_gap(design))
        fe = es["rest_capacitance_f"]
        rows.append(_row("parallel-plate capacitance", "rest capacitance (F)", pp, fe, _rel(pp, fe),
                         "eps0 A / g over FE - 1", 0.02, 0.10,
                         "FE includes hole fringing, rim fringing and the open area",
                         label="ε0·A/g vs FE capacitance"))
        if b.perforated:
            fraction = es["open_area_fraction"]
            simple = analytic.open_area_perforation_factor(fraction)
            rows.append(_row("open-area capacitance rule", "perforation factor", simple,
                             es["perforation_factor"], _rel(simple, es["perforation_factor"]),
                             "(1 - open area) / FE cell factor - 1", 0.02, 0.10,
                             label="open-area rule vs FE cell factor"))
        if mech and es.get("capacitance_curve"):
            rows.append(_linear_capacitance_row(design, mech, es, resp))
    if cp and mech:
        if "bias_center_deflection_m" in cp:
            ratio = cp["bias_center_deflection_m"] / b.gap_m
            rows.append(_row("negligible bias deflection", "centre deflection at bias / gap", 0.0,
                             ratio, ratio, "bias deflection / gap", 0.02, 0.10,
                             label="bias deflection / gap"))
        if "pull_in_voltage_v" in cp and e is not None:
            v_pi = analytic.piston_pull_in_voltage(mech["effective_stiffness_n_per_m"],
                                                   _electrical_gap(design),
                                                   mech["effective_area_m2"])
            margin = cp.get("bias_voltage_v", e.bias_voltage_v) / cp["pull_in_voltage_v"]
            rows.append(AuditRow(
                "pull-in margin", "pull-in voltage (V)", v_pi, cp["pull_in_voltage_v"],
                margin, "bias / FE pull-in voltage", 0.6, 0.8, verdict(margin, 0.6, 0.8),
                f"piston estimate with k_eff and A_eff: {v_pi:.3g} V, "
                f"{100 * _rel(v_pi, cp['pull_in_voltage_v']):+.2g} % from FE",
                label="bias / FE pull-in voltage", unit=""))
    if damp:
        kn = damp.get("knudsen_number")
        if kn is not None:
            factor = analytic.rarefaction_factor(kn)
            rows.append(_row("continuum gas", "viscosity / effective viscosity", 1.0, factor,
                             factor - 1.0, "mu / mu_eff - 1 (Veijola et al. 1995)", 0.05, 0.30,
                             f"Knudsen number lambda/g = {kn:.3g}",
                             label="viscosity μ/μ_eff − 1"))
        z_fe, z_cf = (damp.get("hole_resistance_pa_s_per_m3"),
                      damp.get("hole_resistance_closed_form_pa_s_per_m3"))
        if z_fe and z_cf and (damp.get("perforation") or {}).get("hole_model") == "stokes":
            rows.append(_row("hole flow closed forms", "resistance per hole (Pa s/m^3)", z_cf,
                             z_fe, _rel(z_cf, z_fe),
                             "Skvor/Bao cell + Poiseuille + Sampson over Stokes FE cell - 1",
                             0.05, 0.20,
                             "the closed forms omit the turn of the flow from the film into the "
                             "hole; damping scales about like the resistance",
                             label="closed forms vs Stokes FE"))
        ratio = damp.get("resonance_to_cutoff_ratio")
        if ratio is not None:
            sig = damp.get("squeeze_number_at_resonance")
            rows.append(_row("incompressible film", "resonance / film cut-off frequency", 0.0,
                             ratio, ratio, "f_res / f_c (f_c: damping force = film spring force)",
                             0.1, 0.5,
                             f"squeeze number at resonance {sig:.3g}; with holes the film stays "
                             "incompressible well above sigma ~ 1, so the cut-off is the measure"
                             if sig is not None else "", label="resonance / film cut-off",
                             unit=""))
    if resp and "highpass_corner_hz" in resp:
        c0 = (es or {}).get("rest_capacitance_f")
        fc = resp["highpass_corner_hz"]
        rows.append(_row("high-pass corner below 20 Hz", "electrical corner (Hz)", 20.0, fc,
                         fc / 20.0, "corner / 20 Hz", 0.5, 1.0,
                         "1/(2 pi R C) with C = C0 + Cp + C_in" if c0 else "",
                         label="corner / 20 Hz", unit=""))
    if resp and resp.get("quality_factor"):
        rows.append(_resonance_peak_row(resp["quality_factor"]))
    if resp and "distributed_sensitivity_db_v_per_pa" in resp:
        rows.extend(_reduction_rows(resp))
    return Audit(tuple(rows))


#: largest resonance peak (dB above the stiffness-controlled band) for "holds" / "marginal":
#: common practice for a flat capsule response (a +-3 dB band is the usual tolerance of a
#: microphone response specification; above +6 dB the peak dominates the response and rings)
PEAK_HOLDS_DB, PEAK_MARGINAL_DB = 3.0, 6.0


def resonance_peak_db(q: float) -> float:
    """Peak of a second-order low-pass |1/(1 - u^2 + j u/Q)| over its low-frequency value, in dB.

    The maximum is Q / sqrt(1 - 1/(4 Q^2)) for Q > 1/sqrt(2) and 1 (no peak) otherwise
    (textbook second-order system, e.g. Ogata, Modern Control Engineering, resonant peak M_r,
    from memory).
    """
    if q <= 1.0 / math.sqrt(2.0):
        return 0.0
    return 20.0 * math.log10(q / math.sqrt(1.0 - 1.0 / (4.0 * q * q)))


def _resonance_peak_row(q: float) -> AuditRow:
    peak = resonance_peak_db(q)
    return _row("well-damped resonance", "quality factor Q of the resonance in air (lumped)",
                1.0 / math.sqrt(2.0), q, peak, "resonance peak over the low-frequency response "
                "of a second-order system with this Q, dB", PEAK_HOLDS_DB, PEAK_MARGINAL_DB,
                f"Q = {q:.3g}; Q = 0.707 is maximally flat (no peak); a high peak rings and "
                "needs acoustic damping", label="resonance peak", unit="dB")


def _reduction_rows(resp: dict) -> list:
    """"single-mode reduction": the lumped model (one static-shape coordinate) against the
    distributed frequency-domain FE solve at 1 kHz and at the voltage peak. Thresholds: 0.05 dB
    at 1 kHz (the accuracy a designer reads off a sensitivity), 2 % / 0.5 dB at the peak
    (common practice for a resonance estimate)."""
    out = [_row("single-mode reduction", "1 kHz sensitivity (dB re 1 V/Pa)",
                resp["sensitivity_db_v_per_pa"], resp["distributed_sensitivity_db_v_per_pa"],
                resp["reduction_error_db"], "lumped - distributed (dB)", 0.05, 0.5,
                "distributed: FE plate, film with holes, back volume, radiation and the "
                "charge-fed electrical node solved together"
                + ("; with the same sound port, front chamber, back volume and vent as the "
                   "lumped model" if resp.get("scope") == "packaged" else ""),
                label="lumped − distributed at 1 kHz", unit="dB")]
    if "distributed_peak_frequency_hz" in resp:
        out.append(_row("single-mode reduction", "response peak frequency (Hz)",
                        resp["lumped_peak_frequency_hz"], resp["distributed_peak_frequency_hz"],
                        resp["reduction_error_peak_frequency"], "lumped / distributed - 1",
                        0.02, 0.10, "the static shape's Rayleigh quotient lies above mode 1"
                        + ("; packaged: the peak is the resonance of the sound port and front "
                           "chamber" if resp.get("scope") == "packaged" else ""),
                        label="lumped vs distributed peak frequency"))
        out.append(_row("single-mode reduction", "response peak height (dB re 1 V/Pa)",
                        resp["lumped_peak_db_v_per_pa"], resp["distributed_peak_db_v_per_pa"],
                        resp["reduction_error_peak_db"], "lumped - distributed (dB)", 0.5, 2.0,
                        label="lumped − distributed peak height", unit="dB"))
    return out


def _small_deflection_row(ld: dict) -> AuditRow:
    """Linear against von Kármán (anchored edge) centre deflection at the peak pressure of the
    largest SPL of interest, both from the finite-element diaphragm without bias."""
    lin, vk = ld["audit_linear_center_deflection_m"], ld["audit_center_deflection_m"]
    return _row("small deflection", f"centre deflection at {ld['audit_spl_db']:.0f} dB SPL (peak, m)",
                lin, vk, _rel(lin, vk), "linear / von Karman centre deflection - 1", 0.01, 0.05,
                "von Karman plate with anchored edge and residual stress (finite elements)",
                label="linear vs von Kármán deflection")


def _stretching_ratio(d, w0: float) -> float:
    """Cubic stretching over linear restoring pressure at centre deflection w0
    (:func:`diagap.lumped.analytic.clamped_plate_stretching_ratio`)."""
    return analytic.clamped_plate_stretching_ratio(d.youngs_modulus_pa, d.thickness_m,
                                                   d.poisson_ratio, d.size_m,
                                                   d.tension_n_per_m, w0)


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
                "(linear - FE) / FE capacitance change", 0.01, 0.10,
                label="linear vs FE capacitance change")


def _electrical_gap(design) -> float:
    """g + Σ t/ε_r of the dielectric layers (the air gap g without layers), m."""
    layers = getattr(design, "layers", None)
    return design.backplate.gap_m + (layers.electrical_thickness_m if layers is not None else 0.0)
