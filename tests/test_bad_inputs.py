"""Bad input of every kind is refused before any work: exit code 2, one line on stderr naming the
field (or option, or file), no traceback, no output folder, within seconds.

Most cases run in-process through ``diagap.cli.main`` (fast); a few run as real processes, and a
refused oversize design is checked for its peak memory (it must be refused from the estimate,
before any mesh exists).
"""
import os
import re
import resource
import subprocess
import sys
import time

import pytest

from diagap.cli import main
from diagap.design import MAX_FILE_BYTES, demo_text

WALL_LIMIT_S = 5.0
DEMO = demo_text()


def _design(**changes) -> str:
    """The demo design's text with ``section__key=value`` replaced (value None: key removed;
    value a raw TOML text if it starts with '='; a whole section removed with section=None)."""
    text = DEMO
    for path, value in changes.items():
        if "__" not in path:  # drop a section
            start = text.index(f"[{path}]")
            end = text.find("\n[", start + 1)
            text = text[:start] + (text[end + 1:] if end >= 0 else "")
            continue
        section, key = path.split("__")
        lines, out, current, done = text.splitlines(), [], None, False
        for line in lines:
            if line.startswith("["):
                if current == section and not done and value is not None:
                    out.append(_line(key, value))
                    done = True
                current = line.strip("[]")
            if current == section and re.match(rf"{key}\s*=", line):
                if value is not None:
                    out.append(_line(key, value))
                done = True
                continue
            out.append(line)
        if not done and value is not None:
            out.append(_line(key, value))
        text = "\n".join(out) + "\n"
    return text


def _line(key, value) -> str:
    if isinstance(value, str) and value.startswith("="):
        return f"{key} {value}"
    return f'{key} = "{value}"'


HUGE_NUMBER = "1" * 100_000 + " m"

