"""Sweeps: --vary parsing, the grid, resuming after a kill, failing points, parallel backends.

Most tests inject cheap point functions (closed-form stand-ins for the pipeline, defined below at
module level so worker processes can import them); one integration test runs the real pipeline
at draft accuracy. Expected values come from the definitions themselves (numpy.linspace /
numpy.geomspace spacing, pint unit conversion), not from the code under test.
"""
import csv
import json
import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from diagap.design import demo_design
from diagap.sweep.run import PointOutput, SweepError, run_sweep
from diagap.sweep.plots import key_label
from diagap.sweep.point import flatten_summary
from diagap.sweep.progress import ProgressBar
from diagap.sweep.spec import grid, parse_vary, point_id

REPO = Path(__file__).resolve().parents[1]


# ---- cheap point functions (module level: picklable for worker processes) -------------------

def fake_point(design):
    """A smooth closed-form stand-in for the pipeline summary."""
    r = design.backplate.hole_radius_m
    p = design.backplate.hole_pitch_m
    v = design.electrical.bias_voltage_v
    return {"schema_version": "test", "design": {"ignored": 1.0},
            "mechanics": {"center_compliance_m_per_pa": 1e-9 * (1 + r / p),
                          "natural_frequencies_hz": [1e4 * (1 + r * 1e4), 2.5e4, 4e4, 6e4],
                          "capacitance_curve": [[0.0, 1e-12], [1e-7, 1.1e-12]]},
            "response": {"sensitivity_db_v_per_pa": -40.0 + v / 10.0, "label": "text"},
            "uncertainty": {"mechanics.center_compliance_m_per_pa": 1e-4}}


def crashing_point(design):
    """Ends its worker process (as a crash in native code would) for one hole radius."""
    if abs(design.backplate.hole_radius_m - 4e-6) < 1e-12:
        os._exit(3)
    return fake_point(design)


def raising_point(design):
    if abs(design.backplate.hole_radius_m - 4e-6) < 1e-12:
        raise RuntimeError("solver did not converge\nsecond line")
    return fake_point(design)


def collapsing_point(design):
    collapsed = design.electrical.bias_voltage_v >= 20.0
    return PointOutput(fake_point(design), collapsed=collapsed)


class Counting:
    """Counts calls; raises KeyboardInterrupt on call number ``stop_at`` (a killed run)."""

    def __init__(self, stop_at=None):
        self.calls, self.stop_at = [], stop_at

    def __call__(self, design):
        if self.stop_at is not None and len(self.calls) + 1 == self.stop_at:
            raise KeyboardInterrupt
        self.calls.append(design.backplate.hole_radius_m)
        return fake_point(design)


RADII = "backplate.hole_radius=2um:8um:4"


