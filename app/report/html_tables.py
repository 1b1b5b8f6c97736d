"""The tables of report.html: the design, the results with their uncertainties, and the audit.

Values are SI floats from the design and summary.json, shown in display units (µm, pF, kHz …).
Every FE result is followed by its estimated relative discretisation error (summary.json's
``uncertainty``; propagated to the lumped sensitivity and resonance). Audit verdicts are
written out as words with a symbol (✓ holds, ! marginal, ✗ FAILS), so that they read without
colour.
"""
from __future__ import annotations

import html
import math

from diagap.names import lookup
from diagap.table import ROWS, absent_reason
from diagap.table import UNCERTAINTY_ALIAS as _UNCERTAINTY_ALIAS
from diagap.report.temperature_tables import thermal_design_rows

__all__ = ["design_table", "results_tables", "audit_table", "audit_counts", "display_unit",
           "format_value"]

# (section, key): results beyond the console table's rows; names from diagap.names
EXTRA_ROWS = [
    ("mechanics", "model"),
    ("electrostatics", "rim_fringing_capacitance_f"),
    ("electrostatics", "electrode_area_m2"),
    ("coupled", "pull_in_center_deflection_m"),
    ("coupled", "center_compliance_at_bias_m_per_pa"),
    ("coupled", "softening_factor"),
    ("damping", "gas_spring_stiffness_n_per_m"),
    ("damping", "knudsen_number"),
    ("damping", "squeeze_number_at_resonance"),
    ("response", "sensitivity_v_per_pa"),
    ("response", "lowfreq_minus3db_hz"),
    ("large_deflection", "clearance_m"),
    ("large_deflection", "contact_pressure_pa"),
    ("large_deflection", "contact_pressure_at_bias_pa"),
    ("large_deflection", "contact_spl_db_at_bias"),
    ("large_deflection", "thd_10pct_spl_db_quasistatic"),
    ("mechanics", "backplate_natural_frequencies_hz"),
    ("coupled", "backplate_center_deflection_m"),
    ("coupled", "backplate_resonance_at_bias_hz"),
    ("coupled", "backplate_slope_factor"),
]
_TEXT_LABELS = {"mechanics.model": "plate model"}
SECTION_TITLES = {"mechanics": "Diaphragm mechanics (vacuum, no bias)",
                  "electrostatics": "Air-gap electrostatics (rest gap)",
                  "coupled": "Bias and pull-in", "damping": "Squeeze-film damping",
                  "response": "Lumped model: response, noise, distortion",
                  "large_deflection": "High sound pressure: large deflection and contact"}
_UNIT_TEXT = (("um", "µm"), ("ug", "µg"), ("^2", "²"), ("^3", "³"), ("*", "·"), ("ohm", "Ω"),
              ("degC", "°C"))


def display_unit(unit: str) -> str:
    """ASCII unit text (``um^3/Pa``) in display form (``µm³/Pa``)."""
    for a, b in _UNIT_TEXT:
        unit = unit.replace(a, b)
    return unit


def format_value(v, scale: float = 1.0, digits: int = 5) -> str:
    """A number scaled for display (lists joined, None as a dash, text escaped)."""
    if v is None:
        return "—"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, str):
        return html.escape(v)
    if isinstance(v, (list, tuple)):
        return ", ".join(format_value(x, scale, digits) for x in v)
    x = float(v) * scale
    if not math.isfinite(x):
        return "—"
    text = f"{x:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}×10<sup>{int(exponent)}</sup>"
    return text


def _table(head: tuple[str, ...], rows: list[str], cls: str = "") -> str:
    th = "".join(f"<th>{h}</th>" for h in head)
    c = f' class="{cls}"' if cls else ""
    return f"<table{c}><thead><tr>{th}</tr></thead><tbody>\n" + "\n".join(rows) + \
        "\n</tbody></table>"