# (id, design changes or None for the demo, extra CLI arguments, text the message must name)
DESIGN_CASES = [
    # quoted in the bug report: misread numbers
    ("decimal comma gap", dict(backplate__gap="4,5 um"), [], "backplate.gap"),
    ("decimal comma bias", dict(electrical__bias_voltage="10,5 V"), [],
     "electrical.bias_voltage"),
    ("space inside number", dict(backplate__gap="1 2 um"), [], "backplate.gap"),
    ("decimal comma radius", dict(diaphragm__radius="0,5 mm"), [], "diaphragm.radius"),
    # unbounded work
    ("power tower", dict(diaphragm__radius="10**10**10 m"), [], "diaphragm.radius"),
    ("100k-digit number", dict(diaphragm__radius=HUGE_NUMBER), [], "diaphragm.radius"),
    ("1 nm thickness", dict(diaphragm__thickness="1 nm"), [], "diaphragm.thickness"),
    ("1 m radius", dict(diaphragm__radius="1 m"), [], "diaphragm.radius"),
    ("1 nm gap", dict(backplate__gap="1 nm"), [], "backplate.gap"),
    ("10 nm thickness over memory limit", dict(diaphragm__thickness="10 nm"), [],
     "diaphragm.thickness"),
    ("20 nm thickness, small limit", dict(diaphragm__thickness="20 nm"),
     ["--max-memory", "500 MB"], "diaphragm.thickness"),
    ("design-file memory limit", dict(diaphragm__thickness="20 nm", analysis__max_memory="500 MB"),
     [], "diaphragm.thickness"),
    # parser errors that used to be internal errors
    ("unbalanced parenthesis", dict(backplate__gap="0.5 mm)"), [], "backplate.gap"),
    ("nested parentheses", dict(backplate__gap="4 ((um))"), [], "backplate.gap"),
    ("1e300 m", dict(diaphragm__radius="1e300 m"), [], "diaphragm.radius"),
    ("overflowing exponent", dict(diaphragm__density="1e400 kg/m^3"), [], "diaphragm.density"),
    # absurd but parseable physics
    ("density 1e-30", dict(diaphragm__density="1e-30 kg/m^3"), [], "diaphragm.density"),
    ("back volume 1e-30", dict(acoustics__back_volume="1e-30 m^3"), [], "acoustics.back_volume"),
    ("0.3 nm holes", dict(backplate__hole_radius="0.3 nm"), [], "backplate.hole_radius"),
    ("holes below Knudsen limit", dict(backplate__hole_radius="0.12 um",
                                       backplate__hole_pitch="1 um"), [],
     "backplate.hole_radius"),
    # every other range
    ("arithmetic", dict(backplate__gap="2 um + 2 um"), [], "backplate.gap"),
    ("multiplied numbers", dict(backplate__gap="2*2 um"), [], "backplate.gap"),
    ("overlong text", dict(backplate__gap="4" + " " * 70 + "um"), [], "backplate.gap"),
    ("nan", dict(diaphragm__radius="nan m"), [], "diaphragm.radius"),
    ("TOML inf", dict(diaphragm__radius="= inf"), [], "diaphragm.radius"),
    ("unknown unit", dict(backplate__gap="4 uum"), [], "backplate.gap"),
    ("wrong dimension", dict(backplate__gap="4 um*m"), [], "backplate.gap"),
    ("double sign", dict(electrical__bias_voltage="--10 V"), [], "electrical.bias_voltage"),
    ("exponent without digits", dict(backplate__gap="4e um"), [], "backplate.gap"),
    ("text without unit", dict(backplate__gap="4"), [], "backplate.gap"),
    ("Young's modulus 1 Pa", dict(diaphragm__youngs_modulus="1 Pa"), [],
     "diaphragm.youngs_modulus"),
    ("Poisson ratio with a unit", dict(diaphragm__poisson_ratio="0.3 m"), [],
     "diaphragm.poisson_ratio"),
    ("residual stress 1 TPa", dict(diaphragm__residual_stress="1 TPa"), [],
     "diaphragm.residual_stress"),
    ("thick plate", dict(diaphragm__thickness="0.1 mm"), [], "diaphragm.thickness"),
    ("backplate 1 km thick", dict(backplate__thickness="1 km"), [], "backplate.thickness"),
    ("electrode 0.1 nm", dict(backplate__electrode_radius="0.1 nm"), [],
     "backplate.electrode_radius"),
    ("pitch 1 nm", dict(backplate__hole_pitch="1 nm"), [], "backplate.hole_pitch"),
    ("vent 1 Pa s/m3", dict(acoustics__vent_resistance="1 Pa*s/m^3"), [],
     "acoustics.vent_resistance"),
    ("back volume 1 m3", dict(acoustics__back_volume="1 m^3"), [], "acoustics.back_volume"),
    ("temperature below 0 K", dict(acoustics__temperature="-300 degC"), [],
     "acoustics.temperature"),
    ("pressure 1 GPa", dict(acoustics__static_pressure="1 GPa"), [], "acoustics.static_pressure"),
    ("bias 5 kV", dict(electrical__bias_voltage="5 kV"), [], "electrical.bias_voltage"),
    ("bias resistance 1 ohm", dict(electrical__bias_resistance="1 ohm"), [],
     "electrical.bias_resistance"),
    ("parasitic 1 F", dict(electrical__parasitic_capacitance="1 F"), [],
     "electrical.parasitic_capacitance"),
    ("negative preamp capacitance", dict(electrical__preamp_input_capacitance="-1 pF"), [],
     "electrical.preamp_input_capacitance"),
    ("memory limit 1 kB", dict(analysis__max_memory="1 kB"), [], "analysis.max_memory"),
    ("incomplete [acoustics]", dict(acoustics__back_volume=None), [], "acoustics.back_volume"),
    ("incomplete [electrical]", dict(electrical__bias_voltage=None), [],
     "electrical.bias_voltage"),
    # command-line options of run
    ("--max-memory bare number", None, ["--max-memory", "4"], "--max-memory"),
    ("--max-memory decimal comma", None, ["--max-memory", "4,5 GB"], "--max-memory"),
    ("--max-memory wrong unit", None, ["--max-memory", "4 kg"], "--max-memory"),
    ("--accuracy unknown", None, ["--accuracy", "ultra"], "--accuracy"),
]

HOLES = ["holes", "--gap", "4 um", "--radius", "4 um", "--pitch", "20 um", "--thickness", "2 um"]


def _holes(option, value):
    args = list(HOLES)
    args[args.index(option) + 1] = value
    return args


