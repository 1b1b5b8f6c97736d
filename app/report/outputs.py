"""The registry of a run's output files (besides summary.json): name → producer(path).

``report_files(result)`` yields (relative file name, function(path)) pairs; :mod:`diagap.writer`
calls each producer on a path in a temporary folder and moves the files into OUT only when all
have succeeded. Files:

response.csv, model.cir   lumped response table and SPICE netlist (stable bias point only)
plots/<name>.png          the report plots (:mod:`diagap.report.plots`)
report.html               the self-contained report page (:mod:`diagap.report.html`)
fields.vtu                diaphragm mesh, deflection and mode shapes (:mod:`diagap.report.vtu`)
cell_potential.vtu        unit-cell potential and |E| (perforated backplate only)

Each plot is drawn once; the PNG file and the image embedded in report.html are the same bytes.
"""
from __future__ import annotations

__all__ = ["report_files"]


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


def report_files(result, report: bool = True):
    """Yield (relative file name, function(path)) for every file this run can produce
    (``report=False``: response.csv only, no plots, page, VTK or SPICE files)."""
    if not report:
        yield from (f for f in _lumped_files(result) if f[0] == "response.csv")
        return
    from diagap.report.fields import cell_field
    from diagap.report.html import write_report_html
    from diagap.report.plots import RenderedPlots, report_plots

    cell = cell_field(result.design) if "electrostatics" in result.sections else None
    rendered = RenderedPlots(report_plots(result, cell))
    others = list(_lumped_files(result)) + list(_field_files(result, cell))
    yield from others
    for plot in rendered.plots:
        yield f"plots/{plot.name}.png", lambda p, n=plot.name: p.write_bytes(rendered.png(n))
    listed = ["summary.json"] + [n for n, _ in others] + \
        [f"plots/{p.name}.png" for p in rendered.plots]
    yield "report.html", lambda p: write_report_html(result, rendered.items(), p, listed)