def _rows(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


def _outputs(res):
    return [(r["point_id"], r["status"], r["outputs"]) for r in res.records]


# ---- parsing ---------------------------------------------------------------------------------

@pytest.mark.parametrize("text, values, spacing", [
    ("backplate.hole_radius=2um:6um:5", np.linspace(2e-6, 6e-6, 5), "linear"),
    ("backplate.hole_radius=2 um:6 um:5", np.linspace(2e-6, 6e-6, 5), "linear"),
    ('backplate.hole_radius="2 um":"6 um":5', np.linspace(2e-6, 6e-6, 5), "linear"),
    ("backplate.hole_radius=2e-6 m:0.006mm:3", [2e-6, 4e-6, 6e-6], "linear"),
    ("backplate.hole_radius=2e-6m,4e-6 m", [2e-6, 4e-6], "list"),
    ("backplate.gap=3um, 0.004 mm ,'5 um'", [3e-6, 4e-6, 5e-6], "list"),
    ("electrical.bias_voltage=10V", [10.0], "list"),
    ("acoustics.vent_resistance=1e10 Pa*s/m^3:1e14 Pa*s/m^3:5:log", np.geomspace(1e10, 1e14, 5),
     "log"),
    ("electrical.bias_resistance=1Gohm:100Gohm:3:LOG", [1e9, 1e10, 1e11], "log"),
    ("acoustics.temperature=20degC:40degC:3", [293.15, 303.15, 313.15], "linear"),
    ("diaphragm.poisson_ratio=0.2,0.3", [0.2, 0.3], "list"),
    ("diaphragm.residual_stress=-1MPa,10 MPa", [-1e6, 1e7], "list"),
])
def test_parse_numeric_forms(text, values, spacing):
    v = parse_vary(text)
    assert v.spacing == spacing and v.numeric
    np.testing.assert_allclose(v.values, values, rtol=1e-11)
    assert all(isinstance(x, float) for x in v.values)


def test_parse_names_and_columns():
    v = parse_vary("backplate.hole_lattice=hex,square")
    assert v.values == ("hex", "square") and not v.numeric and v.column == "backplate.hole_lattice"
    assert parse_vary(RADII).column == "backplate.hole_radius_m"
    assert parse_vary("acoustics.vent_resistance=1e10 Pa*s/m^3").column == \
        "acoustics.vent_resistance_pa_s_per_m3"
    assert parse_vary("diaphragm.poisson_ratio=0.2").column == "diaphragm.poisson_ratio"


@pytest.mark.parametrize("text, match", [
    ("backplate.hole_radius", r"expected PATH=START:STOP:N"),
    ("backplate.hole_radus=2um:6um:5", r"unknown design key 'backplate\.hole_radus'; did you "
                                       r"mean 'backplate\.hole_radius'\?"),
    ("hole_radius=2um", r"unknown design key 'hole_radius'"),
    ("name=a,b", r"unknown design key 'name'"),
    ("backplate.hole_radius=", r"no values after '='"),
    ("backplate.hole_radius=2kg:6um:5", r"'2kg': wrong dimension \[mass\], expected \[length\]"),
    ("backplate.hole_radius=banana", r"'banana': not a quantity; write one number and a unit"),
    ("backplate.hole_radius=2um,,3um", r"empty value"),
    ("backplate.hole_radius=inf m", r"not a quantity"),
    ("backplate.hole_radius=2um:6um", r"a range is START:STOP:N or START:STOP:N:log"),
    ("backplate.hole_radius=2um:6um:3:lin", r"a range is START:STOP:N"),
    ("backplate.hole_radius=2um:6um:x", r"N = 'x' must be a whole number"),
    ("backplate.hole_radius=2um:6um:2.5", r"N = '2.5' must be a whole number"),
    ("backplate.hole_radius=2um:6um:1", r"N = 1 must be in \[2, "),
    ("backplate.hole_radius=2um:2e-6m:3", r"START and STOP are equal"),
    ("diaphragm.residual_stress=0MPa:6MPa:3:log", r"a log range needs START and STOP > 0"),
    ("backplate.hole_radius=2um,2e-6 m", r"value 2e-06 is listed more than once"),
    ("backplate.hole_lattice=hexx",
     r"'hexx' is not one of hex, square, none \(did you mean 'hex'\?\)"),
    ("backplate.hole_lattice=hex:square:2", r"takes names \(hex, square, none\)"),
])
def test_parse_errors(text, match):
    with pytest.raises(SweepError, match=match) as info:
        parse_vary(text)
    assert "\n" not in str(info.value) and str(info.value).startswith("--vary ")


def test_grid_is_the_cartesian_product_last_fastest():
    a, b = parse_vary("backplate.hole_radius=2um,3um"), parse_vary("backplate.gap=3um:5um:3")
    pts = grid([a, b])
    assert len(pts) == 6
    assert [dict(p)["backplate.gap"] for p in pts[:3]] == [3e-6, 4e-6, 5e-6]
    assert [dict(p)["backplate.hole_radius"] for p in pts] == [2e-6] * 3 + [3e-6] * 3
    assert len({point_id(p) for p in pts}) == 6
    with pytest.raises(SweepError, match="varied more than once"):
        grid([a, parse_vary("backplate.hole_radius=5um")])
    with pytest.raises(SweepError, match="at least one --vary"):
        grid([])


def test_point_id_is_stable_under_order_and_rounding_noise():
    p = (("backplate.hole_radius", 2e-6), ("backplate.gap", 4e-6))
    assert point_id(p) == point_id(p[::-1])
    assert point_id((("backplate.hole_radius", 2.0000000000000004e-6),)) == \
        point_id((("backplate.hole_radius", 2e-6),))
    assert point_id((("backplate.hole_radius", 2e-6),)) != \
        point_id((("backplate.hole_radius", 3e-6),))


# ---- flattening, labels, progress ------------------------------------------------------------

def test_flatten_keeps_numeric_scalars_and_short_lists_of_any_section():
    s = fake_point(demo_design())
    s["audit"] = [{"assumption": "rigid piston", "deviation": 0.1}]
    s["coupled"] = {"pull_in_voltage_v": float("inf"), "collapsed": False, "note": None}
    out, unc = flatten_summary(s)
    assert out["mechanics.natural_frequencies_hz_1"] == pytest.approx(1.04e4, rel=1e-6, abs=0)
    assert out["mechanics.natural_frequencies_hz_4"] == 6e4
    assert out["coupled.pull_in_voltage_v"] is None and out["coupled.collapsed"] is False
    assert "coupled.note" in out and out["response.sensitivity_db_v_per_pa"] == -39.0
    assert not any(k.startswith(("design", "schema_version", "uncertainty", "audit")) for k in out)
    assert not any("capacitance_curve" in k or "label" in k for k in out)
    assert unc == {"mechanics.center_compliance_m_per_pa": 1e-4}


@pytest.mark.parametrize("key, name, unit", [
    ("mechanics.center_compliance_m_per_pa", "mechanics: center compliance", "m/Pa"),
    ("mechanics.volume_compliance_m3_per_pa", "mechanics: volume compliance", "m³/Pa"),
    ("mechanics.natural_frequencies_hz_2", "mechanics: natural frequencies (2)", "Hz"),
    ("damping.damping_n_s_per_m", "damping: damping", "N·s/m"),
    ("response.sensitivity_db_v_per_pa", "response: sensitivity", "dB re 1 V/Pa"),
    ("response.noise_dba_spl", "response: noise", "dB(A) SPL"),
    ("response.quality_factor", "response: quality factor", ""),
    ("coupled.pull_in_voltage_v", "coupled: pull in voltage", "V"),
    ("mechanics.effective_area_m2", "mechanics: effective area", "m²"),
])
def test_key_labels_carry_units(key, name, unit):
    assert key_label(key) == (name, unit)


def test_progress_bar_lines_without_terminal(tmp_path):
    import io

    buf = io.StringIO()
    bar = ProgressBar(2, stream=buf)
    bar.update({"point_id": "abc", "status": "ok", "wall_time_s": 1.25})
    bar.update({"point_id": "def", "status": "failed", "error": "bad", "wall_time_s": 0.5})
    bar.close()
    assert buf.getvalue().splitlines() == ["sweep 1/2 point abc ok in 1.2 s",
                                           "sweep 2/2 point def failed in 0.5 s: bad"]


# ---- serial sweeps: records, CSV, failures, resuming -----------------------------------------

def test_serial_sweep_writes_records_csv_and_plots(tmp_path):
    seen = []
    res = run_sweep(demo_design(), [RADII, "electrical.bias_voltage=5V,10V"], tmp_path / "s",
                    workers=1, evaluate=fake_point, accuracy="draft",
                    progress=lambda done, total, rec: seen.append((done, total)))
    assert res.counts() == {"ok": 8, "failed": 0, "collapsed": 0}
    assert (res.computed, res.reused) == (8, 0) and seen[-1] == (8, 8)
    rows = _rows(res.csv_path)
    assert [int(r["point"]) for r in rows] == list(range(8))
    head = list(rows[0])
    assert head[:7] == ["point", "point_id", "status", "backplate.hole_radius_m",
                        "electrical.bias_voltage_v", "analysis.accuracy", "wall_time_s"]
    assert head[-1] == "error" and "uncertainty.mechanics.center_compliance_m_per_pa" in head
    assert {r["analysis.accuracy"] for r in rows} == {"draft"}
    r0 = rows[0]
    assert float(r0["backplate.hole_radius_m"]) == 2e-6
    assert float(r0["mechanics.center_compliance_m_per_pa"]) == pytest.approx(1e-9 * 1.1, rel=1e-6, abs=0)
    summary = json.loads((res.out_dir / "points" / f"{r0['point_id']}.json").read_text())
    assert summary["mechanics"]["capacitance_curve"][1] == [1e-7, 1.1e-12]
    names = {p.name for p in res.plot_files}
    assert "mechanics.center_compliance_m_per_pa--backplate.hole_radius.png" in names
    assert "response.sensitivity_db_v_per_pa--electrical.bias_voltage.png" in names
    assert all(p.stat().st_size > 5000 for p in res.plot_files)


def test_invalid_combination_is_recorded_and_the_others_kept(tmp_path):
    # the demo pitch is 20 um: a hole radius of 12 um (>= half the pitch) cannot be built
    res = run_sweep(demo_design(), ["backplate.hole_radius=4um,12um,6um"], tmp_path / "s",
                    workers=1, evaluate=fake_point)
    status = [r["status"] for r in res.records]
    assert status == ["ok", "failed", "ok"]
    bad = res.records[1]
    assert bad["error"].startswith("DesignError: backplate.hole_radius = 1.2e-05 m: must be less "
                                   "than half the hole_pitch")
    rows = _rows(res.csv_path)
    assert rows[1]["status"] == "failed" and rows[1]["mechanics.center_compliance_m_per_pa"] == ""
    assert float(rows[2]["mechanics.center_compliance_m_per_pa"]) == pytest.approx(1.3e-9, rel=1e-6, abs=0)
    assert "hole_pitch" in rows[1]["error"]


def test_combinations_are_validated_as_a_whole(tmp_path):
    # 12 um holes are valid only together with the 30 um pitch
    res = run_sweep(demo_design(), ["backplate.hole_radius=12um", "backplate.hole_pitch=20um,30um"],
                    tmp_path / "s", workers=1, evaluate=fake_point, plots=False)
    assert [r["status"] for r in res.records] == ["failed", "ok"]


def test_point_exception_and_collapse_statuses(tmp_path):
    res = run_sweep(demo_design(), [RADII], tmp_path / "a", workers=1, evaluate=raising_point,
                    plots=False)
    assert [r["status"] for r in res.records] == ["ok", "failed", "ok", "ok"]
    assert res.records[1]["error"] == "RuntimeError: solver did not converge"
    log = [json.loads(x) for x in res.jsonl_path.read_text().splitlines()]
    assert "raising_point" in next(r for r in log if r["status"] == "failed")["traceback"]
    res = run_sweep(demo_design(), ["electrical.bias_voltage=10V,20V,30V"], tmp_path / "b", workers=1,
                    evaluate=collapsing_point)
    assert [r["status"] for r in res.records] == ["ok", "collapsed", "collapsed"]
    assert res.values("response.sensitivity_db_v_per_pa") == [-39.0, -38.0, -37.0]


def test_interrupted_run_resumes_with_only_the_missing_points(tmp_path):
    out = tmp_path / "s"
    with pytest.raises(KeyboardInterrupt):
        run_sweep(demo_design(), [RADII], out, workers=1, evaluate=Counting(stop_at=3),
                  plots=False)
    assert len(out.joinpath("sweep.jsonl").read_text().splitlines()) == 2
    assert len(_rows(out / "sweep.csv")) == 2
    again = Counting()
    res = run_sweep(demo_design(), [RADII], out, workers=1, evaluate=again, plots=False)
    assert again.calls == [6e-6, 8e-6]
    assert (res.computed, res.reused) == (2, 2) and res.counts()["ok"] == 4
    fresh = run_sweep(demo_design(), [RADII], tmp_path / "ref", workers=1, evaluate=fake_point,
                      plots=False)
    assert _outputs(res) == _outputs(fresh)
    # a third run has nothing to do; extending the sweep computes only the new value
    third = Counting()
    assert run_sweep(demo_design(), [RADII], out, workers=1, evaluate=third,
                     plots=False).computed == 0
    res = run_sweep(demo_design(), [RADII], out, workers=1, evaluate=third, accuracy="draft",
                    plots=False)
    assert res.computed == 4  # another accuracy level: other points
    res = run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um,8um,9um"], out, workers=1,
                    evaluate=third, plots=False)
    assert third.calls[-1] == 9e-6 and res.computed == 1 and res.reused == 4
    assert len(_rows(out / "sweep.csv")) == 5