OPTION_CASES = [
    ("holes bare gap", _holes("--gap", "4"), "--gap"),
    ("holes decimal comma", _holes("--gap", "4,5 um"), "--gap"),
    ("holes 0.3 nm radius", _holes("--radius", "0.3 nm"), "--radius"),
    ("holes space in number", _holes("--pitch", "1 2 um"), "--pitch"),
    ("holes power tower", _holes("--thickness", "10**10**10 m"), "--thickness"),
    ("holes 1e300 m", _holes("--gap", "1e300 m"), "--gap"),
    ("holes unbalanced parenthesis", _holes("--radius", "(4 um"), "--radius"),
    ("holes bare radius", _holes("--radius", "4e-6"), "--radius"),
    ("sweep space in number", ["sweep", "--vary", "backplate.gap=1 2 um"], "backplate.gap"),
    ("sweep power tower", ["sweep", "--vary", "backplate.gap=10**10**10 m"], "backplate.gap"),
    ("sweep bias out of range", ["sweep", "--vary", "electrical.bias_voltage=10 V:2000 V:3"],
     "electrical.bias_voltage"),
    ("sweep 1e300", ["sweep", "--vary", "backplate.gap=1e300 m"], "backplate.gap"),
    ("sweep density 1e-30", ["sweep", "--vary", "diaphragm.density=1e-30 kg/m^3"],
     "diaphragm.density"),
    ("sweep bare number", ["sweep", "--vary", "backplate.gap=4e-6"], "backplate.gap"),
    ("sweep decimal comma", ["sweep", "--vary", "backplate.gap=4,5 um"], "backplate.gap"),
    ("sweep --max-memory bare", ["sweep", "--vary", "backplate.gap=4um", "--max-memory", "8"],
     "--max-memory"),
]


@pytest.fixture(scope="module", autouse=True)
def _warm():
    """Load the unit registry and the solver modules once: a one-time cost of the process, not
    of refusing an input (the real-process cases below include it)."""
    from diagap.budget import estimate_run
    from diagap.design import demo_design
    from diagap.quantities import unit_registry

    unit_registry()
    estimate_run(demo_design())


def _run_main(args, capsys):
    t0 = time.perf_counter()
    try:
        code = main(args)
    except SystemExit as exc:  # argparse usage errors
        code = exc.code
    wall = time.perf_counter() - t0
    captured = capsys.readouterr()
    return code, captured.err, wall


def _assert_refused(code, err, wall, field, out):
    lines = err.strip().splitlines()
    assert code == 2, err
    assert len(lines) == 1 and "Traceback" not in err, err
    assert lines[0].startswith("diagap: error: ")
    assert field in lines[0], lines[0]
    assert not out.exists()
    assert wall < WALL_LIMIT_S, f"took {wall:.2f} s"


@pytest.mark.parametrize("name, changes, extra, field", DESIGN_CASES,
                         ids=[c[0] for c in DESIGN_CASES])
def test_bad_design_is_refused(tmp_path, capsys, name, changes, extra, field):
    path = tmp_path / "d.toml"
    path.write_text(_design(**changes) if changes else DEMO)
    out = tmp_path / "out"
    code, err, wall = _run_main(["run", str(path), "-o", str(out)] + extra, capsys)
    _assert_refused(code, err, wall, field, out)


@pytest.mark.parametrize("name, args, field", OPTION_CASES, ids=[c[0] for c in OPTION_CASES])
def test_bad_option_is_refused(tmp_path, capsys, name, args, field):
    out = tmp_path / "out"
    if args[0] == "sweep":
        args = args + ["-o", str(out)]
    code, err, wall = _run_main(args, capsys)
    _assert_refused(code, err, wall, field, out)


def test_file_cases(tmp_path, capsys):
    """Design files that are not designs, and output paths that cannot be folders."""
    big = tmp_path / "big.toml"
    big.write_text(DEMO + "#" * (MAX_FILE_BYTES + 10))
    binary = tmp_path / "bin.toml"
    binary.write_bytes(b"\xff\xfe\x00garbage")
    a_file = tmp_path / "a-file"
    a_file.write_text("x")
    out = tmp_path / "out"
    cases = [
        (["run", "/dev/zero", "-o", str(out)], "/dev/zero"),
        (["run", str(big), "-o", str(out)], "big.toml"),
        (["run", str(binary), "-o", str(out)], "bin.toml"),
        (["run", str(tmp_path / "missing.toml"), "-o", str(out)], "missing.toml"),
        (["run", str(tmp_path), "-o", str(out)], str(tmp_path)),
        (["run", "-o", "/proc/x"], "/proc/x"),
        (["run", "-o", str(a_file / "x")], "a-file"),
        (["sweep", "--vary", "backplate.gap=4um", "-o", "/proc/x"], "/proc/x"),
        (["init", str(tmp_path / "no-such-folder" / "x.toml")], "no-such-folder"),
    ]
    for args, field in cases:
        code, err, wall = _run_main(args, capsys)
        _assert_refused(code, err, wall, field, out)
    assert not (tmp_path / "no-such-folder").exists()
    assert not os.path.exists("/proc/x")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a-file", "big.toml", "bin.toml"]


