"""Sweep faults: causes of failed points, what a resumed sweep computes again, exit codes when
every point failed, a reused folder, and workers that die with their parent.

Cheap closed-form point functions stand in for the pipeline (module level: picklable for worker
processes).
"""
import csv
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from diagap.cli import main
from diagap.design import DesignError, demo_design
from diagap.sweep.faults import record_cause, sweep_exit_status
from diagap.sweep.run import SweepError, run_sweep

REPO = Path(__file__).resolve().parents[1]
RADII = "backplate.hole_radius=2um,4um,8um,12um"  # 12 um >= half the 20 um pitch: invalid


def healthy(design):
    r = design.backplate.hole_radius_m
    v = design.electrical.bias_voltage_v
    return {"mechanics": {"center_compliance_m_per_pa": 1e-9 * (1 + r * 1e4)},
            "response": {"sensitivity_db_v_per_pa": -40.0 + v / 10.0 + r * 1e5}}


def troubled(design):
    """A full disk at 4 um, memory at 8 um (the environment); 12 um is refused as input."""
    r = design.backplate.hole_radius_m
    if abs(r - 4e-6) < 1e-12:
        raise OSError(28, "No space left on device")
    if abs(r - 8e-6) < 1e-12:
        raise MemoryError()
    return healthy(design)


def killing(design):
    """Ends its worker process (as the out-of-memory killer would) at 4 um."""
    if abs(design.backplate.hole_radius_m - 4e-6) < 1e-12:
        os._exit(9)
    return healthy(design)


def refused(design):
    raise DesignError("backplate.gap = 1e-12 m: must be at least 1e-7 m")


def unwell(design):
    raise OSError(30, "Read-only file system")


class Counting:
    def __init__(self):
        self.calls = []

    def __call__(self, design):
        self.calls.append(design.backplate.hole_radius_m)
        return healthy(design)


def _rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_environment_failures_are_computed_again_on_resume_input_failures_not(tmp_path):
    out = tmp_path / "s"
    res = run_sweep(demo_design(), [RADII], out, workers=1, evaluate=troubled, plots=False)
    assert [r["status"] for r in res.records] == ["ok", "failed", "failed", "failed"]
    assert [record_cause(r) for r in res.records] == [None, "environment", "environment",
                                                      "input"]
    assert [r["cause"] for r in _rows(out / "sweep.csv")] == ["", "environment", "environment",
                                                              "input"]
    again = Counting()
    res = run_sweep(demo_design(), [RADII], out, workers=1, evaluate=again, plots=False)
    assert again.calls == [4e-6, 8e-6] and (res.computed, res.reused) == (2, 2)
    assert [r["status"] for r in res.records] == ["ok", "ok", "ok", "failed"]
    third = Counting()  # nothing left that the environment could have caused
    assert run_sweep(demo_design(), [RADII], out, workers=1, evaluate=third,
                     plots=False).computed == 0 and third.calls == []
    lines = [json.loads(x) for x in (out / "sweep.jsonl").read_text().splitlines()]
    assert len(lines) == 6  # 4 first records, then the 2 recomputed ones; the last one wins


_KILLED_WORKER_SCRIPT = """
import json, sys
sys.path.insert(0, sys.argv[2])
from test_sweep_faults import RADII, Counting, killing
from diagap.design import demo_design
from diagap.sweep.faults import record_cause
from diagap.sweep.run import run_sweep
out = sys.argv[1]
res = run_sweep(demo_design(), [RADII], out, workers=2, evaluate=killing, plots=False,
                progress=False)
first = [[r["status"], record_cause(r), r.get("error") or ""] for r in res.records]
again = Counting()
run_sweep(demo_design(), [RADII], out, workers=1, evaluate=again, plots=False, progress=False)
print(json.dumps({"first": first, "again": again.calls}))
"""