_KILLED_SCRIPT = """
import sys, time
from diagap.design import demo_design
from diagap.sweep.run import run_sweep

def slow(design):
    time.sleep(0.25)
    return {"mechanics": {"center_compliance_m_per_pa": design.backplate.hole_radius_m * 1e-4}}

run_sweep(demo_design(), ["backplate.hole_radius=1um:9um:9"], sys.argv[1], workers=1,
          evaluate=slow, plots=False)
"""


def test_killed_process_leaves_a_resumable_folder(tmp_path):
    out = tmp_path / "s"
    log = out / "sweep.jsonl"
    proc = subprocess.Popen([sys.executable, "-c", _KILLED_SCRIPT, str(out)], cwd=REPO,
                            env={**os.environ, "PYTHONPATH": str(REPO)})
    t0 = time.monotonic()
    while not (log.exists() and len(log.read_bytes().splitlines()) >= 3):
        assert proc.poll() is None and time.monotonic() - t0 < 60, "sweep did not start"
        time.sleep(0.05)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    done = len(log.read_bytes().splitlines())
    assert 3 <= done < 9
    with open(log, "ab") as fh:  # a write torn by the kill
        fh.write(b'{"point_id": "0123456789ab", "status": "o')
    again = Counting()
    res = run_sweep(demo_design(), ["backplate.hole_radius=1um:9um:9"], out, workers=1,
                    evaluate=again, plots=False)
    assert len(again.calls) == 9 - done and res.reused == done
    assert [r["status"] for r in res.records] == ["ok"] * 9
    lines = log.read_bytes().splitlines()
    assert len(lines) == 9 and all(json.loads(x)["status"] == "ok" for x in lines)


