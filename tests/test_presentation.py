"""What a person reads: the names table, the console table and audit, the caution line, plot
resolution and font sizes, the report figures drawn once, sweep plots, and summary.json's keys.

The pipeline runs once for this module (the demo at draft accuracy); the command-line tests reuse
that result through a stand-in for ``run_design`` so that they check the printing, not the physics.
"""
from __future__ import annotations

import json
import math
import re
import struct
from pathlib import Path

import pytest

from diagap.audit import audit_design, resonance_peak_db
from diagap.cli import main
from diagap.design import demo_design, with_overrides
from diagap.names import INPUT_NAMES, NAMES, TEXT_KEYS, lookup
from diagap.pipeline import run_design
from diagap.report.plots import DPI, FONT_PT, print_style, report_plots
from diagap.table import CAUTION_LINE, summary_table
from diagap.writer import write_outputs

_NOT_SECTIONS = ("schema_version", "design", "uncertainty", "timings_s", "audit")


@pytest.fixture(scope="module")
def demo():
    return run_design(demo_design().with_accuracy("draft"))


@pytest.fixture(scope="module")
def summary(demo):
    return json.loads(json.dumps(demo.summary()))


def _numeric_keys(d: dict, prefix: str = ""):
    """section.key of every number or flat list of numbers (curves and texts left out)."""
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            yield from _numeric_keys(v, key + ".")
        elif isinstance(v, bool):
            continue
        elif isinstance(v, (int, float)):
            yield key
        elif isinstance(v, list) and v and all(isinstance(x, (int, float)) for x in v):
            yield key


@pytest.fixture
def cached_run(monkeypatch, demo):
    """``diagap run`` without the pipeline: run_design returns the module's demo result."""
    import diagap.pipeline

    monkeypatch.setattr(diagap.pipeline, "run_design", lambda design, **kw: demo)


# ---- the names table ---------------------------------------------------------------------------

def test_names_cover_every_numeric_summary_key(summary):
    keys = [k for sec, body in summary.items() if sec not in _NOT_SECTIONS
            for k in _numeric_keys(body, sec + ".")]
    assert len(keys) > 40
    missing = [k for k in keys if lookup(k) is None]
    assert not missing, missing


def test_names_cover_every_flattened_sweep_output(summary):
    from diagap.sweep.point import flatten_summary

    outputs, _ = flatten_summary(summary)
    missing = [k for k, v in outputs.items() if isinstance(v, (int, float))
               and not isinstance(v, bool) and lookup(k) is None]
    assert not missing, missing
    texts = [k for k, v in outputs.items() if isinstance(v, str)]
    assert set(texts) <= set(TEXT_KEYS), texts


def test_list_keys_are_the_summary_lists_that_have_names(summary):
    """LIST_KEYS (a study names one entry of them) holds every list of the summary with a
    name; the study paths refuse the bare list and unknown keys in one line."""
    from diagap.design import DesignError
    from diagap.evaluate import check_keys
    from diagap.names import LIST_KEYS, NAMES

    lists = set()

    def walk(obj, path):
        if isinstance(obj, dict):
            for k, v in obj.items():
                walk(v, f"{path}.{k}" if path else k)
        elif isinstance(obj, list):
            lists.add(path)

    walk({k: v for k, v in summary.items() if k not in _NOT_SECTIONS}, "")
    assert {k for k in lists if k in NAMES} <= set(LIST_KEYS)
    assert set(LIST_KEYS) <= set(NAMES)
    assert check_keys(["mechanics.natural_frequencies_hz_2", "response.snr_db"]) == (
        "mechanics.natural_frequencies_hz_2", "response.snr_db")
    with pytest.raises(DesignError, match=r"'mechanics.natural_frequencies_hz': a list.*_1'"):
        check_keys(["mechanics.natural_frequencies_hz"])
    with pytest.raises(DesignError, match=r"not a numeric output.*did you mean 'response.snr_db'"):
        check_keys(["response.snr_dbx"])
    with pytest.raises(DesignError, match="not a numeric output"):
        check_keys(["mechanics.model"])


def _pint_unit(text: str) -> str:
    for a, b in (("µ", "u"), ("·", "*"), ("²", "**2"), ("³", "**3"), ("√Hz", "Hz**0.5"),
                 ("Ω", "ohm")):
        text = text.replace(a, b)
    return text or "dimensionless"


