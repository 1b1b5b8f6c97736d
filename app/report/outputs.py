"""The registry of a run's output files (besides summary.json): name → producer(path).

``report_files(result)`` yields (relative file name, function(path)) pairs; :mod:`diagap.writer`
calls each producer on a path in a temporary folder and moves the files into OUT only when all
have succeeded. Files:

response.csv, model.cir   lumped response table and SPICE netlist (stable bias point only)
plots/<name>.png          the report plots (:mod:`diagap.report.plots`; temperature_drift.png
                          with [analysis] temperatures, :mod:`diagap.report.plots_temperature`)
report.html               the self-contained report page (:mod:`diagap.report.html`)
fields.vtu                diaphragm mesh, deflection and mode shapes (:mod:`diagap.report.vtu`)
cell_potential.vtu        unit-cell potential and |E| (perforated backplate only)
.diagap-outputs.json      hidden manifest: the names of the files of this run (see below)

Each plot is drawn once; the PNG file and the image embedded in report.html are the same bytes.

A run owns the diagap files of its folder: :func:`earlier_outputs` names the files an earlier run
left there -- those listed in the hidden manifest that every run writes,
plus the fixed names above and the report plots (``plots/<stem>.png|svg``) for folders written
before the manifest existed. :mod:`diagap.writer` removes those the new run does not write; any
other file (a user's notes, their own plots) is never touched.
"""
from __future__ import annotations

import json
from pathlib import Path, PurePosixPath

__all__ = ["report_files", "earlier_outputs", "manifest_text", "FIXED_OUTPUTS", "MANIFEST"]

MANIFEST = ".diagap-outputs.json"
FIXED_OUTPUTS = ("summary.json", "report.html", "response.csv", "model.cir", "fields.vtu",
                 "cell_potential.vtu")
_PLOT_STEMS = ("bias_branch", "capacitance", "cell_field", "deflection", "mode_maps",
               "mode_profiles", "noise", "response", "squeeze_film", "thd", "noise_breakdown",
               "temperature_drift")
_PLOT_SUFFIXES = (".png", ".svg")


def manifest_text(names) -> str:
    """The manifest of a run's files (relative names, ``/`` separated)."""
    return json.dumps({"format": "diagap-outputs/1", "files": sorted(names)}, indent=1) + "\n"


def _safe(name) -> bool:
    p = PurePosixPath(str(name))
    return bool(name) and not p.is_absolute() and ".." not in p.parts and p.name != MANIFEST


def _listed(out: Path) -> set[str]:
    try:
        files = json.loads((out / MANIFEST).read_text(encoding="utf-8")).get("files", [])
    except (OSError, ValueError, AttributeError):
        return set()
    return {str(n) for n in files if isinstance(n, str) and _safe(n)} if isinstance(files, list) \
        else set()


def earlier_outputs(out: Path) -> set[str]:
    """Relative names of the diagap output files present in ``out`` (see the module docstring)."""
    out = Path(out)
    names = _listed(out) | set(FIXED_OUTPUTS)
    names |= {f"plots/{stem}{suffix}" for stem in _PLOT_STEMS for suffix in _PLOT_SUFFIXES}
    return {n for n in names if (out / n).is_file() or (out / n).is_symlink()}


def _lumped_files(result):
    resp = result.sections.get("response")
    if resp is None:
        return
    from diagap.report.csv import write_response_csv
    from diagap.report.spice import write_spice

    r = resp.objects["response"].response
    model = resp.objects["model"]
    yield "response.csv", lambda p: write_response_csv(r.frequency_hz, r.voltage_per_pa, p)
    yield "model.cir", lambda p: write_spice(model, p)


def _field_files(result, cell):
    from diagap.report.fields import diaphragm_field
    from diagap.report.vtu import write_cell_vtu, write_diaphragm_vtu

    mech = result.sections.get("mechanics")
    if mech is not None:
        yield "fields.vtu", lambda p: write_diaphragm_vtu(diaphragm_field(mech), p)
    if cell is not None:
        yield "cell_potential.vtu", lambda p: write_cell_vtu(cell, p)


#: sections that no later stage changes: their plots can be drawn before the run ends
EARLY_SECTIONS = ("mechanics", "electrostatics", "coupled", "damping")


def draw_early(result, drawn: dict, busy=lambda: True) -> None:
    """Draw, into ``drawn`` (plot name → PNG bytes), the plots of :data:`EARLY_SECTIONS` of a
    run still in progress, one at a time while ``busy()`` (e.g. while the run's second process
    computes the large deflection: :func:`diagap.run_design`'s ``on_wait``). The report then
    uses these bytes: the plots are drawn from the same section objects as at the end, so they
    are the same bytes."""
    from diagap.report.fields import cell_field
    from diagap.report.plots import png_bytes, print_style, report_plots

    cell = cell_field(result.design) if "electrostatics" in result.sections else None
    with print_style():
        for plot in report_plots(result, cell):
            if not busy():
                return
            if plot.section in EARLY_SECTIONS and plot.name not in drawn:
                drawn[plot.name] = png_bytes(plot.draw())


def report_files(result, report: bool = True, drawn: dict | None = None):
    """Yield (relative file name, function(path)) for every file this run can produce
    (``report=False``: response.csv only, no plots, page, VTK or SPICE files); ``drawn``: PNG
    bytes of plots already drawn (:func:`draw_early`; only those of :data:`EARLY_SECTIONS` are
    taken)."""
    if not report:
        csv = [f for f in _lumped_files(result) if f[0] == "response.csv"]
        yield from csv
        names = ["summary.json"] + [n for n, _ in csv]
        yield MANIFEST, lambda p: p.write_text(manifest_text(names), encoding="utf-8")
        return
    from diagap.report.fields import cell_field
    from diagap.report.html import write_report_html
    from diagap.report.plots import RenderedPlots, report_plots

    cell = cell_field(result.design) if "electrostatics" in result.sections else None
    plots = report_plots(result, cell)
    early = {p.name for p in plots if p.section in EARLY_SECTIONS}
    rendered = RenderedPlots(plots, drawn={k: v for k, v in (drawn or {}).items() if k in early})
    rendered.start()  # a second process draws while the other files are written here
    try:
        others = list(_lumped_files(result)) + list(_field_files(result, cell))
        yield from others
        for plot in rendered.plots:
            yield f"plots/{plot.name}.png", lambda p, n=plot.name: p.write_bytes(rendered.png(n))
        listed = ["summary.json"] + [n for n, _ in others] + \
            [f"plots/{p.name}.png" for p in rendered.plots]
        yield "report.html", lambda p: write_report_html(result, rendered.items(), p, listed)
        yield MANIFEST, lambda p: p.write_text(manifest_text([*listed, "report.html"]),
                                               encoding="utf-8")
    finally:
        rendered.close()
