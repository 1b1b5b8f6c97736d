"""The readout after the capsule: its noise, clipping level and digital full scale, the
``[readout]`` design section (values, refusals on one line with exit code 2) and the invented
example examples/readout_demo.toml run end to end at draft accuracy.

References: Johnson–Nyquist noise 4 k_B T R (J. B. Johnson, Phys. Rev. 32, 97, 1928; H. Nyquist,
Phys. Rev. 32, 110, 1928); k_B = 1.380649e-23 J/K (exact, SI 2019); the sound-pressure reference
20 µPa and A-weighting of IEC 61672-1:2013 (formula of annex E); dBFS with a full-scale sine at
0 dBFS (AES17, "full-scale amplitude" [from memory]); a sine's peak is √2 times its rms value.
"""
import json
import math
from pathlib import Path

import numpy as np
import pytest

from diagap.cli import main
from diagap.design import DesignError, demo_text, load_design, parse_design
from diagap.lumped.readout import Readout, ReadoutError, overload_point, sine_spl_db

K_B = 1.380649e-23
P_REF = 20e-6
EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "readout_demo.toml"


# ---- the readout model ----------------------------------------------------------------------

def test_input_noise_is_white_with_a_one_over_f_corner():
    r = Readout(8e-9, noise_corner_hz=250.0)
    f = np.array([10.0, 250.0, 1000.0, 1e5])
    np.testing.assert_allclose(r.input_noise_psd(f), 64e-18 * (1 + 250.0 / f), rtol=1e-12, atol=0)
    # at the corner the 1/f part equals the white part: twice the white power
    assert r.input_noise_psd(250.0) == pytest.approx(2 * 64e-18, rel=1e-12, abs=0)


def test_charge_pump_noise_defaults_to_its_thermal_noise():
    r = Readout(0.0, charge_pump_resistance_ohm=5e6)
    assert r.charge_pump_noise_psd(300.0) == pytest.approx(4 * K_B * 300.0 * 5e6, rel=1e-12,
                                                           abs=0)
    given = Readout(0.0, charge_pump_resistance_ohm=5e6, charge_pump_noise_v_per_rthz=3e-7)
    assert given.charge_pump_noise_psd(300.0) == pytest.approx(9e-14, rel=1e-12, abs=0)


def test_clipping_level_in_spl():
    # 0.5 V peak at 10 mV/Pa: 50 Pa peak = 35.36 Pa rms = 124.95 dB SPL
    assert sine_spl_db(0.5, 10e-3) == pytest.approx(20 * math.log10(50 / math.sqrt(2) / P_REF),
                                                    rel=1e-12, abs=0)
    assert Readout(1e-8, clip_amplitude_v=0.5).clip_spl_db(10e-3) == \
        pytest.approx(124.9485, rel=1e-6, abs=0)
    assert Readout(1e-8).clip_spl_db(10e-3) is None


def test_dbfs_arithmetic():
    s = 10e-3  # V/Pa: 1 Pa rms at 1 kHz is 14.14 mV peak at the input
    by_input = Readout(1e-8, full_scale_input_v=1.0)
    # 0 dBFS is a 1 V peak sine: 94 dB SPL gives 20 log10(0.014142) = -36.99 dBFS
    assert by_input.sensitivity_dbfs(s) == pytest.approx(-36.9897, rel=1e-5, abs=0)
    # that full scale is reached at 93.98 + 36.99 = 130.97 dB SPL (1 Pa re 20 µPa)
    assert by_input.full_scale_level_db(s) == pytest.approx(20 * math.log10(1 / P_REF) + 36.9897,
                                                            rel=1e-6, abs=0)
    # given as the SPL of full scale: 120 dB SPL ↔ -26 dBFS (94 dB SPL = 1 Pa, 93.98 dB exactly)
    by_spl = Readout(1e-8, full_scale_spl_db=120.0)
    assert by_spl.sensitivity_dbfs(s) == pytest.approx(20 * math.log10(1 / P_REF) - 120.0,
                                                       rel=1e-12, abs=0)
    assert by_spl.full_scale_peak_v(s) == pytest.approx(math.sqrt(2) * s * 20.0, rel=1e-12, abs=0)
    # the gain does not enter: full scale is referred to the readout's input
    assert Readout(1e-8, gain=100.0, full_scale_input_v=1.0).sensitivity_dbfs(s) == \
        pytest.approx(by_input.sensitivity_dbfs(s), rel=1e-12, abs=0)
    assert Readout(1e-8).sensitivity_dbfs(s) is None
    assert Readout(1e-8, gain=10.0).gain_db == pytest.approx(20.0, rel=1e-12, abs=0)


def test_overload_point_is_the_lowest_limit():
    assert overload_point({"a": 130.0, "b": None, "c": 121.5}) == (121.5, "c")
    assert overload_point({"a": None}) == (None, None)


@pytest.mark.parametrize("kw", [dict(noise_density_v_per_rthz=-1e-9), dict(gain=0.0),
                                dict(clip_amplitude_v=0.0), dict(noise_corner_hz=math.nan),
                                dict(full_scale_input_v=1.0, full_scale_spl_db=120.0)])