def test_names_are_complete_and_display_factors_right():
    # every display factor checked against pint's unit conversion (an outside reference)
    import pint

    ureg = pint.UnitRegistry()
    for key, n in list(NAMES.items()) + list(INPUT_NAMES.items()):
        assert n.label and n.description, key
        if "dB" in n.unit or "°" in n.unit:
            assert (n.unit, n.scale) == (n.si_unit, 1.0), key
            continue
        factor = ureg.Quantity(1.0, _pint_unit(n.si_unit)).to(_pint_unit(n.unit)).magnitude
        assert n.scale == pytest.approx(factor, rel=1e-12, abs=0), key


def test_four_resonances_are_told_apart():
    labels = {lookup(k).label for k in ("mechanics.natural_frequencies_hz_1",
                                        "coupled.resonance_at_bias_hz", "response.resonance_hz",
                                        "response.peak_frequency_hz")}
    assert labels == {"natural frequency in vacuum (mode 1, no bias)",
                      "resonance at bias (vacuum)", "resonance in air (lumped model)",
                      "peak of the response"}


def test_response_csv_header_comes_from_the_names_table():
    from diagap.report.csv import CSV_COLUMNS

    assert CSV_COLUMNS == ("frequency_hz", "magnitude_db_v_per_pa", "phase_deg",
                           "magnitude_v_per_pa")
    assert all(lookup(f"response_csv.{c}") for c in CSV_COLUMNS)


# ---- the console table and the audit -----------------------------------------------------------

_NUMBER = re.compile(r"(?<![\w.])[-+]?(\d+\.?\d*)(?:e[-+]?\d+)?")


def _significant_digits(mantissa: str) -> int:
    return len(mantissa.replace(".", "").lstrip("0"))


def test_console_table_has_no_long_raw_floats(summary):
    text = summary_table(summary)
    for line in text.splitlines():
        if line.startswith("diagap results:"):
            continue
        for m in _NUMBER.finditer(line):
            assert _significant_digits(m.group(1)) <= 6, line


def test_audit_rows_print_one_kind_of_deviation_each(summary):
    text = summary_table(summary)
    audit = text[text.index("[audit"):].splitlines()[2:]
    rows = summary["audit"]
    assert len(audit) == len(rows) >= 10
    for line, row in zip(audit, rows):
        assert row["assumption"] in line
        assert row["deviation_kind"] in line
        unit = row["deviation_unit"]
        assert row["deviation_kind"].endswith(f", {unit}" if unit else " (ratio)")
        assert (row["verdict"].upper() if row["verdict"] == "fails" else row["verdict"]) in line
        shown = 100 * row["deviation"] if unit == "%" else row["deviation"]
        expected = f"{shown:+.3g} %" if unit == "%" else \
            f"{shown:+.3g} dB" if unit == "dB" else f"{shown:.3g}"
        assert expected in line, (expected, line)
        # the raw float of summary.json is not printed
        assert repr(row["deviation"]) not in line
        # the summary keeps its keys, with the new ones beside them
        assert {"assumption", "simple", "fe", "deviation", "verdict", "threshold",
                "deviation_kind", "deviation_unit"} <= set(row)


def test_pull_in_row_is_a_ratio_against_its_threshold(summary):
    row = next(r for r in summary["audit"] if r["assumption"] == "pull-in margin")
    cp, e = summary["coupled"], summary["design"]["electrical"]
    assert row["deviation"] == pytest.approx(e["bias_voltage_v"] / cp["pull_in_voltage_v"],
                                             rel=1e-12, abs=0)
    assert row["deviation_unit"] == "" and "ratio" in row["deviation_kind"]
    line = next(x for x in summary_table(summary).splitlines() if "pull-in margin" in x)
    assert f"{row['deviation']:.3g}" in line and "0.6 / 0.8" in line


def test_absent_overload_point_has_a_reason(summary):
    resp = summary["response"]
    if resp.get("aop_10pct_spl_db") is not None:
        pytest.skip("the demo reaches 10 % THD at this accuracy")
    text = summary_table(summary)
    i = text.index("10 % THD (acoustic overload) at")
    assert "not reached up to" in text[i:i + 400]


@pytest.mark.parametrize("q, verdict", [(0.5, "holds"), (1.2, "holds"), (1.8, "marginal"),
                                        (22.0, "fails")])
