"""The short human-readable table printed by ``diagap run`` (built from the summary dict).

Labels and display units come from :mod:`diagap.names`, so they are the ones of report.html and
the plots. Estimated relative errors are shown in per cent. The audit lists, per row, what its
deviation is (one meaning per row, with its unit), the value with three significant digits, the
thresholds and the verdict. A result that is absent gets its reason on the next line.
"""
from __future__ import annotations

import math
import textwrap

from diagap.names import lookup

__all__ = ["summary_table", "audit_lines", "absent_reason", "UNCERTAINTY_ALIAS", "ROWS",
           "SECTION_HEADS", "CAUTION_LINE"]

#: results whose error estimate is filed under another key
UNCERTAINTY_ALIAS = {"distinct_frequencies_hz": "natural_frequencies_hz",
                     "sensitivity_db_v_per_pa": "sensitivity_v_per_pa",
                     "distributed_sensitivity_db_v_per_pa": "distributed_sensitivity_v_per_pa"}

#: printed at the end of every ``run`` and ``sweep`` output
CAUTION_LINE = ("Caution: bias voltages can be hazardous; diagap's results are design estimates "
                "and do not replace prototypes, measurement, safety codes or qualified review.")

SECTION_HEADS = {"mechanics": "mechanics: diaphragm in vacuum, no bias",
                 "electrostatics": "electrostatics: rest gap",
                 "coupled": "bias and pull-in",
                 "damping": "squeeze-film damping",
                 "response": "lumped model in air: response, noise, distortion"}

#: (section, key) of the console table, in order; names and units from diagap.names
ROWS = [
    ("mechanics", "center_compliance_m_per_pa"),
    ("mechanics", "volume_compliance_m3_per_pa"),
    ("mechanics", "distinct_frequencies_hz"),
    ("mechanics", "effective_mass_kg"),
    ("mechanics", "effective_stiffness_n_per_m"),
    ("mechanics", "effective_area_m2"),
    ("electrostatics", "rest_capacitance_f"),
    ("electrostatics", "parallel_plate_capacitance_f"),
    ("electrostatics", "capacitance_slope_f_per_m"),
    ("electrostatics", "perforation_factor"),
    ("electrostatics", "open_area_fraction"),
    ("coupled", "pull_in_voltage_v"),
    ("coupled", "bias_center_deflection_m"),
    ("coupled", "bias_margin"),
    ("coupled", "resonance_at_bias_hz"),
    ("damping", "damping_n_s_per_m"),
    ("damping", "cutoff_frequency_hz"),
    ("response", "sensitivity_db_v_per_pa"),
    ("response", "distributed_sensitivity_db_v_per_pa"),
    ("response", "reduction_error_db"),
    ("response", "highpass_corner_hz"),
    ("response", "acoustic_corner_hz"),
    ("response", "resonance_hz"),
    ("response", "quality_factor"),
    ("response", "peak_frequency_hz"),
    ("response", "noise_dba_spl"),
    ("response", "snr_db"),
    ("response", "thd_1pct_spl_db"),
    ("response", "aop_10pct_spl_db"),
    ("response", "sensitivity_dbfs"),
    ("response", "readout_sensitivity_db_v_per_pa"),
]


def _fmt(v, scale):
    if isinstance(v, (list, tuple)):
        return ", ".join(f"{x * scale:.4g}" for x in v[:4]) + (" ..." if len(v) > 4 else "")
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    x = float(v) * scale
    return f"{x:.5g}" if math.isfinite(x) else "-"


def absent_reason(summary: dict, section: str, key: str) -> str:
    """Why ``section.key`` has no value (empty if it has one or no reason is known)."""
    sec = summary.get(section) or {}
    if sec.get(key) is not None:
        return ""
    if section == "response" and key in ("thd_1pct_spl_db", "aop_10pct_spl_db"):
        curve = sec.get("thd_vs_spl") or []
        level = "1 %" if key.startswith("thd_1pct") else "10 %"
        if curve:
            spl, thd = curve[-1][0], curve[-1][1]
            text = (f"{level} THD not reached up to {spl:.0f} dB SPL (THD {100 * thd:.2g} % "
                    f"there)")
        else:
            text = f"{level} THD not computed"
        note = sec.get("thd_limit_note")
        return f"{text}: the scan stops where {note}" if note else text
    if section == "response" and key in ("resonance_hz", "quality_factor", "peak_frequency_hz"):
        return "the lumped model has no resonance peak (overdamped)"
    return ""


def audit_lines(audit: list) -> list[str]:
    """The audit rows of summary.json as aligned text lines (header first)."""
    from diagap.audit import deviation_text, threshold_text

    rows = []
    for row in audit:
        unit = row.get("deviation_unit", "%")
        kind = row.get("deviation_kind") or f"{row.get('measure', '')}, {unit}"
        th = row.get("threshold", {})
        verdict = row["verdict"].upper() if row["verdict"] == "fails" else row["verdict"]
        rows.append((row["assumption"], kind, deviation_text(row["deviation"], unit),
                     threshold_text(th["holds"], th["marginal"], unit, compact=True), verdict))
    head = ("assumption", "deviation: what it is, unit", "value", "holds/marginal if ≤",
            "verdict")
    w = [max(len(r[i]) for r in rows + [head]) for i in range(4)]
    return [f"  {r[0]:<{w[0]}}  {r[1]:<{w[1]}}  {r[2]:>{w[2]}}  {r[3]:<{w[3]}}  {r[4]}"
            for r in [head] + rows]


def summary_table(summary: dict) -> str:
    """Format the main results with their estimated relative discretisation errors."""
    unc = summary.get("uncertainty", {})
    rows: list = []  # (label, value, unit, error) or a section head (str)
    section_seen = None
    for section, key in ROWS:
        sec = summary.get(section)
        if not sec or key not in sec:
            continue
        if section != section_seen:
            rows.append(f"[{SECTION_HEADS.get(section, section)}]")
            section_seen = section
        name = lookup(f"{section}.{key}")
        alias = UNCERTAINTY_ALIAS.get(key)
        err = unc.get(f"{section}.{key}", unc.get(f"{section}.{alias}") if alias else None)
        err_s = f"±{100 * err:.2g} %" if isinstance(err, (int, float)) else ""
        rows.append((name.label, _fmt(sec[key], name.scale), name.unit, err_s))
        reason = absent_reason(summary, section, key)
        if reason:
            rows += [f"    {t}" for t in textwrap.wrap(f"({reason})", 92)]
    cells = [r for r in rows if isinstance(r, tuple)]
    head = ("quantity", "value", "unit", "est. error")
    w = [max(len(r[i]) for r in cells + [head]) for i in range(4)]
    lines = [f"diagap results: {summary['design']['name']}",
             f"  {head[0]:<{w[0]}}  {head[1]:>{w[1]}}  {head[2]:<{w[2]}}  {head[3]:>{w[3]}}"]
    for r in rows:
        lines.append(r if isinstance(r, str) else
                     f"  {r[0]:<{w[0]}}  {r[1]:>{w[1]}}  {r[2]:<{w[2]}}  {r[3]:>{w[3]}}".rstrip())
    from diagap.report.breakdown_table import breakdown_lines

    lines += breakdown_lines(summary)
    audit = summary.get("audit")
    if audit:
        lines.append("[audit of the simple-model assumptions; thresholds are common practice]")
        lines += audit_lines(audit)
    from diagap.report.temperature_tables import temperature_lines

    lines += temperature_lines(summary)
    return "\n".join(lines)
