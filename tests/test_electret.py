"""Electret charge on a dielectric layer: the equivalent bias, the design sections, bad inputs and
the invented electret example end to end.

References used below:
- Gauss's law at a charged interface, D_above − D_below = σ, and the loop voltage of a stack of
  slabs between two electrodes (e.g. Griffiths, *Introduction to Electrodynamics*, 4th ed.,
  2017, sec. 2.3 and 4.3 [from memory for the sections]); the two equations are solved in the
  test for the fields, independently of the code. ε0 from CODATA 2018 via scipy.constants.
- Equivalent bias of a charged electret layer, V = σ s/(ε0 ε) for a layer of thickness s (Sessler
  & West, "Self-biased condenser microphone with high capacitance", J. Acoust. Soc. Am. 34,
  1962 [from memory for the form of the reference]).
"""
import json
import math
import re

import numpy as np
import pytest
from scipy.constants import epsilon_0

from diagap.cli import main
from diagap.design import demo_text, parse_design
from diagap.dielectrics import ELECTRET_NOTE, effective_bias_v, electret_bias_v
from diagap.fem.field.cell import ElectrostaticsInputError
from diagap.fem.field.layers import GapLayers, electret_equivalent_bias_v

try:
    import tomllib
except ModuleNotFoundError:  # pragma: no cover
    import tomli as tomllib

G = 25e-6  # invented air gap
EXAMPLE = "examples/electret_capsule.toml"


def air_field_shorted(sigma, g, t_b, eps_b, t_d, eps_d, charged):
    """Field in the air (along z, from the diaphragm to the backplate) with both electrodes at
    the same potential, from Gauss's law at the charged surface and a zero loop voltage.

    Unknowns: E_d (diaphragm layer), E_a (air), E_b (backplate layer). Equations:
    - loop: E_d t_d + E_a g + E_b t_b = 0 (the electrodes are shorted through the resistor);
    - the uncharged interface: continuous D, ε_r E on both sides equal;
    - the charged interface: D_above − D_below = σ.
    """
    if charged == "backplate":  # sheet between air (below) and the backplate layer (above)
        rows = [[t_d, g, t_b], [eps_d, -1.0, 0.0], [0.0, -epsilon_0, epsilon_0 * eps_b]]
    else:  # sheet between the diaphragm layer (below) and the air (above)
        rows = [[t_d, g, t_b], [-epsilon_0 * eps_d, epsilon_0, 0.0], [0.0, 1.0, -eps_b]]
    rhs = [0.0, 0.0, sigma] if charged == "backplate" else [0.0, sigma, 0.0]
    return np.linalg.solve(np.array(rows), np.array(rhs))[1]


@pytest.mark.parametrize("sigma", [-0.3e-3, 0.2e-3])
@pytest.mark.parametrize("t_d, eps_d", [(0.0, 1.0), (2e-6, 3.0)])
def test_equivalent_bias_of_a_charged_backplate_layer(sigma, t_d, eps_d):
    # Two-capacitor stack with a charge sheet σ on the gap side of the backplate layer (t, ε_r).
    # Gauss: ε0 ε_r E_l − ε0 E_a = σ; loop: E_a g_rest + E_l t = 0 (g_rest = g + t_d/ε_d with a
    # diaphragm layer, whose field is E_a/ε_d). Eliminating E_l:
    # E_a (g_rest + t/ε_r) = −σ t/(ε0 ε_r). An uncharged capsule biased at V (backplate at +V)
    # has E_a = −V/(g_rest + t/ε_r). So the charge acts as V_eq = σ t/(ε0 ε_r), for any gap.
    t, eps = 12.5e-6, 2.1
    e_air = air_field_shorted(sigma, G, t, eps, t_d, eps_d, "backplate")
    g_e = G + t / eps + t_d / eps_d
    v_eq = -e_air * g_e  # the bias that gives the same air field
    assert v_eq == pytest.approx(sigma * t / (epsilon_0 * eps), rel=1e-12, abs=0)
    layers = GapLayers(t, eps, t_d, eps_d)
    assert electret_equivalent_bias_v(sigma, layers, "backplate") == pytest.approx(
        v_eq, rel=1e-12, abs=0)
    # gap-independent: the same V_eq at another air gap
    assert -air_field_shorted(sigma, 2 * G, t, eps, t_d, eps_d, "backplate") * (
        g_e + G) == pytest.approx(v_eq, rel=1e-12, abs=0)


def test_equivalent_bias_of_a_charged_diaphragm_layer():
    # sheet on the gap side of the diaphragm layer: the same algebra with the sheet below the
    # air gives E_a = +σ t_d/(ε0 ε_d)/g_e, i.e. V_eq = −σ t_d/(ε0 ε_d) (backplate relative to
    # the diaphragm)
    sigma, t_d, eps_d = 0.25e-3, 10e-6, 2.0
    e_air = air_field_shorted(sigma, G, 0.0, 1.0, t_d, eps_d, "diaphragm")
    v_eq = -e_air * (G + t_d / eps_d)
    assert v_eq == pytest.approx(-sigma * t_d / (epsilon_0 * eps_d), rel=1e-12, abs=0)
    assert electret_equivalent_bias_v(sigma, GapLayers(0, 1, t_d, eps_d), "diaphragm") == \
        pytest.approx(v_eq, rel=1e-12, abs=0)


