"""A run owns its output folder's diagap files; temporary folders do not outlive a run.

A healthy run and then a collapsed run (bias above pull-in, exit 3) go into the same folder: the
files of the healthy run that the collapsed run does not write (response.csv, model.cir, the
response plots) must be gone, a user's own files must stay. SIGTERM during a run must leave no
hidden temporary folder.
"""
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from diagap.cli import EXIT_COLLAPSED, EXIT_OK, main
from diagap.design import demo_text
from diagap.report.outputs import MANIFEST

REPO = Path(__file__).resolve().parents[1]


def _design(folder: Path, bias: str) -> Path:
    text = demo_text().replace('bias_voltage = "10 V"', f'bias_voltage = "{bias}"')
    assert f'bias_voltage = "{bias}"' in text
    path = folder / f"design-{bias.replace(' ', '')}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _files(out: Path) -> set[str]:
    return {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file()}


def _temps(parent: Path) -> list[Path]:
    return [p for p in parent.iterdir() if p.name.startswith(".diagap-")]


def test_rerun_removes_the_earlier_runs_files_and_keeps_the_users(tmp_path, capsys):
    out = tmp_path / "out"
    old_tmp = tmp_path / ".diagap-out-killed"  # left by a run killed hours ago
    old_tmp.mkdir()
    (old_tmp / "summary.json").write_text("{}")
    three_hours_ago = time.time() - 3 * 3600
    os.utime(old_tmp, (three_hours_ago, three_hours_ago))
    young_tmp = tmp_path / ".diagap-out-running"  # another run writing right now
    young_tmp.mkdir()

    healthy = _design(tmp_path, "10 V")
    assert main(["run", str(healthy), "-o", str(out), "--accuracy", "draft"]) == EXIT_OK
    first = _files(out)
    assert {"summary.json", "response.csv", "model.cir", "plots/response.png", MANIFEST} <= first
    assert not old_tmp.exists() and young_tmp.is_dir()
    (out / "notes.txt").write_text("my notes\n")
    (out / "plots" / "my_measurement.png").write_bytes(b"\x89PNG not diagap's")

    collapsed = _design(tmp_path, "40 V")
    assert main(["run", str(collapsed), "-o", str(out), "--accuracy", "draft"]) == EXIT_COLLAPSED
    capsys.readouterr()
    second = _files(out)
    written = set(json.loads((out / MANIFEST).read_text())["files"])
    assert json.loads((out / "summary.json").read_text())["coupled"]["collapsed"] is True
    assert "response.csv" not in second and "model.cir" not in second
    assert "plots/response.png" not in second
    # nothing of the first run survives unless the second run wrote it; the user's files stay
    assert second == written | {MANIFEST, "notes.txt", "plots/my_measurement.png"}
    assert (out / "notes.txt").read_text() == "my notes\n"
    assert first - second >= {"response.csv", "model.cir"}
    assert not _temps(tmp_path) or _temps(tmp_path) == [young_tmp]


def test_folder_of_an_earlier_version_without_manifest(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "plots").mkdir()
    for name in ("response.csv", "model.cir", "plots/thd.png", "plots/noise.svg", "plots/own.png",
                 "notes.txt"):
        (out / name).write_text("earlier")
    collapsed = _design(tmp_path, "40 V")
    assert main(["run", str(collapsed), "-o", str(out), "--accuracy", "draft"]) == EXIT_COLLAPSED
    capsys.readouterr()
    files = _files(out)
    assert not {"response.csv", "model.cir", "plots/thd.png", "plots/noise.svg"} & files
    assert {"plots/own.png", "notes.txt"} <= files


def test_sigterm_during_a_run_leaves_no_temporary_folder(tmp_path):
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "diagap.cli", "run", "-o", str(out),
                             "--accuracy", "draft"], cwd=REPO, stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE)
    t0 = time.monotonic()
    while not _temps(tmp_path):
        assert proc.poll() is None, "the run ended before writing its outputs"
        assert time.monotonic() - t0 < 120, "the run did not start writing"
        time.sleep(0.01)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert _temps(tmp_path) == []
    assert not out.exists()  # stopped while producing: nothing was moved in
