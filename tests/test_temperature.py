"""Temperature: thermal-mismatch residual stress, buckling across the operating range, the drift
analysis over ``[analysis] temperatures`` and its outputs.

References (computed here from raw inputs):

* Thermal-mismatch stress of a film held by its substrate, equi-biaxial plane stress:
  σ(T) = σ0 − E/(1 − ν)·(α_f − α_s)·(T − T0) (Freund & Suresh, *Thin Film Materials*, 2003,
  §1.3 and §2.1 [from memory]; Senturia, *Microsystem Design*, 2001, §8.5 [from memory]).
* Critical biaxial compression of a clamped disk N_cr = j_{1,1}² D / a², D = E h³/(12(1 − ν²))
  (Timoshenko & Gere, *Theory of Elastic Stability*, 2nd ed. 1961, §9.2 [from memory];
  j_{1,1} = 3.8317059702075 from scipy.special.jn_zeros).
* Expansion coefficients: polysilicon 2.8e-6 1/K (Tada et al., J. Appl. Phys. 87, 2000 [from
  memory]), silicon 2.6e-6 1/K (Okada & Tokumaru, J. Appl. Phys. 56, 1984: 2.59e-6 at 293 K
  [from memory]).
* Trend: a tensioned diaphragm's stiffness grows with its tension (membrane term σh∫|∇φ|²dA of
  the Rayleigh quotient), the open-circuit sensitivity of a biased capsule below its resonance
  is ∝ V_b/g · A/k (Scheeper, van der Donk, Olthuis & Bergveld, "A review of silicon
  microphones", Sens. Actuators A 44, 1994 [from memory]) and the pull-in voltage ∝ √k
  (Senturia 2001, §6.4 [from memory]).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from diagap.cli import main
from diagap.design import DesignError, demo_design, demo_text, load_design, with_overrides

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "temperature_drift.toml"
J11 = 3.8317059702075125  # first zero of J1
ZERO_C = 273.15


def _sigma(s0, e, nu, af, as_, t, t0):
    return s0 - e / (1.0 - nu) * (af - as_) * (t - t0)


# ---- the stress relation ------------------------------------------------------------------------

def test_stress_follows_the_operating_temperature_exactly():
    d = with_overrides(demo_design(), {
        "diaphragm.material": None, "diaphragm.youngs_modulus": "150 GPa",
        "diaphragm.poisson_ratio": 0.27, "diaphragm.density": "2330 kg/m^3",
        "diaphragm.residual_stress": "12 MPa", "diaphragm.thermal_expansion": "3.1e-6 1/K",
        "diaphragm.stress_reference_temperature": "35 degC",
        "substrate.thermal_expansion": "2.6 ppm/K", "acoustics.temperature": "85 degC"})
    expected = _sigma(12e6, 150e9, 0.27, 3.1e-6, 2.6e-6, 358.15, 308.15)
    assert d.diaphragm.residual_stress_pa == pytest.approx(expected, rel=1e-12, abs=0)
    assert d.thermal.reference_stress_pa == 12e6
    for t in (173.15, 233.15, 300.0, 473.15):
        assert d.thermal.stress_pa(t) == pytest.approx(
            _sigma(12e6, 150e9, 0.27, 3.1e-6, 2.6e-6, t, 308.15), rel=1e-12, abs=0)


def test_presets_and_default_substrate():
    # polysilicon preset on the default silicon substrate, T0 = 20 °C by default
    d = with_overrides(demo_design(), {"analysis.temperatures": ["-40 degC"],
                                       "acoustics.temperature": "60 degC"})
    assert d.thermal.substrate == "silicon"
    assert d.diaphragm.residual_stress_pa == pytest.approx(
        _sigma(10e6, 160e9, 0.22, 2.8e-6, 2.6e-6, 333.15, 293.15), rel=1e-12, abs=0)
    # a [substrate] preset alone switches the thermal model on
    g = with_overrides(demo_design(), {"substrate.material": "borosilicate-glass",
                                       "acoustics.temperature": "-10 degC"})
    assert g.diaphragm.residual_stress_pa == pytest.approx(
        _sigma(10e6, 160e9, 0.22, 2.8e-6, 3.3e-6, 263.15, 293.15), rel=1e-12, abs=0)


# ---- no thermal data: as before -----------------------------------------------------------------

def test_without_thermal_data_the_design_is_unchanged():
    from diagap.extract import plate_problem
    from diagap.thermal import point_designs

    demo = demo_design()
    assert demo.thermal is None and demo.analysis.temperatures_k == ()
    assert demo.diaphragm.residual_stress_pa == 10e6
    assert "thermal" not in demo.to_dict()
    assert point_designs(demo) == []
    # without thermal data the stress does not follow the air temperature
    hot = with_overrides(demo, {"acoustics.temperature": "85 degC"})
    assert hot.thermal is None and hot.diaphragm.residual_stress_pa == 10e6
    # thermal data at the reference temperature give the very same plate problem
    same = with_overrides(demo, {"substrate.material": "silicon"})
    assert same.thermal is not None
    assert plate_problem(same) == plate_problem(demo)


# ---- buckling across the range ------------------------------------------------------------------

# clamped disk a = 0.5 mm, h = 1 µm, E = 160 GPa, ν = 0.22, σ0 = 0.5 MPa at 20 °C; the film
# expands less than its substrate (α_f < α_s), so it loses tension as it cools
_COLD = {"diaphragm.residual_stress": "0.5 MPa", "diaphragm.thermal_expansion": "3.2e-6 1/K",
         "substrate.thermal_expansion": "3.3e-6 1/K", "acoustics": None, "electrical": None}


def _crossing_k() -> float:
    e, nu, h, a = 160e9, 0.22, 1e-6, 0.5e-3
    d = e * h**3 / (12 * (1 - nu**2))
    sigma_cr = J11**2 * d / (a**2 * h)
    # σ0 − E/(1−ν)(α_f − α_s)(T − T0) = −σ_cr
    return 293.15 + (0.5e6 + sigma_cr) / (e / (1 - nu) * (3.2e-6 - 3.3e-6))


def _cold_design(temps_k):
    raw = demo_design().raw_dict()
    raw.pop("acoustics"), raw.pop("electrical")
    raw["diaphragm"].update({k.split(".")[1]: v for k, v in _COLD.items()
                             if k.startswith("diaphragm.")})
    raw["substrate"] = {"thermal_expansion": _COLD["substrate.thermal_expansion"]}
    raw["analysis"] = {"accuracy": "draft", "temperatures": [f"{t!r} K" for t in temps_k]}
    from diagap.design import parse_design

    return parse_design(raw)


def test_crossing_temperature_is_in_the_cold_range():
    t_x = _crossing_k()
    assert -60.0 < t_x - ZERO_C < -30.0  # the design buckles when cold, as intended


def test_buckling_flag_flips_at_the_closed_form_crossing():
    from diagap.lumped.thermal import buckles
    from diagap.thermal import critical_stress_of

    t_x = _crossing_k()
    d = _cold_design([t_x - 0.05, t_x + 0.05])
    s_cr = critical_stress_of(d)
    e, nu, h, a = 160e9, 0.22, 1e-6, 0.5e-3
    assert s_cr == pytest.approx(J11**2 * e * h**2 / (12 * (1 - nu**2) * a**2), rel=1e-12, abs=0)
    below, above = (d.thermal.stress_pa(t) for t in (t_x - 0.05, t_x + 0.05))
    assert buckles(below, s_cr) and not buckles(above, s_cr)


def test_buckled_point_has_null_values_and_says_why():
    from diagap.thermal import temperature_sweep

    t_x = _crossing_k()
    d = _cold_design([t_x - 1.0, t_x + 15.0])
    sweep = temperature_sweep(d)
    cold, warm = sweep.to_summary()
    assert cold["buckled"] is True and "buckled" in cold["note"]
    for key in ("sensitivity_db_v_per_pa", "resonance_hz", "pull_in_voltage_v", "noise_dba_spl"):
        assert cold[key] is None
    assert cold["residual_stress_pa"] == pytest.approx(
        _sigma(0.5e6, 160e9, 0.22, 3.2e-6, 3.3e-6, t_x - 1.0, 293.15), rel=1e-12, abs=0)
    # just above the crossing the compressed diaphragm stands, with a finite pull-in voltage;
    # no [electrical]/[acoustics]: no response, and the entry says why
    assert warm["buckled"] is False and warm["pull_in_voltage_v"] > 0
    assert warm["sensitivity_db_v_per_pa"] is None and "[electrical]" in warm["note"]
    # the plot marks the buckled point and leaves out what was computed nowhere
    from diagap.report.plots import RenderedPlots
    from diagap.report.plots_temperature import panels, temperature_plots

    plots = temperature_plots(sweep)
    assert "1 buckled" in plots[0].caption and "sensitivity, noise" in plots[0].caption
    assert panels(sweep.to_summary()) == ["residual_stress_pa", "resonance_hz",
                                          "pull_in_voltage_v"]
    assert RenderedPlots(plots).png("temperature_drift")[:8] == b"\x89PNG\r\n\x1a\n"


def test_operating_temperature_beyond_buckling_is_refused():
    t_x = _crossing_k()
    raw_text = demo_text().replace('temperature = "20 degC"',
                                   f'temperature = "{t_x - 2.0!r} K"')
    raw_text = raw_text.replace('residual_stress = "10 MPa"',
                                'residual_stress = "0.5 MPa"\nthermal_expansion = "3.2e-6 1/K"')
    raw_text += '\n[substrate]\nthermal_expansion = "3.3e-6 1/K"\n'
    import tomllib

    from diagap.design import parse_design

    with pytest.raises(DesignError, match=r"^acoustics\.temperature = .*buckling") as exc:
        parse_design(tomllib.loads(raw_text))
    assert "\n" not in str(exc.value)


# ---- the temperature list: parsing and refusals -------------------------------------------------

def test_temperature_list_parses_units_and_sorts():
    d = with_overrides(demo_design(), {"analysis.temperatures": ["85 degC", "-40 degC", 298.15,
                                                                 "300 K"]})
    assert d.analysis.temperatures_k == pytest.approx((233.15, 298.15, 300.0, 358.15),
                                                      rel=1e-12, abs=0)


@pytest.mark.parametrize("change, pattern", [
    ({"analysis.temperatures": "20 degC"}, r"^analysis\.temperatures = .*must be a list"),
    ({"analysis.temperatures": ["20 m"]}, r"^analysis\.temperatures\[0\] = .*wrong dimension"),
    ({"analysis.temperatures": ["-150 degC"]}, r"^analysis\.temperatures\[0\] = .*must be in"),
    ({"analysis.temperatures": ["25 degC", "250 degC"]}, r"^analysis\.temperatures\[1\] = "),
    ({"analysis.temperatures": ["20 degC", "293.15 K"]}, r"^analysis\.temperatures: .*twice"),
    ({"analysis.temperatures": [f"{200 + i} K" for i in range(26)]},
     r"^analysis\.temperatures: 26 temperatures; at most 25"),
    ({"analysis.temperatures": ["twenty degC"]}, r"^analysis\.temperatures\[0\] = .*not a quantity"),
    ({"diaphragm.thermal_expansion": "3 um"}, r"^diaphragm\.thermal_expansion = .*dimension"),
    ({"diaphragm.stress_reference_temperature": "2000 degC"},
     r"^diaphragm\.stress_reference_temperature = .*must be in"),
    ({"substrate.material": "silicone"}, r"^substrate\.material = .*did you mean 'silicon'"),
    ({"substrate.thickness": "1 mm"}, r"^substrate\.thickness: unknown key"),
    ({"substrate.material": "brass", "substrate.thermal_expansion": "19e-6 1/K"},
     r"^substrate\.thermal_expansion: given together with substrate\.material"),
    ({"diaphragm.material": None, "diaphragm.youngs_modulus": "160 GPa",
      "diaphragm.poisson_ratio": 0.22, "diaphragm.density": "2330 kg/m^3",
      "analysis.temperatures": ["0 degC"]}, r"^diaphragm\.thermal_expansion: missing"),
])
def test_bad_thermal_inputs_are_refused_on_one_line(change, pattern):
    with pytest.raises(DesignError, match=pattern) as exc:
        with_overrides(demo_design(), change)
    assert "\n" not in str(exc.value)


def test_cli_refuses_a_bad_temperature_list(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(demo_text().replace('accuracy = "normal"',
                                       'accuracy = "draft"\ntemperatures = ["-40 degC", "9 V"]'))
    out = tmp_path / "out"
    assert main(["run", str(bad), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "analysis.temperatures[1]" in err and "9 V" in err
    assert not out.exists()


# ---- the invented example end to end, and the physical trend ------------------------------------

@pytest.fixture(scope="module")
def drift(tmp_path_factory):
    from diagap.pipeline import run_design
    from diagap.writer import write_outputs

    result = run_design(load_design(EXAMPLE))
    out = tmp_path_factory.mktemp("drift")
    write_outputs(result, out)
    return result, out


def test_example_runs_end_to_end(drift):
    from diagap.table import summary_table

    result, out = drift
    summary = json.loads((out / "summary.json").read_text())
    sweep = summary["temperature_sweep"]
    assert [p["temperature_k"] for p in sweep] == pytest.approx([233.15, 298.15, 358.15],
                                                                rel=1e-12, abs=0)
    keys = {"temperature_k", "residual_stress_pa", "sensitivity_db_v_per_pa", "resonance_hz",
            "pull_in_voltage_v", "noise_dba_spl", "buckled"}
    for p in sweep:
        assert keys <= set(p) and p["buckled"] is False
        assert p["residual_stress_pa"] == pytest.approx(
            _sigma(6e6, 160e9, 0.22, 2.8e-6, 2.6e-6, p["temperature_k"], 293.15),
            rel=1e-12, abs=0)
        assert all(p[k] is not None for k in keys)
    # the 25 °C point is the single run (operating temperature 25 °C): same numbers
    at_op = sweep[1]
    for key in ("sensitivity_db_v_per_pa", "resonance_hz", "noise_dba_spl"):
        assert at_op[key] == pytest.approx(summary["response"][key], rel=1e-9, abs=0)
    assert at_op["pull_in_voltage_v"] == pytest.approx(summary["coupled"]["pull_in_voltage_v"],
                                                       rel=1e-9, abs=0)
    from diagap.names import lookup

    numeric = [k for k, v in sweep[0].items() if isinstance(v, float)]
    assert len(numeric) >= 6 and all(lookup(f"temperature_sweep.{k}") for k in numeric)
    assert (out / "plots" / "temperature_drift.png").is_file()
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "Drift over the operating temperatures" in page and 'id="plot-temperature_drift"' in page
    text = summary_table(summary)
    assert "drift over temperature" in text and "-40" in text


def test_warmer_tensile_polysilicon_is_softer(drift):
    result, _ = drift
    sweep = result.summary()["temperature_sweep"]
    # expected signs from the raw inputs: α_f − α_s = 2.8e-6 − 2.6e-6 > 0, so dσ/dT < 0;
    # lower tension → lower stiffness k → higher sensitivity (∝ A/k), lower pull-in (∝ √k) and
    # lower resonance (∝ √(k/m))
    dsigma_dt = -160e9 / (1 - 0.22) * (2.8e-6 - 2.6e-6)
    assert dsigma_dt < 0
    s = [p["residual_stress_pa"] for p in sweep]
    sens = [p["sensitivity_db_v_per_pa"] for p in sweep]
    v_pi = [p["pull_in_voltage_v"] for p in sweep]
    f_r = [p["resonance_hz"] for p in sweep]
    assert s[0] > s[1] > s[2]
    assert sens[0] < sens[1] < sens[2]
    assert v_pi[0] > v_pi[1] > v_pi[2]
    assert f_r[0] > f_r[1] > f_r[2]
    # magnitude: the stress difference equals the closed form over the whole range
    assert s[2] - s[0] == pytest.approx(dsigma_dt * 125.0, rel=1e-9, abs=0)