def test_equivalent_bias_needs_the_charged_layer():
    with pytest.raises(ElectrostaticsInputError, match="diaphragm"):
        electret_equivalent_bias_v(1e-4, GapLayers(1e-6, 2.0), "diaphragm")


def _example_raw():
    with open(EXAMPLE, "rb") as fh:
        return tomllib.load(fh)


def test_electret_design_without_a_supply_is_biased_by_its_charge():
    raw = _example_raw()
    d = parse_design(raw)
    assert d.electrical.bias_voltage_v == 0.0
    sigma, t, eps = -0.15e-3, 12.5e-6, 2.1
    assert electret_bias_v(d) == pytest.approx(sigma * t / (epsilon_0 * eps), rel=1e-12, abs=0)
    raw["electrical"]["bias_voltage"] = "20 V"  # a supply adds in series
    d2 = parse_design(raw)
    assert effective_bias_v(d2) == pytest.approx(20.0 + sigma * t / (epsilon_0 * eps), rel=1e-12,
                                                 abs=0)
    # the normalised design lists the sections only when present
    assert d.to_dict()["layers"]["backplate_thickness_m"] == 12.5e-6
    assert "layers" not in parse_design(tomllib.loads(demo_text())).to_dict()


def _with(text: str, extra: str) -> str:
    return text + "\n" + extra + "\n"


# (id, extra TOML appended to the demo, field named in the message)
BAD = [
    ("electret without a layer", '[electret]\ncharge_density = "0.1 mC/m^2"', "electret.layer"),
    ("charge on the missing diaphragm layer",
     '[layers]\nbackplate_thickness = "0.2 um"\nbackplate_permittivity = 7\n'
     '[electret]\ncharge_density = "0.1 mC/m^2"\nlayer = "diaphragm"', "electret.layer"),
    ("charge density 1 C/m2", '[layers]\nbackplate_thickness = "0.2 um"\n'
     'backplate_permittivity = 7\n[electret]\ncharge_density = "1 C/m^2"',
     "electret.charge_density"),
    ("charge density without unit", '[layers]\nbackplate_thickness = "0.2 um"\n'
     'backplate_permittivity = 7\n[electret]\ncharge_density = "0.1"', "electret.charge_density"),
    ("layer thicker than the gap",
     '[layers]\ndiaphragm_thickness = "5 um"\ndiaphragm_permittivity = 20', "diaphragm_thickness"),
    ("permittivity below 1",
     '[layers]\nbackplate_thickness = "0.2 um"\nbackplate_permittivity = 0.5',
     "layers.backplate_permittivity"),
    ("thickness without permittivity", '[layers]\nbackplate_thickness = "0.2 um"',
     "layers.backplate_thickness"),
    ("empty layers", "[layers]", "layers"),
    ("layer as thick as the backplate",
     '[layers]\nbackplate_thickness = "2 um"\nbackplate_permittivity = 7',
     "layers.backplate_thickness"),
    ("electrically thick layers",
     '[layers]\ndiaphragm_thickness = "3 um"\ndiaphragm_permittivity = 1.2',
     "electrical thickness"),
    ("unknown layers key", '[layers]\nbackplate_thicknes = "0.2 um"', "layers.backplate_thicknes"),
    ("unknown electret layer", '[layers]\nbackplate_thickness = "0.2 um"\n'
     'backplate_permittivity = 7\n[electret]\ncharge_density = "0.1 mC/m^2"\nlayer = "top"',
     "electret.layer"),
]


@pytest.mark.parametrize("extra, field", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_bad_layer_and_electret_inputs_exit_2_with_one_line(tmp_path, capsys, extra, field):
    path = tmp_path / "bad.toml"
    path.write_text(_with(demo_text(), extra), encoding="utf-8")
    out = tmp_path / "out"
    code = main(["run", str(path), "-o", str(out)])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert len(err) == 1 and err[0].startswith("diagap: error: ") and field in err[0], err
    assert not out.exists()


def test_electret_example_end_to_end_at_draft(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", EXAMPLE, "-o", str(out)]) == 0
    stdout = capsys.readouterr().out
    assert "electret" in stdout and "decays with temperature and humidity" in stdout
    s = json.loads((out / "summary.json").read_text())
    sigma, t, eps, g = -0.15e-3, 12.5e-6, 2.1, 25e-6
    v_eq = sigma * t / (epsilon_0 * eps)
    cp = s["coupled"]
    assert cp["electret_equivalent_bias_v"] == pytest.approx(v_eq, rel=1e-12, abs=0)
    assert cp["bias_voltage_v"] == pytest.approx(abs(v_eq), rel=1e-12, abs=0)  # no supply
    assert not cp["collapsed"] and 0 < cp["bias_margin"] < 1
    es = s["electrostatics"]
    assert es["layers"]["electrical_thickness_m"] == pytest.approx(t / eps, rel=1e-12, abs=0)
    # series stack over the electrode area: ε0 π R_e²/(g + t/ε_r)
    assert es["parallel_plate_capacitance_f"] == pytest.approx(
        epsilon_0 * math.pi * 1.3e-3**2 / (g + t / eps), rel=1e-6, abs=0)
    assert 0.8 < es["perforation_factor"] < 1.0
    assert s["response"]["sensitivity_db_v_per_pa"] < 0
    html = (out / "report.html").read_text(encoding="utf-8")
    assert re.search(r"electret: equivalent bias -1\d\d(\.\d+)? V", html)
    assert ELECTRET_NOTE.split(":")[0] in html