def test_readout_refuses_bad_values(kw):
    args = dict(noise_density_v_per_rthz=1e-8) | kw
    with pytest.raises(ReadoutError):
        Readout(**args)


# ---- the [readout] design section -----------------------------------------------------------

READOUT = """
[readout]
noise_density = "20 nV/rtHz"
noise_corner = "300 Hz"
gain_db = "20 dB"
clip_amplitude = "0.5 V"
full_scale_spl = 120
charge_pump_resistance = "1 Mohm"
"""


def _text(readout: str = READOUT, drop_preamp: bool = False) -> str:
    text = demo_text()
    if drop_preamp:
        text = text.replace('preamp_input_capacitance = "0.2 pF"\n', "")
    return text + readout


def _parse(text: str):
    import tomllib

    return parse_design(tomllib.loads(text))


def test_readout_section_in_si():
    d = _parse(_text())
    r = d.readout
    assert r.noise_density_v_per_rthz == pytest.approx(20e-9, rel=1e-12, abs=0)
    assert r.noise_corner_hz == pytest.approx(300.0, rel=1e-12, abs=0)
    assert r.gain == pytest.approx(10.0, rel=1e-12, abs=0)
    assert r.clip_amplitude_v == pytest.approx(0.5, rel=1e-12, abs=0)
    assert r.full_scale_spl_db == pytest.approx(120.0, rel=1e-12, abs=0)
    assert r.charge_pump_resistance_ohm == pytest.approx(1e6, rel=1e-12, abs=0)
    assert r.charge_pump_noise_v_per_rthz is None
    # the input capacitance of [electrical] is the readout's
    assert r.input_capacitance_f == pytest.approx(0.2e-12, rel=1e-12, abs=0)
    assert d.to_dict()["readout"]["noise_density_v_per_rthz"] == r.noise_density_v_per_rthz


def test_input_capacitance_given_in_readout_fills_electrical():
    d = _parse(_text(READOUT + 'input_capacitance = "1.5 pF"\n', drop_preamp=True))
    assert d.electrical.preamp_input_capacitance_f == pytest.approx(1.5e-12, rel=1e-12, abs=0)
    assert d.readout.input_capacitance_f == pytest.approx(1.5e-12, rel=1e-12, abs=0)
    with pytest.raises(DesignError, match="one section"):
        _parse(_text(READOUT + 'input_capacitance = "1.5 pF"\n'))


def test_designs_without_readout_read_as_before():
    d = _parse(demo_text())
    assert d.readout is None and "readout" not in d.to_dict()
    assert d.electrical.preamp_input_capacitance_f == pytest.approx(0.2e-12, rel=1e-12, abs=0)


BAD = [
    ("missing noise density", '[readout]\nnoise_corner = "100 Hz"\n', "readout.noise_density"),
    ("noise density without per root hertz", '[readout]\nnoise_density = "10 nV"\n',
     "readout.noise_density"),
    ("negative noise density", '[readout]\nnoise_density = "-10 nV/rtHz"\n',
     "readout.noise_density"),
    ("misspelt key", '[readout]\nnoise_densty = "10 nV/rtHz"\n', "readout.noise_densty"),
    ("gain twice", '[readout]\nnoise_density = "10 nV/rtHz"\ngain = 10\ngain_db = 20\n',
     "readout.gain_db"),
    ("zero gain", '[readout]\nnoise_density = "10 nV/rtHz"\ngain = 0\n', "readout.gain"),
    ("two full scales", '[readout]\nnoise_density = "10 nV/rtHz"\nfull_scale_input = "1 V"\n'
     'full_scale_spl = 120\n', "readout.full_scale_spl"),
    ("zero clipping level", '[readout]\nnoise_density = "10 nV/rtHz"\nclip_amplitude = "0 V"\n',
     "readout.clip_amplitude"),
    ("clipping level in pascal", '[readout]\nnoise_density = "10 nV/rtHz"\n'
     'clip_amplitude = "1 Pa"\n', "readout.clip_amplitude"),
    ("full scale 500 dB", '[readout]\nnoise_density = "10 nV/rtHz"\nfull_scale_spl = 500\n',
     "readout.full_scale_spl"),
    ("input capacitance twice", '[readout]\nnoise_density = "10 nV/rtHz"\n'
     'input_capacitance = "1 pF"\n', "readout.input_capacitance"),
    ("negative charge-pump resistance", '[readout]\nnoise_density = "10 nV/rtHz"\n'
     'charge_pump_resistance = "-1 Mohm"\n', "readout.charge_pump_resistance"),
    ("not a table", 'readout = 3\n', "readout"),
]