def _design_rows(design) -> list[tuple[str, str, str]]:
    d, b, a, e = design.diaphragm, design.backplate, design.acoustics, design.electrical
    size = "radius" if d.shape == "circle" else "side"
    rows = [
        ("diaphragm", "shape / edge", f"{d.shape}, {d.edge}", ""),
        ("diaphragm", size, d.size_m * 1e3, "mm"),
        ("diaphragm", "thickness", d.thickness_m * 1e6, "µm"),
        ("diaphragm", "material preset", d.material or "—", ""),
        ("diaphragm", "Young's modulus", d.youngs_modulus_pa * 1e-9, "GPa"),
        ("diaphragm", "Poisson's ratio", d.poisson_ratio, ""),
        ("diaphragm", "density", d.density_kg_m3, "kg/m³"),
        ("diaphragm", "residual stress (tensile +)", d.residual_stress_pa * 1e-6, "MPa"),
        ("backplate", "gap at rest", b.gap_m * 1e6, "µm"),
        ("backplate", "thickness", b.thickness_m * 1e6, "µm"),
        ("backplate", f"electrode {size}", b.electrode_size_m * 1e3, "mm"),
        ("backplate", "hole lattice", b.hole_lattice, ""),
    ]
    if b.perforated:
        rows += [("backplate", "hole radius", b.hole_radius_m * 1e6, "µm"),
                 ("backplate", "hole pitch", b.hole_pitch_m * 1e6, "µm")]
    if a is None:
        rows += [("acoustics", "(no [acoustics] section)",
                  "air at 20 °C, 101.325 kPa assumed for the damping", "")]
    else:
        rows += [
            ("acoustics", "back volume", a.back_volume_m3 * 1e9, "mm³"),
            ("acoustics", "vent resistance", a.vent_resistance_pa_s_per_m3, "Pa·s/m³"),
            ("acoustics", "temperature",
             f"{a.temperature_k:.5g} K ({a.temperature_k - 273.15:.4g} °C)", ""),
            ("acoustics", "static pressure", a.static_pressure_pa * 1e-3, "kPa"),
        ]
        rows += _package_rows(design)
    if e is None:
        rows += [("electrical", "(no [electrical] section)", "no bias point computed", "")]
    else:
        rows += [
            ("electrical", "bias voltage", e.bias_voltage_v, "V"),
            ("electrical", "bias resistance", e.bias_resistance_ohm * 1e-9, "GΩ"),
            ("electrical", "parasitic capacitance", e.parasitic_capacitance_f * 1e12, "pF"),
            ("electrical", "preamp input capacitance", e.preamp_input_capacitance_f * 1e12,
             "pF"),
        ]
    r = getattr(design, "readout", None)
    if r is not None:
        rows += [
            ("readout", "input noise density (white)", r.noise_density_v_per_rthz * 1e9,
             "nV/√Hz"),
            ("readout", "1/f noise corner", r.noise_corner_hz, "Hz"),
            ("readout", "gain", r.gain_db, "dB"),
            ("readout", "input capacitance", r.input_capacitance_f * 1e12, "pF"),
            ("readout", "clipping amplitude (peak)", r.clip_amplitude_v or "—", "V"),
            ("readout", "full scale", r.full_scale_input_v if r.full_scale_input_v else
             r.full_scale_spl_db or "—", "V peak" if r.full_scale_input_v else "dB SPL"),
            ("readout", "charge-pump resistance", r.charge_pump_resistance_ohm * 1e-6, "MΩ"),
            ("readout", "charge-pump noise", "thermal of its resistance"
             if r.charge_pump_noise_v_per_rthz is None else
             f"{r.charge_pump_noise_v_per_rthz * 1e9:.4g} nV/√Hz", ""),
        ]
    rows += thermal_design_rows(design)
    rows += _dielectric_rows(design)
    rows += [
        ("analysis", "accuracy", design.analysis.accuracy, ""),
    ]
    return rows


def _dielectric_rows(design) -> list[tuple[str, str, str]]:
    """[layers] and [electret] rows, when the design has them."""
    rows, layers, el = [], getattr(design, "layers", None), getattr(design, "electret", None)
    if layers is not None:
        for side in ("backplate", "diaphragm"):
            t = getattr(layers, f"{side}_thickness_m")
            if t > 0:
                rows += [("layers", f"{side} layer thickness", t * 1e6, "µm"),
                         ("layers", f"{side} layer permittivity",
                          getattr(layers, f"{side}_permittivity"), "")]
    if el is not None:
        from diagap.dielectrics import electret_bias_v

        rows += [("electret", "charge density", el.charge_density_c_per_m2 * 1e3, "mC/m²"),
                 ("electret", "charged layer", el.layer, ""),
                 ("electret", "equivalent bias", electret_bias_v(design), "V")]
    return rows


def design_table(design) -> str:
    """The design in display units (the values summary.json holds in SI)."""
    rows = _design_rows(design)
    out = []
    for k, (sec, label, v, u) in enumerate(rows):
        first = k == 0 or rows[k - 1][0] != sec
        span = sum(1 for r in rows if r[0] == sec)
        head = f'<th scope=row rowspan="{span}">{html.escape(sec)}</th>' if first else ""
        out.append(f"<tr>{head}<td>{html.escape(label)}</td>"
                   f"<td class=num>{format_value(v, digits=6)}</td><td>{u}</td></tr>")
    return _table(("section", "quantity", "value", "unit"), out, "design")




def _uncertainty(unc: dict, section: str, key: str) -> str:
    u = unc.get(f"{section}.{key}", unc.get(f"{section}.{_UNCERTAINTY_ALIAS.get(key, key)}"))
    if u is None:
        return "—"
    return f"±{100.0 * u:.2g} %"


