"""Writer of ``report.html``: one self-contained page for people (no external resources, no script).

The page holds: the design name as title; a caution about bias voltages and the standing of the
results; a headline of key figures; the design table; the assumption audit; the results of each
section with their estimated relative errors, each followed by its plots (PNG images embedded as
base64 ``data:`` URIs, the same bytes as ``plots/<name>.png``); and the list of output files. A
collapsed design (bias at or above pull-in) says so at the top; the plots that need a stable bias
point are absent, and the page names them.
"""
from __future__ import annotations

import base64
import html
import struct
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from diagap.names import lookup
from diagap.report.breakdown_table import breakdown_html
from diagap.scope import package_parts, response_scope, scope_text
from diagap.report.html_tables import SECTION_TITLES, audit_counts, audit_table, design_table, results_tables
from diagap.report.temperature_tables import SECTION_ID, TITLE, temperature_section

__all__ = ["report_html", "write_report_html", "CAUTION_TEXT", "png_size"]

CAUTION_TEXT = ("Bias (polarization) voltages can be hazardous. diagap's results are design "
                "estimates: they do not replace prototypes, measurement, the applicable safety "
                "codes or qualified review.")

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;margin:0;
 color:#111;background:#fff;line-height:1.45}
main{max-width:1040px;margin:0 auto;padding:1.2em 1.6em 3em}
h1{font-size:1.6em;margin:.2em 0 .1em}h2{border-bottom:2px solid #222;padding-bottom:.15em;
 margin-top:1.8em}h3{margin:1.4em 0 .4em}