@pytest.mark.parametrize("case, section, field", BAD, ids=[b[0] for b in BAD])
def test_bad_readout_input_exits_2_with_one_line(case, section, field, tmp_path, capsys):
    path = tmp_path / "design.toml"
    text = demo_text()
    if section.startswith("readout ="):  # a top-level key must precede the tables
        text = section + text
    else:
        text += section
    path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    code = main(["run", str(path), "-o", str(out)])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2, err
    assert len(err) == 1 and err[0].startswith("diagap: error: ") and field in err[0], err
    assert not out.exists()


# ---- the invented example, end to end -------------------------------------------------------

@pytest.fixture(scope="module")
def example():
    from diagap.pipeline import run_design

    result = run_design(load_design(EXAMPLE).with_accuracy("draft"))
    return result, json.loads(json.dumps(result.summary()))


def test_example_is_packaged_with_every_source(example):
    _, s = example
    r = s["response"]
    assert r["scope"] == "packaged"
    assert set(r["noise_breakdown_dba"]) == {"mechanical_thermal", "bias_resistor", "vent",
                                             "readout", "bias_supply"}
    # the capsule's own sources stay where they were
    assert set(r["noise_contributions_dba_spl"]) == {"mechanical_thermal", "bias_resistor", "vent"}
    power = sum(10 ** (v / 10) for v in r["noise_breakdown_dba"].values())
    assert power == pytest.approx(10 ** (r["noise_dba_spl"] / 10), rel=2e-3, abs=0)
    assert r["snr_db"] == pytest.approx(94.0 - r["noise_dba_spl"], rel=1e-12, abs=0)


def test_example_readout_noise_by_hand(example):
    # e_n²(1 + f_c/f) over |V/p|² of the run's own response, A-weighted (IEC 61672-1) by hand
    result, s = example
    resp = result.sections["response"].objects["response"].response
    f, h = resp.frequency_hz, np.abs(resp.voltage_per_pa)
    grid = np.geomspace(20.0, 20e3, 4001)
    h_g = np.exp(np.interp(np.log(grid), np.log(f), np.log(h)))
    f1, f2, f3, f4 = 20.599, 107.653, 737.862, 12194.217
    ra = f4**2 * grid**4 / ((grid**2 + f1**2) * np.sqrt((grid**2 + f2**2) * (grid**2 + f3**2))
                            * (grid**2 + f4**2)) * 10 ** (2.0 / 20)
    p2 = np.trapezoid((20e-9) ** 2 * (1 + 300.0 / grid) / h_g**2 * ra**2, grid)
    assert s["response"]["noise_breakdown_dba"]["readout"] == \
        pytest.approx(10 * math.log10(p2 / P_REF**2), rel=1e-3, abs=0)


def test_example_levels_of_the_readout(example):
    _, s = example
    r = s["response"]
    sens = r["sensitivity_v_per_pa"]
    # 0.5 V peak clipping and a 0.6 V peak full scale, referred through the 1 kHz sensitivity
    assert r["readout_clip_spl_db"] == pytest.approx(
        20 * math.log10(0.5 / (math.sqrt(2) * sens * P_REF)), rel=1e-9, abs=0)
    assert r["sensitivity_dbfs"] == pytest.approx(20 * math.log10(math.sqrt(2) * sens / 0.6),
                                                  rel=1e-9, abs=0)
    assert r["readout_sensitivity_db_v_per_pa"] == pytest.approx(
        r["sensitivity_db_v_per_pa"] + 20.0, rel=1e-12, abs=0)
    # the invented readout clips before the capsule distorts
    assert r["aop_limited_by"] == "readout clipping"
    assert r["aop_db_spl"] == pytest.approx(r["readout_clip_spl_db"], rel=1e-12, abs=0)
    assert r["aop_db_spl"] < r["capsule_aop_db_spl"]
    assert r["dynamic_range_db"] == pytest.approx(r["aop_db_spl"] - r["noise_dba_spl"],
                                                  rel=1e-12, abs=0)


def test_example_outputs_name_and_show_the_breakdown(example, tmp_path):
    from diagap.names import TEXT_KEYS, lookup
    from diagap.sweep.point import flatten_summary
    from diagap.table import summary_table
    from diagap.writer import write_outputs

    result, s = example
    outputs, _ = flatten_summary(s)
    missing = [k for k, v in outputs.items() if isinstance(v, (int, float))
               and not isinstance(v, bool) and lookup(k) is None]
    assert not missing, missing
    assert {k for k, v in outputs.items() if isinstance(v, str)} <= set(TEXT_KEYS)
    table = summary_table(s)
    assert "noise by source" in table and "readout input noise" in table
    assert "limited by readout clipping" in table and "capsule only" not in table
    write_outputs(result, tmp_path)
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert 'id="noise-breakdown"' in page and 'id="plot-noise_breakdown"' in page
    assert (tmp_path / "plots" / "noise_breakdown.png").is_file()


def test_capsule_only_says_so(example):
    from diagap.table import summary_table

    _, s = example
    capsule = json.loads(json.dumps(s))
    capsule["response"]["scope"] = "capsule"
    assert "capsule only" in summary_table(capsule)
    del capsule["response"]
    assert "capsule only" in summary_table(capsule)
