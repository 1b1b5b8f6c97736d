"""Invalid designs give one clear DesignError naming the field, the value and what is allowed."""
import copy
import subprocess
import sys

import pytest

from diagap.lumped.buckling import critical_tension_n_per_m
from diagap.design import DesignError, demo_design, parse_design, tomllib, demo_text

BASE = tomllib.loads(demo_text())


def _with(path, value):
    raw = copy.deepcopy(BASE)
    section, key = path.split(".")
    if value is None:
        raw[section].pop(key, None)
    else:
        raw[section][key] = value
    return raw


CASES = [
    ("diaphragm.thickness", None, r"diaphragm\.thickness: missing"),
    ("diaphragm.radius", "0 mm", r"diaphragm\.radius = '0 mm': must be positive"),
    ("diaphragm.radius", "-1 mm", r"diaphragm\.radius = '-1 mm': must be positive"),
    ("diaphragm.radius", "5 kg", r"diaphragm\.radius = '5 kg': wrong dimension .*mass.*length"),
    ("diaphragm.thickness", -1e-6, r"diaphragm\.thickness = -1e-06 m: must be positive"),
    ("diaphragm.poisson_ratio", 0.6, r"diaphragm\.poisson_ratio = 0\.6: must be in \(-1, 0\.5\)"),
    ("diaphragm.poisson_ratio", -1.0, r"diaphragm\.poisson_ratio = -1: must be in \(-1, 0\.5\)"),
    ("diaphragm.radus", "0.5 mm", r"diaphragm\.radus: unknown key; did you mean 'radius'\?"),
    ("diaphragm.material", "unobtainium", r"diaphragm\.material = 'unobtainium': must be one of polysilicon"),
    ("diaphragm.shape", "triangle", r"diaphragm\.shape = 'triangle': must be one of circle, square"),
    ("diaphragm.edge", "clamp", r"diaphragm\.edge = 'clamp': must be one of clamped, simply-supported \(did you mean 'clamped'\?\)"),
    ("diaphragm.youngs_modulus", "banana GPa", r"diaphragm\.youngs_modulus = 'banana GPa': not a quantity"),
    ("backplate.gap", "0 um", r"backplate\.gap = '0 um': must be positive"),
    ("backplate.gap", None, r"backplate\.gap: missing"),
    ("backplate.thickness", "0 um", r"backplate\.thickness = '0 um': must be positive"),
    ("backplate.hole_radius", "10 um", r"backplate\.hole_radius = 1e-05 m: must be less than half the hole_pitch"),
    ("backplate.hole_radius", "-1 um", r"backplate\.hole_radius = '-1 um': must be positive"),
    ("backplate.hole_pitch", "0 um", r"backplate\.hole_pitch = '0 um': must be positive"),
    ("backplate.electrode_radius", "0.6 mm", r"backplate\.electrode_radius = 0\.0006 m: must not exceed the diaphragm's radius"),
    ("backplate.hole_lattice", "hexagonal", r"backplate\.hole_lattice = 'hexagonal': must be one of hex, square, none"),
    ("acoustics.temperature", "900 degC", r"acoustics\.temperature = '900 degC': must be in \[173\.15, 473\.15\] K"),
    ("acoustics.static_pressure", "10 Pa", r"acoustics\.static_pressure = '10 Pa': must be in \[1000, 1e\+06\] Pa"),
    ("electrical.bias_voltage", "-5 V", r"electrical\.bias_voltage = '-5 V': must be positive"),
    ("electrical.bias_voltage", "0 V", r"electrical\.bias_voltage = '0 V': must be positive"),
    ("electrical.bias_resistance", "10 pF", r"electrical\.bias_resistance = '10 pF': wrong dimension"),
    ("analysis.accuracy", "ultra", r"analysis\.accuracy = 'ultra': must be one of draft, normal, fine"),
]