.sub{color:#444;margin:0 0 1em}
.caution{border:3px solid #111;background:#fff6d6;padding:.7em 1em;margin:1em 0;font-size:1.02em}
.collapse{border:3px dashed #111;background:#fde2e2;padding:.7em 1em;margin:1em 0}
.keys{display:flex;flex-wrap:wrap;gap:.6em;margin:1em 0}
.key{border:1px solid #888;padding:.4em .8em;min-width:10em}.key b{display:block;font-size:1.25em}
table{border-collapse:collapse;margin:.4em 0 1em;font-size:.92em;width:100%}
th,td{border:1px solid #999;padding:.25em .5em;vertical-align:top;text-align:left}
th{background:#e8e8e8}td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
table.design,table.results{width:auto;min-width:60%}
.small{font-size:.85em;color:#333}td .small{white-space:normal;text-align:left}
.wide{overflow-x:auto;max-width:100%}table.audit{font-size:.84em}
table.audit td,table.audit th{padding:.2em .35em}table.audit td.num{white-space:nowrap}
@media (max-width:760px){main{padding:.8em .7em 2em}table.audit{font-size:.74em}
 table.audit td,table.audit th{padding:.15em .25em}}
td.verdict{white-space:nowrap}.v-holds{background:#e3f3e3}.v-marginal{background:#fff1c9}
.v-fails{background:#f8d4d4}
figure{margin:1.2em 0 1.8em;break-inside:avoid}
figure img{display:block;max-width:100%;height:auto;border:1px solid #ccc}
figcaption{font-size:.92em;color:#222;margin-top:.35em;max-width:62em}
nav ul{columns:2;margin:.2em 0}ul.files{columns:3}
.omitted{border-left:4px solid #777;padding:.3em .8em;background:#f2f2f2}
code{font-size:.95em}
"""


def png_size(data: bytes) -> tuple[int, int]:
    """(width, height) in pixels from a PNG's IHDR chunk; ValueError if not a PNG."""
    if data[:8] != b"\x89PNG\r\n\x1a\n" or data[12:16] != b"IHDR":
        raise ValueError("image data: not a PNG (bad signature or missing IHDR)")
    return struct.unpack(">II", data[16:24])


def _version() -> str:
    try:
        return version("diagap")
    except PackageNotFoundError:  # pragma: no cover - source tree without metadata
        return "0+unknown"


def _figure(plot, png: bytes) -> str:
    w, h = png_size(png)
    src = "data:image/png;base64," + base64.b64encode(png).decode("ascii")
    return (f'<figure id="plot-{plot.name}"><img src="{src}" width="{w}" height="{h}" '
            f'alt="{html.escape(plot.title)}"><figcaption><b>{html.escape(plot.title)}.</b> '
            f'{html.escape(plot.caption)} <span class=small>(file: plots/{plot.name}.png)'
            f'</span></figcaption></figure>')


def _collapse_box(summary: dict) -> str:
    cp = summary.get("coupled", {})
    v_b, v_pi = cp.get("bias_voltage_v"), cp.get("pull_in_voltage_v")
    detail = (f"the bias voltage {v_b:.4g} V is at or above the pull-in voltage {v_pi:.4g} V "
              f"(bias / pull-in = {v_b / v_pi:.3g})" if v_b is not None and v_pi else
              "the bias voltage is at or above pull-in")
    return (f'<div class="collapse" role="alert"><strong>The design collapses at pull-in:</strong> '
            f'{detail}. The diaphragm has no stable bias point, so the lumped response, noise, '
            f'distortion and the audit rows that need a bias point are not computed. Lower the '
            f'bias, or stiffen the diaphragm or widen the gap.</div>')


def _key_figures(summary: dict) -> str:
    items = []
    resp, cp, mech = summary.get("response", {}), summary.get("coupled", {}), \
        summary.get("mechanics", {})

    def add(key, value, fmt):
        n = lookup(key)
        if value is not None:
            items.append(f'<div class="key">{html.escape(n.label)}<b>'
                         f'{fmt.format(n.display(value))} {html.escape(n.unit)}</b></div>')

    add("response.sensitivity_db_v_per_pa", resp.get("sensitivity_db_v_per_pa"), "{:.2f}")
    add("response.noise_dba_spl", resp.get("noise_dba_spl"), "{:.1f}")
    add("response.snr_db", resp.get("snr_db"), "{:.1f}")
    add("response.resonance_hz", resp.get("resonance_hz"), "{:.4g}")
    add("coupled.pull_in_voltage_v", cp.get("pull_in_voltage_v"), "{:.4g}")
    add("coupled.bias_margin", cp.get("bias_margin"), "{:.3g}")
    if not resp:
        f1 = (mech.get("natural_frequencies_hz") or [None])[0]
        add("mechanics.natural_frequencies_hz_1", f1, "{:.4g}")
    return '<div class="keys">' + "".join(items) + "</div>"


def _omitted(result) -> str:
    notes = []
    if "response" not in result.sections:
        why = getattr(result, "skipped", {}).get("response", "no stable bias point")
        notes.append(f"frequency response, noise spectrum and THD against SPL: not computed "
                     f"({why})")
    if "coupled.bias_point" in getattr(result, "skipped", {}):
        notes.append(f"bias point (deflection, softening, resonance at bias): not computed "
                     f"({result.skipped['coupled.bias_point']}); the pull-in voltage is")
    if result.design.acoustics is None:
        notes.append("squeeze-film damping: air at 20 °C and 101.325 kPa assumed (the design "
                     "has no [acoustics] section)")
    if not result.design.backplate.perforated:
        notes.append("unit-cell field around a hole: the backplate is unperforated, the gap field "
                     "is the uniform V/g")
    notes += _dielectric_notes(result.design)
    if not notes:
        return ""
    items = "".join(f"<li>{html.escape(n)}</li>" for n in notes)
    return f'<div class="omitted"><b>Not computed or assumed:</b><ul>{items}</ul></div>'


def _dielectric_notes(design) -> list[str]:
    """What the report assumes about dielectric layers and electret charge (if present)."""
    from diagap.dielectrics import ELECTRET_NOTE, electret_bias_v

    notes = []
    if getattr(design, "layers", None) is not None:
        notes.append("dielectric layers: in the unit-cell and rim fields, the force, pull-in and "
                     "C(x); the gap is the air gap between the layers; the layers add no mass "
                     "or stiffness to the diaphragm; the unit-cell field figure shows the cell "
                     "without them")
    if getattr(design, "electret", None) is not None:
        notes.append(f"electret: equivalent bias {electret_bias_v(design):.4g} V in series with "
                     f"the supply; {ELECTRET_NOTE}")
    return notes


def _files_list(files: list[str]) -> str:
    items = "".join(f"<li><code>{html.escape(f)}</code></li>" for f in files)
    return (f"<ul class=files>{items}</ul><p class=small>summary.json is the versioned "
            "machine-readable record (SI values, keys carry their unit); the .vtu files open in "
            "VTK-based viewers.</p>")


def report_html(result, plots, files: list[str] = ()) -> str:
    """The report page of ``result`` (a :class:`diagap.pipeline.RunResult`).

    ``plots`` are (Plot, PNG bytes) pairs (:meth:`diagap.report.plots.RenderedPlots.items`);
    ``files`` the other output files, listed at the end of the page.
    """
    summary = result.summary()
    design = result.design
    name = html.escape(design.name)
    by_section: dict[str, list[str]] = {}
    for plot, png in plots:
        by_section.setdefault(plot.section, []).append(_figure(plot, png))
    audit = result.sections.get("audit")
    rows = audit.rows if audit is not None else ()
    counts = audit_counts(rows)
    sections = []
    for sec, title in SECTION_TITLES.items():
        if sec in summary:
            sections.append(f'<li><a href="#res-{sec}">{html.escape(title)}</a></li>')
    if summary.get("temperature_sweep"):
        sections.append(f'<li><a href="#{SECTION_ID}">{html.escape(TITLE)}</a></li>')
    body = [
        f"<h1>diagap report: {name}</h1>",
        f'<p class="sub">{html.escape(design.description)} — diagap {html.escape(_version())}, '
        f'accuracy "{html.escape(design.analysis.accuracy)}", summary schema '
        f'{html.escape(str(summary.get("schema_version")))}</p>',
        f'<div class="caution" role="note"><strong>Caution.</strong> {html.escape(CAUTION_TEXT)}'
        "</div>",
        _collapse_box(summary) if result.collapsed else "",
        _key_figures(summary),
        f'<p class="sub"><b>{html.escape(scope_text(response_scope(design), package_parts(design)).capitalize())}.'
        f'</b></p>',
        '<nav><b>Contents</b><ul><li><a href="#design">Design</a></li>'
        '<li><a href="#audit">Assumption audit</a></li>' + "".join(sections) +
        '<li><a href="#files">Output files</a></li></ul></nav>',
        '<h2 id="design">Design</h2>', design_table(design),
        '<h2 id="audit">Assumption audit</h2>',
        f"<p>Each assumption of the simple capsule model (rigid parallel-plate piston, ideal "
        f"capacitor, small linear motion, continuum incompressible film, corner below the audio "
        f"band) compared with the finite-element result. Verdicts: {counts['holds']} holds, "
        f"{counts['marginal']} marginal, {counts['fails']} fails. Thresholds are engineering "
        f"judgement (common practice) and apply to |deviation|; each row states what its "
        f"deviation is and in which unit.</p>",
        audit_table(rows) if rows else "<p>No audit rows were computed.</p>",
        '<h2 id="results">Results</h2>',
        "<p>Estimated relative errors are the discretisation errors of the finite-element "
        "quantities (two or more mesh levels); for the sensitivity (relative to V/Pa) and the "
        "resonance of the lumped model they are those errors propagated to first order; a dash "
        "means the quantity has no discretisation error estimate of its own.</p>",
        _omitted(result),
    ]
    for sec, table in results_tables(summary):
        body.append(table)
        if sec == "response":
            body.append(breakdown_html(summary))
        body.extend(by_section.get(sec, []))
    body.append(temperature_section(summary, by_section.get("temperature_sweep", [])))
    body += ['<h2 id="files">Output files</h2>', _files_list(list(files))]
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>diagap report: {name}</title><style>{_CSS}</style></head>\n"
            "<body><main>\n" + "\n".join(b for b in body if b) + "\n</main></body></html>\n")


def write_report_html(result, plots, path, files: list[str] = ()) -> Path:
    """Write :func:`report_html` to ``path`` (UTF-8) and return it."""
    p = Path(path)
    p.write_text(report_html(result, plots, files), encoding="utf-8")
    return p