def results_tables(summary: dict) -> list[tuple[str, str]]:
    """(section, HTML) of one table per computed section: quantity, value, unit, est. error."""
    unc = summary.get("uncertainty", {})
    out = []
    for section, title in SECTION_TITLES.items():
        sec = summary.get(section)
        if not sec:
            continue
        rows = []
        for s, key in ROWS + EXTRA_ROWS:
            if s != section or key not in sec:
                continue
            reason = absent_reason(summary, section, key)
            if sec[key] is None and not reason:
                continue
            name = lookup(f"{section}.{key}")
            label = name.label if name else _TEXT_LABELS.get(f"{section}.{key}", key)
            scale, unit = (name.scale, name.unit) if name else (1.0, "")
            cls = "text" if isinstance(sec[key], str) else "num"
            value = format_value(sec[key], scale)
            if reason:
                value += f"<div class=small>{html.escape(reason)}</div>"
            rows.append(f"<tr><td>{html.escape(label)}</td>"
                        f"<td class={cls}>{value}</td>"
                        f"<td>{html.escape(unit)}</td>"
                        f"<td class=num>{_uncertainty(unc, section, key)}</td></tr>")
        out.append((section, f'<h3 id="res-{section}">{html.escape(title)}</h3>\n' +
                    _table(("quantity", "value", "unit", "est. rel. error"), rows, "results")))
    return out


_VERDICT = {"holds": ("✓ holds", False), "marginal": ("! marginal", True),
            "fails": ("✗ FAILS", True)}


def _verdict_cell(verdict: str) -> str:
    text, strong = _VERDICT.get(verdict, (verdict, True))
    body = f"<strong>{html.escape(text)}</strong>" if strong else html.escape(text)
    return f'<td class="verdict v-{html.escape(verdict)}">{body}</td>'


def audit_counts(rows) -> dict:
    """Number of audit rows per verdict."""
    out = {"holds": 0, "marginal": 0, "fails": 0}
    for r in rows:
        out[r.verdict] = out.get(r.verdict, 0) + 1
    return out


def audit_table(rows) -> str:
    """The assumption audit: deviation (one meaning per row), value, threshold, verdict, note.

    The closed-form and FE values go under the assumption in small print; the table sits in a
    scroll container so that a narrow window never cuts it.
    """
    body = []
    for r in rows:
        body.append(
            f"<tr><td>{html.escape(r.assumption)}<div class=small>"
            f"{html.escape(display_unit(r.quantity))}: simple model "
            f"{format_value(r.simple, digits=4)}, FE {format_value(r.fe, digits=4)}</div></td>"
            f"<td>{html.escape(r.kind)}</td>"
            f"<td class=num>{html.escape(r.deviation_text())}</td>"
            f"{_verdict_cell(r.verdict)}"
            f"<td class=small>{html.escape(r.threshold_text())}</td>"
            f"<td class=small>{html.escape(r.note)}</td></tr>")
    return '<div class="wide">' + _table(
        ("assumption (quantity: values)", "deviation: what it is, unit", "value", "verdict",
         "threshold on |value| (else fails)", "note"), body, "audit") + "</div>"


def _package_rows(design) -> list:
    """Rows of the sound port, front chamber, lossy back volume and vent channel (if any)."""
    a, rows = design.acoustics, []
    if a.back_volume_box_m:
        rows.append(("acoustics", "back volume box",
                     " × ".join(f"{v * 1e3:.4g}" for v in a.back_volume_box_m), "mm"))
    if a.back_volume_area_m2 is not None:
        rows.append(("acoustics", "back volume wall area", a.back_volume_area_m2 * 1e6, "mm²"))
    v = a.vent_channel
    if v is not None:
        size = (f"radius {v.radius_m * 1e6:.4g}" if v.radius_m is not None else
                f"slot {v.slot_m[0] * 1e6:.4g} × {v.slot_m[1] * 1e6:.4g}")
        rows.append(("acoustics", "vent channel", f"{size}, length {v.length_m * 1e6:.4g}", "µm"))
    p = design.port
    if p is not None:
        size = (f"radius {p.radius_m * 1e3:.4g}" if p.radius_m is not None else
                f"slot {p.slot_m[0] * 1e3:.4g} × {p.slot_m[1] * 1e3:.4g}")
        rows.append(("port", "sound port", f"{size}, length {p.length_m * 1e3:.4g}", "mm"))
    f = design.front
    if f is not None:
        rows.append(("front", "front chamber volume", f.volume_m3 * 1e9, "mm³"))
        if f.wall_area_m2 is not None:
            rows.append(("front", "front chamber wall area", f.wall_area_m2 * 1e6, "mm²"))
    return rows
