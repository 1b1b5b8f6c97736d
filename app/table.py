"""The short human-readable table printed by ``diagap run`` (built from the summary dict)."""
from __future__ import annotations

__all__ = ["summary_table", "UNCERTAINTY_ALIAS"]

#: results whose error estimate is filed under another key
UNCERTAINTY_ALIAS = {"distinct_frequencies_hz": "natural_frequencies_hz",
                     "sensitivity_db_v_per_pa": "sensitivity_v_per_pa",
                     "distributed_sensitivity_db_v_per_pa": "distributed_sensitivity_v_per_pa"}

# (section, key, label, scale, unit)
ROWS = [
    ("mechanics", "center_compliance_m_per_pa", "centre compliance", 1e9, "nm/Pa"),
    ("mechanics", "volume_compliance_m3_per_pa", "volume compliance", 1e18, "um^3/Pa"),
    ("mechanics", "distinct_frequencies_hz", "natural frequencies (vacuum)", 1e-3, "kHz"),
    ("mechanics", "effective_mass_kg", "effective mass", 1e9, "ug"),
    ("mechanics", "effective_stiffness_n_per_m", "effective stiffness", 1.0, "N/m"),
    ("mechanics", "effective_area_m2", "effective area", 1e6, "mm^2"),
    ("electrostatics", "rest_capacitance_f", "rest capacitance", 1e12, "pF"),
    ("electrostatics", "parallel_plate_capacitance_f", "parallel-plate capacitance", 1e12, "pF"),
    ("electrostatics", "capacitance_slope_f_per_m", "dC/dx at rest", 1e6, "pF/um"),
    ("electrostatics", "perforation_factor", "perforation factor", 1.0, ""),
    ("electrostatics", "open_area_fraction", "open area fraction", 1.0, ""),
    ("coupled", "pull_in_voltage_v", "pull-in voltage", 1.0, "V"),
    ("coupled", "bias_center_deflection_m", "centre deflection at bias", 1e9, "nm"),
    ("coupled", "bias_margin", "bias / pull-in", 1.0, ""),
    ("coupled", "resonance_at_bias_hz", "resonance at bias (vacuum)", 1e-3, "kHz"),
    ("damping", "damping_n_s_per_m", "squeeze-film damping", 1e3, "mN*s/m"),
    ("response", "sensitivity_db_v_per_pa", "sensitivity at 1 kHz", 1.0, "dB re 1 V/Pa"),
    ("response", "distributed_sensitivity_db_v_per_pa", "sensitivity at 1 kHz, distributed FE",
     1.0, "dB re 1 V/Pa"),
    ("response", "reduction_error_db", "single-mode reduction error at 1 kHz", 1.0, "dB"),
    ("response", "highpass_corner_hz", "electrical high-pass corner", 1.0, "Hz"),
    ("response", "acoustic_corner_hz", "acoustic (vent) corner", 1.0, "Hz"),
    ("response", "resonance_hz", "resonance", 1e-3, "kHz"),
    ("response", "quality_factor", "quality factor", 1.0, ""),
    ("response", "noise_dba_spl", "noise floor", 1.0, "dB(A) SPL"),
    ("response", "snr_db", "SNR re 94 dB SPL", 1.0, "dB(A)"),
    ("response", "thd_1pct_spl_db", "1 % THD at", 1.0, "dB SPL"),
    ("response", "aop_10pct_spl_db", "10 % THD (overload) at", 1.0, "dB SPL"),
]


def _fmt(v, scale):
    if isinstance(v, (list, tuple)):
        return ", ".join(f"{x * scale:.4g}" for x in v[:4]) + (" ..." if len(v) > 4 else "")
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    return f"{v * scale:.5g}"


def summary_table(summary: dict) -> str:
    """Format the main results with their estimated relative discretisation errors."""
    unc = summary.get("uncertainty", {})
    lines = [f"diagap results: {summary['design']['name']}",
             f"{'quantity':<32} {'value':>28}  {'unit':<13} {'rel. error':>10}"]
    section_seen = None
    for section, key, label, scale, unit in ROWS:
        sec = summary.get(section)
        if not sec or key not in sec:
            continue
        if section != section_seen:
            lines.append(f"[{section}]")
            section_seen = section
        alias = UNCERTAINTY_ALIAS.get(key)
        err = unc.get(f"{section}.{key}", unc.get(f"{section}.{alias}") if alias else None)
        err_s = f"{err:.1e}" if isinstance(err, (int, float)) else ""
        lines.append(f"  {label:<30} {_fmt(sec[key], scale):>28}  {unit:<13} {err_s:>10}")
    audit = summary.get("audit")
    if audit:
        lines.append("[audit of the simple-model assumptions]")
        for row in audit:
            lines.append(f"  {row['assumption']:<44} {row['verdict']:<9} "
                         f"deviation {row['deviation']}")
    return "\n".join(lines)
