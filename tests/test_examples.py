"""Every file in examples/ is exercised: design files load and run, scripts import and their
numbers make physical sense."""
import importlib.util
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