def test_retry_failed_computes_failed_points_again(tmp_path):
    out = tmp_path / "s"
    run_sweep(demo_design(), [RADII], out, workers=1, evaluate=raising_point, plots=False)
    assert run_sweep(demo_design(), [RADII], out, workers=1, evaluate=fake_point,
                     plots=False).computed == 0
    res = run_sweep(demo_design(), [RADII], out, workers=1, evaluate=fake_point, retry_failed=True,
                    plots=False)
    assert res.computed == 1 and res.counts()["ok"] == 4
    rows = _rows(out / "sweep.csv")
    assert [r["status"] for r in rows] == ["ok"] * 4 and len(rows) == 4


def test_columns_grow_when_a_later_point_brings_new_keys(tmp_path):
    def varying(design):
        s = {"mechanics": {"center_compliance_m_per_pa": design.backplate.hole_radius_m}}
        if design.backplate.hole_radius_m > 5e-6:
            s["damping"] = {"damping_n_s_per_m": 1e-4}
        return s

    res = run_sweep(demo_design(), [RADII], tmp_path / "s", workers=1, evaluate=varying,
                    plots=False)
    rows = _rows(res.csv_path)
    assert [r["damping.damping_n_s_per_m"] for r in rows] == ["", "", "0.0001", "0.0001"]
    assert list(rows[0])[-1] == "error"


