"""The noise breakdown and the overload point as a table, for the console and for report.html.

One row per noise source: its A-weighted input-referred level (dB(A) SPL, 20 Hz – 20 kHz) and its
share of the total noise power, then the total (the power sum), the SNR re 94 dB SPL, the
acoustic overload point with its limiting mechanism, and the dynamic range. The first line states
the scope ("capsule only" without a [readout]). Values come from summary.json's ``response``
section; labels from :mod:`diagap.names`.
"""
from __future__ import annotations

import html

from diagap.names import lookup
from diagap.scope import scope_text, summary_parts

__all__ = ["breakdown_rows", "breakdown_lines", "breakdown_html", "source_label"]

_PREFIX = "noise source: "


def source_label(source: str) -> str:
    """The name of a noise source for people (``"bias_resistor"`` → ``"bias resistor"``)."""
    label = lookup(f"response.noise_breakdown_dba.{source}").label
    return label[len(_PREFIX):] if label.startswith(_PREFIX) else label


def _level(v) -> str:
    return "-" if v is None else f"{v:.1f}"


def breakdown_rows(resp: dict) -> list[tuple[str, str, str]]:
    """(quantity, value, unit or share) rows of the breakdown, sources loudest first."""
    levels = resp.get("noise_breakdown_dba") or {}
    total = resp.get("noise_dba_spl")
    rows = []
    for source, v in sorted(levels.items(), key=lambda t: -(t[1] if t[1] is not None else -1e9)):
        share = "" if v is None or total is None else \
            f"{100.0 * 10.0 ** ((v - total) / 10.0):.3g} % of the noise power"
        rows.append((source_label(source), _level(v), share))
    rows.append(("total (power sum)", _level(total), "dB(A) SPL"))
    if resp.get("snr_db") is not None:
        rows.append(("SNR re 94 dB SPL at 1 kHz", _level(resp["snr_db"]), "dB(A)"))
    if "aop_db_spl" in resp:
        rows.append(("acoustic overload point", _level(resp["aop_db_spl"]),
                     f"dB SPL, limited by {resp.get('aop_limited_by')}"))
        rows.append(("dynamic range", _level(resp.get("dynamic_range_db")), "dB"))
    return rows


def breakdown_lines(summary: dict) -> list[str]:
    """Console lines: a head naming the scope, then the rows (the scope alone without a
    response)."""
    resp = summary.get("response") or {}
    if "noise_breakdown_dba" not in resp:
        return [f"[{scope_text(resp.get('scope'), summary_parts(summary))}]"]
    rows = breakdown_rows(resp)
    w = max(len(r[0]) for r in rows)
    head = ["[noise by source: A-weighted, input-referred, 20 Hz - 20 kHz, dB(A) SPL]",
            f"  ({scope_text(resp.get('scope'), summary_parts(summary))})"]
    return head + [f"  {a:<{w}}  {b:>6}  {c}".rstrip() for a, b, c in rows]


def breakdown_html(summary: dict) -> str:
    """The breakdown as an HTML table with its heading and scope (empty without a response)."""
    resp = summary.get("response") or {}
    if "noise_breakdown_dba" not in resp:
        return ""
    body = "\n".join(f"<tr><td>{html.escape(a)}</td><td class=num>{html.escape(b)}</td>"
                     f"<td>{html.escape(c)}</td></tr>" for a, b, c in breakdown_rows(resp))
    note = resp.get("aop_note")
    return (f'<h3 id="noise-breakdown">Noise by source and overload point</h3>\n'
            f"<p class=small>{html.escape(scope_text(resp.get('scope'), summary_parts(summary)))}. Each source's noise is "
            f"referred to the acoustic input through the response at the output node, A-weighted "
            f"(IEC 61672-1) over 20 Hz – 20 kHz; the sources are independent, so their powers "
            f"add.{' Overload point: ' + html.escape(note) + '.' if note else ''}</p>\n"
            f'<table class="results"><thead><tr><th>quantity</th><th>value</th><th>unit / share'
            f"</th></tr></thead><tbody>\n{body}\n</tbody></table>")