def test_killed_worker_is_an_environment_failure_computed_again(tmp_path):
    # the sweep runs in a child interpreter of its own: a worker that dies abruptly must not be
    # able to take the test session with it
    proc = subprocess.run([sys.executable, "-c", _KILLED_WORKER_SCRIPT, str(tmp_path / "s"),
                           str(Path(__file__).parent)], capture_output=True, text=True,
                          timeout=240)
    assert proc.returncode == 0, proc.stderr[-2000:]
    data = json.loads(proc.stdout.strip().splitlines()[-1])
    assert [r[0] for r in data["first"]] == ["ok", "failed", "ok", "failed"]
    assert data["first"][1][1] == "environment"
    assert "worker process ended unexpectedly" in data["first"][1][2]
    assert data["again"] == [4e-6]


@pytest.mark.parametrize("error, cause", [
    ("BadZipFile: File is not a zip file", "environment"),  # a damaged cache, earlier versions
    ("OSError: [Errno 28] No space left on device", "environment"),
    ("PermissionError: [Errno 13] Permission denied: 'x'", "environment"),
    ("MemoryError", "environment"),
    ("the worker process ended unexpectedly while computing this point", "environment"),
    ("a Dask worker died while computing this point (KilledWorker: x)", "environment"),
    ("DesignError: backplate.hole_radius = 1.2e-05 m: must be less than half", "input"),
    ("ElectrostaticsInputError: gap must be positive", "input"),
    ("RuntimeError: solver did not converge", "error"),
])
def test_causes_of_records_written_before_causes_were_recorded(error, cause):
    record = {"point_id": "0123456789ab", "status": "failed", "error": error}
    assert record_cause(record) == cause
    assert record_cause({**record, "status": "ok"}) is None


def test_exit_status_when_every_point_failed():
    ok = {"status": "ok"}
    bad = {"status": "failed", "cause": "input"}
    env = {"status": "failed", "cause": "environment"}
    err = {"status": "failed", "cause": "error"}
    assert sweep_exit_status([ok, bad, env]) == 0
    assert sweep_exit_status([{"status": "collapsed"}, bad]) == 0
    assert sweep_exit_status([bad, bad]) == 2
    assert sweep_exit_status([bad, env]) == 1
    assert sweep_exit_status([err]) == 1


@pytest.mark.parametrize("evaluate, vary, code, match", [
    (healthy, "backplate.hole_radius=12um,15um", 2, "failed because of their input"),
    (refused, "backplate.hole_radius=2um,4um", 2, "failed because of their input"),
    (unwell, "backplate.hole_radius=2um,4um", 1, "every point of the sweep failed"),
    (troubled, RADII, 0, None),
])
def test_cli_exit_code_when_every_point_failed(tmp_path, capsys, monkeypatch, evaluate, vary,
                                               code, match):
    import diagap.sweep.run as sw

    monkeypatch.setattr(sw, "pipeline_point", evaluate)
    out = tmp_path / "s"
    assert main(["sweep", "--vary", vary, "-o", str(out), "--workers", "1", "--no-progress",
                 "--no-plots"]) == code
    err = capsys.readouterr().err
    if match:
        assert match in err and str(out / "sweep.csv") in err
    else:
        assert "every point" not in err


def _files(out: Path) -> set[str]:
    return {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file()}