def test_bad_inputs_write_no_files(tmp_path):
    out = tmp_path / "s"
    with pytest.raises(SweepError, match="unknown design key"):
        run_sweep(demo_design(), ["backplate.hole_radus=2um"], out, evaluate=fake_point)
    with pytest.raises(SweepError, match="--workers 0"):
        run_sweep(demo_design(), [RADII], out, workers=0, evaluate=fake_point)
    with pytest.raises(SweepError, match="cannot be sent to worker processes"):
        run_sweep(demo_design(), [RADII], out, workers=2, evaluate=lambda d: {})
    with pytest.raises(ValueError, match="analysis.accuracy = 'rough'"):
        run_sweep(demo_design(), [RADII], out, accuracy="rough", evaluate=fake_point)
    assert not out.exists()


def test_folder_of_another_design_is_refused(tmp_path):
    from diagap.design import with_override

    out = tmp_path / "s"
    run_sweep(demo_design(), [RADII], out, workers=1, evaluate=fake_point, plots=False)
    other = with_override(demo_design(), "backplate.gap", "5 um")
    before = sorted(p.name for p in out.iterdir())
    with pytest.raises(SweepError, match="holds a sweep of a different base design"):
        run_sweep(other, [RADII], out, workers=1, evaluate=fake_point)
    assert sorted(p.name for p in out.iterdir()) == before