def test_high_q_is_flagged(q, verdict):
    # resonant peak of a second-order system M_r = 1 / (2 zeta sqrt(1 - zeta^2)), zeta = 1/(2Q),
    # for zeta < 1/sqrt(2) (Ogata, Modern Control Engineering, 5th ed. 2010, sec. 7-2 [from memory])
    zeta = 1.0 / (2.0 * q)
    expected = 20 * math.log10(1 / (2 * zeta * math.sqrt(1 - zeta**2))) \
        if zeta < 1 / math.sqrt(2) else 0.0
    assert resonance_peak_db(q) == pytest.approx(expected, rel=1e-12, abs=1e-12)
    rows = audit_design(demo_design(), {"response": {"quality_factor": q}}).rows
    (row,) = [r for r in rows if r.assumption == "well-damped resonance"]
    assert row.verdict == verdict and row.unit == "dB"
    if q == 22.0:
        assert row.deviation == pytest.approx(26.85, rel=1e-3, abs=0)  # the "+25 dB" case


# ---- the caution line, --no-report -------------------------------------------------------------

def test_run_ends_with_the_caution_line(cached_run, tmp_path, capsys):
    assert main(["run", "-o", str(tmp_path / "out"), "--no-report"]) == 0
    out = capsys.readouterr().out.rstrip().splitlines()
    assert out[-1] == CAUTION_LINE
    assert "hazardous" in CAUTION_LINE and "design estimates" in CAUTION_LINE


def test_run_json_keeps_stdout_json_and_cautions_on_stderr(cached_run, tmp_path, capsys):
    assert main(["run", "-o", str(tmp_path / "out"), "--json", "--no-report"]) == 0
    cap = capsys.readouterr()
    json.loads(cap.out)
    assert cap.err.rstrip().splitlines()[-1] == CAUTION_LINE