def test_folder_of_a_sweep_over_other_keys_is_refused_or_replaced_with_fresh(tmp_path, capsys,
                                                                           monkeypatch):
    import diagap.sweep.run as sw

    out = tmp_path / "s"
    run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um"], out, workers=1,
              evaluate=healthy)
    (out / "notes.txt").write_text("mine\n")
    (out / "plots" / "own.png").write_bytes(b"mine")
    before = {p: (out / p).read_bytes() for p in _files(out)}
    other = "electrical.bias_voltage=5V,10V"
    with pytest.raises(SweepError, match="holds a sweep varying backplate.hole_radius, not "
                                         "electrical.bias_voltage.*--fresh"):
        run_sweep(demo_design(), [other], out, workers=1, evaluate=healthy)
    monkeypatch.setattr(sw, "pipeline_point", healthy)
    assert main(["sweep", "--vary", other, "-o", str(out), "--workers", "1",
                 "--no-progress"]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "--fresh" in err
    assert {p: (out / p).read_bytes() for p in _files(out)} == before  # nothing touched

    res = run_sweep(demo_design(), [other], out, workers=1, evaluate=healthy, fresh=True)
    rows = _rows(out / "sweep.csv")
    assert [r["electrical.bias_voltage_v"] for r in rows] == ["5.0", "10.0"]
    assert "backplate.hole_radius_m" not in rows[0]
    assert len((out / "sweep.jsonl").read_text().splitlines()) == 2
    plots = {f"plots/{p.name}" for p in res.plot_files}
    assert plots and all("electrical.bias_voltage" in p for p in plots)
    points = {f"points/{r['point_id']}.json" for r in res.records}
    assert _files(out) == {"sweep.jsonl", "sweep.csv", "sweep.json", ".sweep.lock", "notes.txt",
                           "plots/own.png"} | plots | points


def test_plots_of_an_earlier_run_that_this_run_does_not_write_are_removed(tmp_path):
    out = tmp_path / "s"
    first = run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um"], out, workers=1,
                      evaluate=healthy)
    assert first.plot_files
    (out / "plots" / "own.png").write_bytes(b"mine")

    def fewer(design):  # one output less
        return {"mechanics": healthy(design)["mechanics"]}

    # another accuracy level: new points, whose records lack the sensitivity
    second = run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um"], out, workers=1,
                       evaluate=fewer, accuracy="fine")
    assert second.computed == 3 and second.plot_files
    assert {p.name for p in first.plot_files} - {p.name for p in second.plot_files}
    names = {p.name for p in (out / "plots").iterdir()}
    assert names == {p.name for p in second.plot_files} | {"own.png"}
    third = run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um"], out, workers=1,
                      evaluate=fewer, accuracy="fine", plots=False)
    assert third.plot_files == () and {p.name for p in (out / "plots").iterdir()} == {"own.png"}


_PARENT = """
import sys, time
sys.path.insert(0, sys.argv[2])
from diagap.design import demo_design
from diagap.sweep.run import run_sweep
from sleeper import sleepy

run_sweep(demo_design(), ["backplate.hole_radius=2um,4um,6um,8um"], sys.argv[1], workers=2,
          evaluate=sleepy, plots=False)
"""

_SLEEPER = """
import os, time
from pathlib import Path

def sleepy(design):
    Path(os.environ["DIAGAP_TEST_PIDS"], str(os.getpid())).touch()
    time.sleep(120)
    return {"mechanics": {"center_compliance_m_per_pa": 1e-9}}
"""


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc (Linux)")
def test_workers_die_with_their_parent_killed_by_sigkill(tmp_path):
    (tmp_path / "sleeper.py").write_text(_SLEEPER)
    pids_dir = tmp_path / "pids"
    pids_dir.mkdir()
    env = {**os.environ, "DIAGAP_TEST_PIDS": str(pids_dir)}
    parent = subprocess.Popen([sys.executable, "-c", _PARENT, str(tmp_path / "s"),
                               str(tmp_path)], cwd=REPO, env=env)
    workers = []
    try:
        t0 = time.monotonic()
        while len(workers) < 2:
            assert parent.poll() is None and time.monotonic() - t0 < 120, "no workers started"
            time.sleep(0.05)
            workers = [int(p.name) for p in pids_dir.iterdir()]
        assert all(_alive(pid) for pid in workers)
        parent.send_signal(signal.SIGKILL)
        parent.wait()
        t0 = time.monotonic()
        while any(_alive(pid) for pid in workers) and time.monotonic() - t0 < 5:
            time.sleep(0.05)
        assert not any(_alive(pid) for pid in workers), "sweep workers outlived their parent"
    finally:
        if parent.poll() is None:
            parent.kill()
        for pid in workers:  # never leave a stray process behind, even when the test fails
            if _alive(pid):
                os.kill(pid, signal.SIGKILL)


def test_temporary_files_of_a_killed_sweep_are_removed(tmp_path):
    out = tmp_path / "s"
    run_sweep(demo_design(), ["backplate.hole_radius=2um,4um"], out, workers=1, evaluate=healthy,
              plots=False)
    left = [out / ".sweep.csv.k1ll3d.tmp", out / "points" / ".0123456789ab.json.k1ll3d.tmp"]
    for p in left:
        p.write_text("partial")
    run_sweep(demo_design(), ["backplate.hole_radius=2um,4um"], out, workers=1, evaluate=healthy,
              plots=False)
    assert not any(p.exists() for p in left)