# ---- command line ----------------------------------------------------------------------------

def _cli(argv):
    """``diagap`` with the sweep subcommand (through diagap.cli once it registers ``sweep``)."""
    from diagap import cli
    from diagap.sweep.cli import add_parser, cmd_sweep

    if "sweep" in getattr(cli, "_COMMANDS", {}):
        return cli.main(argv)
    parser = cli._Parser(prog="diagap")
    add_parser(parser.add_subparsers(dest="command", parser_class=cli._Parser), cli._add_common)
    return cmd_sweep(parser.parse_args(argv))


def _exit_code(argv):
    try:
        return _cli(argv)
    except SystemExit as exc:  # argparse usage errors
        return exc.code


@pytest.mark.parametrize("argv, match", [
    (["sweep", "--vary", "backplate.hole_radus=2um"], "unknown design key"),
    (["sweep", "--vary", "backplate.hole_radius=2um:3um"], "a range is START:STOP:N"),
    (["sweep", "missing.toml", "--vary", "backplate.hole_radius=2um"], "design file not found"),
    (["sweep", "--vary", RADII, "--scheduler", " "], "--scheduler ' ': expected an address"),
    (["sweep"], "--vary"),
    (["sweep", "--vary", RADII, "--workers", "0"], "must be >= 1"),
])
def test_cli_bad_input_exits_2_with_one_line_and_no_files(tmp_path, capsys, argv, match):
    out = tmp_path / "s"
    code = _exit_code([*argv, "-o", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and match in err and len(err.strip().splitlines()) == 1, err
    assert not out.exists()


def test_cli_runs_a_sweep(tmp_path, capsys, monkeypatch):
    import diagap.sweep.run as sw

    monkeypatch.setattr(sw, "pipeline_point", fake_point)  # the CLI's points use the pipeline
    out = tmp_path / "s"
    assert _exit_code(["sweep", "--vary", RADII, "-o", str(out), "--workers", "1",
                       "--no-progress", "--no-plots"]) == 0
    text = capsys.readouterr().out
    assert "4 points (4 computed, 0 already finished): 4 ok, 0 failed, 0 collapsed" in text
    assert len(_rows(out / "sweep.csv")) == 4 and not (out / "plots").exists()


def test_cli_help_documents_the_syntax(capsys):
    with pytest.raises(SystemExit):
        _cli(["sweep", "--help"])
    text = capsys.readouterr().out
    assert "PATH=START:STOP:N:log" in text and "--scheduler" in text and "--workers" in text


# ---- parallel backends -----------------------------------------------------------------------

def test_local_pool_matches_serial(tmp_path):
    serial = run_sweep(demo_design(), [RADII, "electrical.bias_voltage=5V,10V"], tmp_path / "a",
                       workers=1, evaluate=fake_point, plots=False)
    pooled = run_sweep(demo_design(), [RADII, "electrical.bias_voltage=5V,10V"], tmp_path / "b",
                       workers=2, evaluate=fake_point, plots=False)
    assert _outputs(pooled) == _outputs(serial)
    assert len({r["pid"] for r in map(json.loads, pooled.jsonl_path.read_text().splitlines())}) == 2
    assert [r["point"] for r in _rows(pooled.csv_path)] == [str(i) for i in range(8)]


def test_dead_worker_process_fails_only_its_point(tmp_path):
    res = run_sweep(demo_design(), [RADII], tmp_path / "s", workers=2, evaluate=crashing_point,
                    plots=False)
    assert [r["status"] for r in res.records] == ["ok", "failed", "ok", "ok"]
    assert "worker process ended unexpectedly" in res.records[1]["error"]


def test_dask_local_cluster_matches_serial(tmp_path):
    distributed = pytest.importorskip("distributed")
    serial = run_sweep(demo_design(), [RADII, "backplate.hole_lattice=hex,square"], tmp_path / "a",
                       workers=1, evaluate=fake_point, plots=False)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  protocol="tcp", host="127.0.0.1",
                                  dashboard_address="127.0.0.1:0") as cluster:
        res = run_sweep(demo_design(), [RADII, "backplate.hole_lattice=hex,square"],
                        tmp_path / "b", scheduler=cluster.scheduler_address, evaluate=fake_point,
                        plots=False)
    assert _outputs(res) == _outputs(serial)
    assert [r["point_id"] for r in _rows(res.csv_path)] == [r["point_id"] for r in serial.records]


def test_unreachable_scheduler_is_one_line():
    pytest.importorskip("distributed")
    from diagap.sweep.exec import connect

    with pytest.raises(SweepError, match="cannot connect") as info:
        connect("tcp://127.0.0.1:9", timeout_s=0.5)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize("address", ["nonsense", "tcp://host-without-port"])
def test_malformed_scheduler_address_is_one_line_at_once(address, monkeypatch):
    """A malformed address is refused before a Dask client exists (a client failing inside
    its constructor hangs for its 30 s close timeout and prints a traceback at exit)."""
    distributed = pytest.importorskip("distributed")
    from diagap.sweep.exec import connect

    class NoClient:
        def __init__(self, *args, **kwargs):
            raise AssertionError("a Client was made for a malformed address")

    monkeypatch.setattr(distributed, "Client", NoClient)
    with pytest.raises(SweepError, match="not an address .*missing port.*tcp://") as info:
        connect(address, timeout_s=0.5)
    assert "\n" not in str(info.value)


# ---- the real pipeline -----------------------------------------------------------------------

@pytest.mark.slow
def test_real_pipeline_two_points_at_draft(tmp_path):
    pytest.importorskip("diagap.fem.plate.solver", reason="the diaphragm solver is not available")
    res = run_sweep(demo_design(), ["diaphragm.residual_stress=5MPa,20MPa"], tmp_path / "s",
                    workers=1, accuracy="draft", plots=True)
    assert [r["status"] for r in res.records] == ["ok", "ok"], [r["error"] for r in res.records]
    low, high = res.values("mechanics.center_compliance_m_per_pa")
    assert 0 < high < low  # more tension, stiffer diaphragm
    f_low, f_high = res.values("mechanics.natural_frequencies_hz_1")
    assert f_high > f_low > 0
    unc = res.records[0]["uncertainty"]
    assert unc and all(math.isfinite(x) and x >= 0 for x in unc.values())
    assert any(p.name.startswith("mechanics.center_compliance") for p in res.plot_files)