def test_no_report_writes_summary_and_csv_only(cached_run, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", "-o", str(out), "--no-report"]) == 0
    visible = sorted(p.name for p in out.iterdir() if not p.name.startswith("."))
    assert visible == ["response.csv", "summary.json"]


def _fake_point(design):
    v = design.electrical.bias_voltage_v
    return {"schema_version": "test", "design": {},
            "mechanics": {"center_compliance_m_per_pa": 5e-9, "natural_frequencies_hz": [5e4]},
            "response": {"sensitivity_db_v_per_pa": -50.0 + v / 10.0, "snr_db": 60.0}}


def test_sweep_ends_with_the_caution_line_and_a_one_point_sweep_draws_nothing(
        monkeypatch, tmp_path, capsys):
    import diagap.sweep.run

    monkeypatch.setattr(diagap.sweep.run, "pipeline_point", _fake_point)
    out = tmp_path / "s"
    assert main(["sweep", "--vary", "electrical.bias_voltage=5V", "-o", str(out), "--workers",
                 "1", "--no-progress"]) == 0
    lines = capsys.readouterr().out.rstrip().splitlines()
    assert lines[-1] == CAUTION_LINE
    assert any(x.startswith("plots: none (1 finished point") for x in lines)
    assert not (out / "plots").exists()


def test_sweep_plots_only_what_changes(tmp_path):
    from diagap.sweep.run import run_sweep

    res = run_sweep(demo_design(), ["electrical.bias_voltage=5V,10V,15V"], tmp_path / "s",
                    workers=1, evaluate=_fake_point)
    names = sorted(p.name for p in res.plot_files)
    # compliance, frequency and SNR do not change with the bias here: no plot of them
    assert names == ["response.sensitivity_db_v_per_pa--electrical.bias_voltage.png"]
    assert _png_dpi(res.plot_files[0].read_bytes()) >= 150


def test_sweep_plot_labels_come_from_the_names_table():
    from diagap.sweep.plots import _labels
    from diagap.sweep.spec import parse_vary

    var = parse_vary("backplate.hole_radius=2um:4um:3")
    (xf, xlabel), (yf, ylabel), title = _labels(var, "mechanics.natural_frequencies_hz_1", [])
    assert (xf, xlabel) == (1e6, "hole radius (µm)")
    assert (yf, ylabel) == (1e-3, "natural frequency in vacuum (mode 1, no bias) (kHz)")
    assert "_" not in title


# ---- plots and the report ----------------------------------------------------------------------

def _png_dpi(data: bytes) -> float:
    """Resolution from the PNG pHYs chunk (pixels per metre → dots per inch)."""
    i = data.index(b"pHYs")
    ppm_x, ppm_y, unit = struct.unpack(">IIB", data[i + 4:i + 13])
    assert unit == 1  # metre
    return min(ppm_x, ppm_y) * 0.0254


def test_report_figures_drawn_once_at_print_resolution(demo, tmp_path, monkeypatch):
    from matplotlib.figure import Figure

    calls = []
    original = Figure.savefig

    def counting(self, *args, **kw):
        calls.append(kw.get("dpi"))
        return original(self, *args, **kw)

    monkeypatch.setattr(Figure, "savefig", counting)
    monkeypatch.setattr("diagap.report.plots.PARALLEL", False)  # all drawn in this process
    written = write_outputs(demo, tmp_path / "out")
    pngs = [p for p in written if p.suffix == ".png"]
    assert len(pngs) >= 8
    assert len(calls) == len(pngs)  # one rendering per figure: file and page share the bytes
    assert DPI >= 150 and all(c == DPI for c in calls)
    for p in pngs:
        assert _png_dpi(p.read_bytes()) >= 150, p.name
    page = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "from memory" not in page
    assert "from memory" not in (tmp_path / "out" / "summary.json").read_text()


def test_no_text_below_nine_points(demo):
    from matplotlib.text import Text

    from diagap.report.fields import cell_field

    plots = report_plots(demo, cell_field(demo.design))
    assert len(plots) >= 8
    with print_style():
        for plot in plots:
            fig = plot.draw()
            fig.canvas.draw()
            small = [(t.get_text(), t.get_fontsize()) for t in fig.findobj(Text)
                     if t.get_visible() and t.get_text().strip() and t.get_fontsize() < FONT_PT]
            assert not small, (plot.name, small[:3])
            fig.clear()


def test_mode_maps_numbered_consecutively_without_orientation(demo):
    from diagap.report.plots_mech import draw_mode_maps, draw_mode_profiles

    mech = demo.sections["mechanics"]
    fig = draw_mode_maps(mech)
    titles = [ax.get_title() for ax in fig.axes if ax.get_title()]
    numbers = [int(re.match(r"mode (\d+)", t).group(1)) for t in titles]
    assert numbers == list(range(1, len(numbers) + 1)) and len(numbers) >= 3
    distinct = demo.summary()["mechanics"]["distinct_frequencies_hz"]
    for t, f in zip(titles, distinct):
        assert f"{f * 1e-3:.4g} kHz" in t
    legend = draw_mode_profiles(mech).axes[0].get_legend()
    texts = [t.get_text() for t in legend.get_texts()]
    assert texts and not any("°" in t for t in texts)  # a circle: no orientation printed


def test_units_in_captions_match_the_tables(demo):
    from diagap.names import display_text

    plots = {p.name: p for p in report_plots(demo)}
    sq = demo.sections["damping"].objects["squeeze"]
    assert display_text("damping.cutoff_frequency_hz", sq.cutoff_frequency_hz) in \
        plots["squeeze_film"].caption
    assert "µN·s/m" in plots["squeeze_film"].caption
    assert "nm/Pa" in plots["deflection"].caption


# ---- summary.json ------------------------------------------------------------------------------

def test_summary_names_the_size_for_what_it_is(summary):
    d, b = summary["design"]["diaphragm"], summary["design"]["backplate"]
    assert d["radius_m"] == 0.5e-3 and b["electrode_radius_m"] == 0.45e-3
    assert "size_m" not in d and "electrode_size_m" not in b
    square = with_overrides(demo_design(), {
        "diaphragm.shape": "square", "diaphragm.radius": None, "diaphragm.side": "1 mm",
        "backplate.electrode_radius": None, "backplate.electrode_side": "0.9 mm"})
    sd = square.to_dict()
    assert sd["diaphragm"]["side_m"] == pytest.approx(1e-3, rel=1e-12, abs=0)
    assert sd["backplate"]["electrode_side_m"] == pytest.approx(0.9e-3, rel=1e-12, abs=0)
    assert "radius_m" not in sd["diaphragm"]


def test_verify_table_has_units():
    from diagap.verify import Check, checks_table

    text = checks_table([Check("c", "src", 1.0001e-9, 1e-9, 2e-4, 1e-3, 0.1, "nm/Pa", 1e9)])
    head, row = text.splitlines()[:2]
    assert "unit" in head
    assert "nm/Pa" in row and "+0.01 %" in row and "0.02 %" in row and "0.1 %" in row
    assert "1.0001" in row
