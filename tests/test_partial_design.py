"""Designs without [acoustics] and/or [electrical]: the sections that do not need them are
computed, the others are listed as skipped with the reason, and everything downstream (CLI table,
summary.json, report, sweeps) copes.

The reference for the computed sections is the complete design: mechanics, electrostatics,
pull-in and (with air at 20 degC, 101.325 kPa, the demo's conditions) damping do not depend on
the back volume, the vent or the bias resistor, so the partial design must reproduce them to
rounding.
"""
import json

import pytest

from diagap.cli import main
from diagap.design import DEFAULT_AIR, demo_text, parse_design, tomllib
from diagap.pipeline import run_design

RAW = tomllib.loads(demo_text())
RAW["analysis"]["accuracy"] = "draft"


def _toml(raw: dict) -> str:
    lines = [f'name = "{raw["name"]}"']
    for section, table in raw.items():
        if isinstance(table, dict):
            lines.append(f"[{section}]")
            lines += [f'{k} = "{v}"' for k, v in table.items()]
    return "\n".join(lines) + "\n"


def _without(*sections) -> dict:
    return {k: v for k, v in RAW.items() if k not in sections}


@pytest.fixture(scope="module")
def full():
    return run_design(parse_design(RAW)).summary()


def _same(a: dict, b: dict, keys):
    for key in keys:
        assert a[key] == pytest.approx(b[key], rel=1e-9, abs=0), key


def test_demo_air_is_the_default_air():
    # the comparison below relies on the demo having the default air
    assert (RAW["acoustics"]["temperature"], RAW["acoustics"]["static_pressure"]) == \
        ("20 degC", "101.325 kPa")
    assert DEFAULT_AIR == pytest.approx((293.15, 101325.0), rel=1e-12, abs=0)


def test_mechanics_only_design_runs_and_writes_its_sections(tmp_path, capsys, full):
    design = tmp_path / "mech.toml"
    design.write_text(_toml(_without("acoustics", "electrical")))
    out = tmp_path / "out"
    assert main(["run", str(design), "-o", str(out)]) == 0
    printed = capsys.readouterr().out
    s = json.loads((out / "summary.json").read_text())
    for section in ("mechanics", "electrostatics", "damping"):
        assert s[section], section
    assert "response" not in s
    assert set(s["skipped"]) == {"response", "coupled.bias_point"}
    assert "[acoustics]" in s["skipped"]["response"]
    assert "[electrical]" in s["skipped"]["coupled.bias_point"]
    assert "20 degC" in s["damping"]["air_conditions"]
    assert s["design"]["acoustics"] is None and s["design"]["electrical"] is None
    # pull-in needs no bias; nothing that depends on a bias point is reported
    assert set(s["coupled"]) == {"pull_in_voltage_v", "pull_in_center_deflection_m", "branch"}
    _same(s["mechanics"], full["mechanics"], ["center_compliance_m_per_pa",
                                              "effective_mass_kg", "effective_area_m2"])
    _same(s["electrostatics"], full["electrostatics"], ["rest_capacitance_f",
                                                        "capacitance_slope_f_per_m"])
    _same(s["coupled"], full["coupled"], ["pull_in_voltage_v"])
    assert s["damping"]["damping_n_s_per_m"] == pytest.approx(
        full["damping"]["damping_n_s_per_m"], rel=1e-6, abs=0)
    assert "skipped response" in printed and "skipped coupled.bias_point" in printed
    assert "20 degC" in printed
    assert not (out / "response.csv").exists() and not (out / "model.cir").exists()
    report = (out / "report.html").read_text(encoding="utf-8")
    assert "no [acoustics] section" in report and "no [electrical] section" in report
    rows = {r["assumption"] for r in s["audit"]}
    assert "rigid piston" in rows and "pull-in margin" not in rows


def test_design_without_electrical_keeps_pull_in(full):
    s = run_design(parse_design(_without("electrical"))).summary()
    assert set(s["skipped"]) == {"response", "coupled.bias_point"}
    assert "[electrical]" in s["skipped"]["response"]
    assert "air_conditions" not in s["damping"]
    _same(s["coupled"], full["coupled"], ["pull_in_voltage_v", "pull_in_center_deflection_m"])


def test_design_without_acoustics_keeps_the_bias_point(full):
    s = run_design(parse_design(_without("acoustics"))).summary()
    assert set(s["skipped"]) == {"response"}
    _same(s["coupled"], full["coupled"], ["bias_center_deflection_m", "resonance_at_bias_hz",
                                          "pull_in_voltage_v"])
    assert "pull-in margin" in {r["assumption"] for r in s["audit"]}


def test_sweep_of_a_mechanics_only_design(tmp_path, capsys):
    design = tmp_path / "mech.toml"
    design.write_text(_toml(_without("acoustics", "electrical")))
    out = tmp_path / "sweep"
    code = main(["sweep", str(design), "--vary", "backplate.hole_radius=3um", "--workers", "1",
                 "--no-progress", "-o", str(out)])
    assert code == 0, capsys.readouterr().err
    rows = (out / "sweep.csv").read_text().splitlines()
    assert len(rows) == 2 and ",ok," in rows[1]