def test_full_disk_while_writing_is_an_input_error(tmp_path, capsys, monkeypatch):
    """An OSError on the output folder (full or read-only disk) gives exit 2 naming the path."""
    import errno

    import diagap.pipeline
    import diagap.sweep.run
    import diagap.writer

    out = tmp_path / "out"

    class _Result:
        collapsed = False

        def summary(self):
            return {}

    def full_disk(*args, **kw):
        raise OSError(errno.ENOSPC, "No space left on device", str(out / "summary.json"))

    monkeypatch.setattr(diagap.pipeline, "run_design", lambda design, **kw: _Result())
    monkeypatch.setattr(diagap.writer, "write_outputs", full_disk)
    monkeypatch.setattr(diagap.sweep.run, "run_sweep", full_disk)
    for args in (["run", "-o", str(out)], ["sweep", "--vary", "backplate.gap=4um", "-o", str(out)]):
        code, err, wall = _run_main(args, capsys)
        _assert_refused(code, err, wall, str(out / "summary.json"), out)
        assert "No space left on device" in err


@pytest.mark.skipif(os.geteuid() == 0, reason="permission bits do not bind the superuser")
def test_read_only_folder(tmp_path, capsys):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        for args in (["run", "-o", str(ro / "out")],
                     ["sweep", "--vary", "backplate.gap=4um", "-o", str(ro / "out")]):
            code, err, wall = _run_main(args, capsys)
            _assert_refused(code, err, wall, str(ro / "out"), ro / "out")
    finally:
        ro.chmod(0o755)


SUBPROCESS_CASES = [
    (["run", "D", "-o", "OUT"], dict(backplate__gap="4,5 um"), "backplate.gap"),
    (["run", "D", "-o", "OUT"], dict(diaphragm__radius="10**10**10 m"), "diaphragm.radius"),
    (["run", "/dev/zero", "-o", "OUT"], None, "/dev/zero"),
    (HOLES[:2] + ["4"] + HOLES[3:], None, "--gap"),
]


@pytest.mark.parametrize("args, changes, field", SUBPROCESS_CASES,
                         ids=["decimal comma", "power tower", "/dev/zero", "holes bare gap"])
def test_bad_input_in_a_real_process(tmp_path, args, changes, field):
    """A real process: exit 2, one line, no folder. The time limit is on the process's CPU time
    (the wall time of a process start depends on the machine's load)."""
    design = tmp_path / "d.toml"
    design.write_text(_design(**changes) if changes else DEMO)
    out = tmp_path / "out"
    args = [str(design) if a == "D" else str(out) if a == "OUT" else a for a in args]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    proc = subprocess.run([sys.executable, "-m", "diagap.cli", *args], capture_output=True,
                          text=True, timeout=120)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    _assert_refused(proc.returncode, proc.stderr, cpu, field, out)


# The peak resident set of the process after its start: VmHWM of /proc/self/status (Linux)
# belongs to the new program's memory map only; getrusage's ru_maxrss also counts the pages of
# the forked parent (the test process) before exec, so it is the fallback elsewhere.
PEAK = r"""
import resource, sys
from diagap.cli import main
code = main(["run", sys.argv[1], "-o", sys.argv[2]])
try:
    with open("/proc/self/status") as fh:
        peak_kb = next(int(l.split()[1]) for l in fh if l.startswith("VmHWM:"))
except OSError:
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(code, peak_kb)
"""


def test_refused_oversize_design_stays_small(tmp_path):
    """A design whose meshes would need gigabytes (10 nm and 1 nm films, a 50 mm plate with a
    1 um film) is refused from the estimate: the process peaks far below 300 MB."""
    for thickness, radius in (("10 nm", "0.5 mm"), ("1 nm", "0.5 mm"), ("10 nm", "20 mm")):
        design = tmp_path / "big.toml"
        design.write_text(_design(diaphragm__thickness=thickness, diaphragm__radius=radius,
                                  backplate__electrode_radius=None))
        out = tmp_path / "out"
        proc = subprocess.run([sys.executable, "-c", PEAK, str(design), str(out)],
                              capture_output=True, text=True, timeout=120)
        code, peak_kb = proc.stdout.split()
        assert int(code) == 2, proc.stderr
        assert "diaphragm.thickness" in proc.stderr
        assert int(peak_kb) / 1024 < 300, f"peak {int(peak_kb) / 1024:.0f} MB"
        assert not out.exists()


def test_case_count():
    """The table holds at least 60 bad inputs (the file cases: 9, full disk: 2, oversize: 3)."""
    n = len(DESIGN_CASES) + len(OPTION_CASES) + 9 + 2 + len(SUBPROCESS_CASES) + 3
    assert n >= 60
