"""Every file in examples/ is exercised: design files load and run, scripts import and their
numbers make physical sense."""
import importlib.util
import shutil
from pathlib import Path

import numpy as np
import pytest

from diagap.design import load_design

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("*.toml")), ids=lambda p: p.name)
def test_example_designs_load(path):
    d = load_design(path)
    assert "invented" in d.name


def test_square_example_runs_at_draft():
    from diagap.pipeline import run_design
    s = run_design(load_design(EXAMPLES / "square_nitride.toml")).summary()
    assert s["response"]["sensitivity_db_v_per_pa"] < 0
    assert s["coupled"]["bias_margin"] < 1


def test_hole_tradeoff_script():
    spec = importlib.util.spec_from_file_location("hole_tradeoff", EXAMPLES / "hole_tradeoff.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    # larger holes: less capacitance and less damping (the trade the example shows)
    assert np.all(np.diff(mod.PERFORATION) < 0)
    assert np.all(np.diff(mod.DAMPING) < 0)
    # holes always cost less capacitance than their open area (common practice check)
    open_area = np.pi * mod.RADII_M**2 / (np.sqrt(3) / 2 * mod.PITCH**2)
    assert np.all(mod.PERFORATION > 1 - open_area)


def test_api_tour_script():
    """examples/api_tour.py: the demo with gap 5 µm and bias 12 V through the Python API.

    References from raw inputs: polysilicon E = 160 GPa, ν = 0.22, ρ = 2330 kg/m³ (Sharpe et al.,
    J. MEMS 6, 1997), σ0 = 10 MPa, h = 1 µm, a = 0.5 mm; ε0 from CODATA 2022. The tensioned
    clamped disk lies above Southwell's lower bound f² >= f_membrane² + f_plate² (Southwell 1922,
    [from memory]) with f_membrane = j01/(2πa)·√(T/ρh) and f_plate = 10.2158/(2πa²)·√(D/ρh)
    (Leissa, Vibration of Plates, NASA SP-160, 1969, Table 2.1).
    """
    import json
    import math

    spec = importlib.util.spec_from_file_location("api_tour", EXAMPLES / "api_tour.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    # the overrides took effect, the bad value was refused on one line naming key and value
    assert mod.DESIGN.backplate.gap_m == pytest.approx(5e-6, rel=1e-12, abs=0)
    assert mod.DESIGN.electrical.bias_voltage_v == pytest.approx(12.0, rel=1e-12, abs=0)
    assert "backplate.gap" in mod.REFUSAL and "-1 um" in mod.REFUSAL
    assert "\n" not in mod.REFUSAL
    # objects carry the physics: parallel plates over the electrode, ε0 π r² / g
    eps0 = 8.8541878188e-12
    assert mod.PARALLEL_PLATE_F == pytest.approx(eps0 * math.pi * 0.45e-3**2 / 5e-6, rel=1e-6,
                                                 abs=0)
    # fundamental of the tensioned plate: above Southwell's bound, within 15 % of it
    E, nu, rho, h, a, t = 160e9, 0.22, 2330.0, 1e-6, 0.5e-3, 10e6 * 1e-6
    rho_s, D = rho * h, E * h**3 / (12 * (1 - nu**2))
    f_m = 2.404825557695773 / (2 * math.pi * a) * math.sqrt(t / rho_s)
    f_p = 10.2158 / (2 * math.pi * a**2) * math.sqrt(D / rho_s)
    bound = math.hypot(f_m, f_p)
    assert bound * (1 - 1e-3) <= mod.F1_HZ <= 1.15 * bound
    assert 0 < mod.F1_REL_ERROR < 1e-2
    assert mod.PULL_IN_V > 12.0 and not mod.RESULT.collapsed
    assert mod.SENSITIVITY_V_PER_PA > 0 and mod.DAMPING_N_S_PER_M > 0
    # objects and the summary dictionary agree; the files were written
    assert mod.SUMMARY["mechanics"]["natural_frequencies_hz"][0] == mod.F1_HZ
    assert mod.SUMMARY["electrostatics"]["rest_capacitance_f"] == mod.C0_F
    assert set(mod.VERDICTS.values()) <= {"holds", "marginal", "fails"}
    names = {p.name for p in mod.WRITTEN}
    assert {"summary.json", "report.html", "response.csv", "model.cir"} <= names
    on_disk = json.loads((mod.OUT / "summary.json").read_text())
    assert on_disk["coupled"]["pull_in_voltage_v"] == pytest.approx(mod.PULL_IN_V, rel=1e-12,
                                                                   abs=0)
    shutil.rmtree(mod.OUT)


def test_public_api_names_resolve_and_are_documented():
    import diagap

    for name in diagap.__all__:
        obj = getattr(diagap, name)
        assert obj.__doc__ and obj.__doc__.strip(), name
    with pytest.raises(AttributeError, match="no attribute 'solve'"):
        diagap.solve
