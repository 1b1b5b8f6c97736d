"""The drift table (``temperature_sweep`` of summary.json) for the console and report.html, and the
thermal rows of the design table.

One row per temperature: temperature (K and °C), residual stress σ(T), sensitivity at 1 kHz,
resonance in air, pull-in voltage, noise floor and the state (ok, buckled, collapsed, or the
reason a value is absent). Labels and display units come from :mod:`diagap.names`.
"""
from __future__ import annotations

import html

from diagap.names import lookup

__all__ = ["COLUMNS", "temperature_rows", "temperature_lines", "temperature_section",
           "thermal_design_rows", "SECTION_ID", "TITLE"]

SECTION_ID = "res-temperature_sweep"
TITLE = "Drift over the operating temperatures"
#: (summary key of an entry, short column head) after the temperature
COLUMNS = (("residual_stress_pa", "stress"), ("sensitivity_db_v_per_pa", "sensitivity"),
           ("resonance_hz", "resonance"), ("pull_in_voltage_v", "pull-in"),
           ("noise_dba_spl", "noise"))
ZERO_CELSIUS_K = 273.15


def _state(entry: dict) -> str:
    if entry.get("buckled"):
        return "BUCKLED"
    if entry.get("collapsed"):
        return "COLLAPSED"
    return "ok" if not entry.get("note") else "partial"


def _cell(key: str, value) -> str:
    n = lookup(f"temperature_sweep.{key}")
    return "-" if value is None else f"{n.display(value):.5g}"


def temperature_rows(summary: dict) -> tuple[list[str], list[list[str]], list[str]]:
    """(column heads with units, rows of text cells, notes) of the drift table."""
    entries = summary.get("temperature_sweep") or []
    heads = ["T (K)", "T (°C)"] + [f"{h} ({lookup('temperature_sweep.' + k).unit})"
                                   for k, h in COLUMNS] + ["state"]
    rows, notes = [], []
    for e in entries:
        t = e["temperature_k"]
        rows.append([f"{t:.5g}", f"{t - ZERO_CELSIUS_K:.4g}"]
                    + [_cell(k, e.get(k)) for k, _ in COLUMNS] + [_state(e)])
        if e.get("note"):
            notes.append(f"{t - ZERO_CELSIUS_K:.4g} °C: {e['note']}")
    return heads, rows, notes


def temperature_lines(summary: dict) -> list[str]:
    """The drift table as aligned console lines (empty without ``temperature_sweep``)."""
    if not summary.get("temperature_sweep"):
        return []
    heads, rows, notes = temperature_rows(summary)
    w = [max(len(r[i]) for r in rows + [heads]) for i in range(len(heads))]
    lines = ["[drift over temperature: thermal-mismatch stress, air at T; '-': not computed]"]
    for r in [heads] + rows:
        lines.append("  " + "  ".join(c.rjust(w[i]) if i < len(r) - 1 else c
                                      for i, c in enumerate(r)))
    lines += [f"    ({n})" for n in notes]
    return lines


def temperature_section(summary: dict, figures: list[str]) -> str:
    """The report.html section of the drift table and its plot ('' without the sweep)."""
    if not summary.get("temperature_sweep"):
        return ""
    heads, rows, notes = temperature_rows(summary)
    th = "".join(f"<th>{html.escape(h)}</th>" for h in heads)
    body = "\n".join("<tr>" + "".join(f"<td class=num>{html.escape(c)}</td>" for c in r[:-1])
                     + f"<td>{html.escape(r[-1])}</td></tr>" for r in rows)
    items = "".join(f"<li>{html.escape(n)}</li>" for n in notes)
    note_list = f'<ul class="small">{items}</ul>' if items else ""
    return (f'<h3 id="{SECTION_ID}">{html.escape(TITLE)}</h3>\n'
            "<p>At each temperature the residual stress follows the thermal-expansion mismatch "
            "with the substrate, σ(T) = σ0 − E/(1−ν)(α_film − α_substrate)(T − T0), and the air "
            "is at T; the geometry is that of the design. A point whose stress reaches the "
            "buckling stress of the flat diaphragm, or whose bias is at or above pull-in, has "
            "no response values. Values are design estimates.</p>"
            f'<table class="results"><thead><tr>{th}</tr></thead><tbody>\n{body}\n'
            f"</tbody></table>{note_list}" + "".join(figures))


def thermal_design_rows(design) -> list[tuple]:
    """(section, label, value, unit) rows of the design's thermal data (none without them)."""
    th = getattr(design, "thermal", None)
    if th is None:
        return []
    t0 = th.reference_temperature_k
    rows = [("thermal", "diaphragm expansion α_film", th.film_expansion_per_k * 1e6, "ppm/K"),
            ("thermal", "substrate", th.substrate or "(expansion given)", ""),
            ("thermal", "substrate expansion α_substrate", th.substrate_expansion_per_k * 1e6,
             "ppm/K"),
            ("thermal", "residual stress σ0 as given", th.reference_stress_pa * 1e-6, "MPa"),
            ("thermal", "at temperature T0", f"{t0:.5g} K ({t0 - ZERO_CELSIUS_K:.4g} °C)", ""),
            ("thermal", "stress at the operating temperature",
             design.diaphragm.residual_stress_pa * 1e-6, "MPa")]
    temps = design.analysis.temperatures_k
    if temps:
        rows.append(("thermal", "drift temperatures",
                     ", ".join(f"{t - ZERO_CELSIUS_K:.4g}" for t in temps), "°C"))
    return rows