@pytest.mark.parametrize("path,value,match", CASES, ids=[f"{c[0]}={c[1]}" for c in CASES])
def test_design_error_table(path, value, match):
    with pytest.raises(DesignError, match=match):
        parse_design(_with(path, value))


def test_unknown_section_suggests_nearest():
    raw = copy.deepcopy(BASE)
    raw["backplat"] = raw.pop("backplate")
    with pytest.raises(DesignError, match=r"backplat: unknown key; did you mean 'backplate'\?"):
        parse_design(raw)


def test_buckling_limit_reports_critical_stress():
    # Clamped disk: N_cr = 14.68 D/a^2 (Timoshenko & Gere, Theory of Elastic Stability, 1961;
    # value from memory). j_{1,1}^2 = 14.682 from scipy.special.jn_zeros is the exact constant.
    d = demo_design().diaphragm
    n_cr = critical_tension_n_per_m("circle", "clamped", d.size_m, d.bending_stiffness_n_m, 0.22)
    assert n_cr * d.size_m**2 / d.bending_stiffness_n_m == pytest.approx(14.68, abs=0.005)
    sigma_cr = n_cr / d.thickness_m
    ok = _with("diaphragm.residual_stress", -0.99 * sigma_cr)
    assert parse_design(ok).diaphragm.residual_stress_pa < 0
    bad = _with("diaphragm.residual_stress", -1.01 * sigma_cr)
    import re
    with pytest.raises(DesignError, match=re.escape(
            f"compressive stress at or beyond the buckling load; must be > -{sigma_cr:.4g} Pa")):
        parse_design(bad)


def test_simply_supported_square_buckling_constant():
    # Simply supported square under biaxial compression: N_cr = 2 pi^2 D / a^2
    # (Timoshenko & Gere 1961, ch. 9; the m = n = 1 term of (m^2 + n^2) pi^2 D / a^2).
    import math
    assert critical_tension_n_per_m("square", "simply-supported", 1.0, 1.0, 0.3) == pytest.approx(
        2 * math.pi**2, rel=1e-6, abs=0)


def test_square_uses_side_not_radius():
    raw = _with("diaphragm.shape", "square")
    with pytest.raises(DesignError, match=r"diaphragm\.radius: not used for shape = 'square'"):
        parse_design(raw)


def test_invalid_toml_is_one_line(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[diaphragm\nradius = 1\n")
    from diagap.design import load_design
    with pytest.raises(DesignError, match=r"bad\.toml: not valid TOML"):
        load_design(p)


def test_units_are_converted_to_si():
    d = demo_design()
    assert d.diaphragm.size_m == 0.5e-3
    assert d.acoustics.temperature_k == pytest.approx(293.15, rel=1e-6, abs=0)
    assert d.electrical.bias_resistance_ohm == pytest.approx(1e10, rel=1e-6, abs=0)
    assert d.electrical.parasitic_capacitance_f == pytest.approx(0.3e-12, rel=1e-6, abs=0)


@pytest.mark.parametrize("path,value,match", CASES[:6] + CASES[13:16])
def test_cli_rejects_bad_design_without_traceback_or_outputs(tmp_path, path, value, match):
    raw = _with(path, value)
    # the TOML text is written by hand below (no TOML writer needed; Python 3.10 has no tomllib)
    lines = []
    for sec, table in raw.items():
        if isinstance(table, dict):
            lines.append(f"[{sec}]")
            lines += [f"{k} = {v!r}".replace("'", '"') for k, v in table.items()]
        else:
            lines.insert(0, f"{sec} = {table!r}".replace("'", '"'))
    design = tmp_path / "d.toml"
    design.write_text("\n".join(lines) + "\n")
    out = tmp_path / "out"
    proc = subprocess.run([sys.executable, "-m", "diagap.cli", "run", str(design), "-o", str(out)],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    err = proc.stderr.strip().splitlines()
    assert len(err) == 1 and "Traceback" not in proc.stderr
    assert err[0].startswith("diagap: error: ")
    import re
    assert re.search(match, err[0])
    assert not out.exists()
