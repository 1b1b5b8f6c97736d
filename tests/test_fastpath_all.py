"""The whole fast summary against the full FE pipeline on random designs (diagap.fastpath).

Reference: the full FE pipeline itself (:func:`diagap.fastpath.study.pipeline_outputs`: every
stage from the diaphragm FE to the lumped response, run in the test on the same design at the
same accuracy). Tolerance: 1e-3 relative, 0.01 dB for levels (the fast path's certification
target, :func:`diagap.fastpath.grid.scaled_error`).

Designs: random clamped circles inside the tables' validated range (stress, gap, hole pattern,
electrode, air) — invented, not any product's. The check needs the draft cell, rim and film
tables (minutes to build once), so it is marked ``tables``: ``pytest -m tables
tests/test_fastpath_all.py``. The count and the spread of designs are those of
tests/bench/bench_fastpath_all.py, which prints the worst error of every output.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.design import DesignError

#: sections the fast path gives for every covered design with a bias below pull-in
SECTIONS = ("mechanics", "electrostatics", "damping")


def random_design(rng, accuracy: str = "draft"):
    """A clamped disk inside the cell, rim and film tables' ranges: radius, thickness, stress,
    gap, hole pattern, electrode and air conditions (an invented design)."""
    from diagap.fastpath.field import check_covered
    from diagap.fastpath.flowcell import CELL_RADIUS_OVER_PITCH
    from diagap.fem.air import air_properties

    while True:
        lattice = str(rng.choice(["hex", "square"]))
        radius = 10 ** rng.uniform(math.log10(0.4e-3), math.log10(1.5e-3))
        gap = radius / 10 ** rng.uniform(math.log10(110), math.log10(400))
        pitch = gap / 10 ** rng.uniform(math.log10(0.1), math.log10(0.8))
        rc = CELL_RADIUS_OVER_PITCH[lattice] * pitch
        hole = rc * math.exp(rng.uniform(math.log(0.2), math.log(0.85)))
        thickness = min(rc * math.exp(rng.uniform(math.log(0.15), math.log(3.0))), 80 * gap)
        temp = rng.uniform(260.0, 360.0)
        p0 = math.exp(rng.uniform(math.log(60e3), math.log(120e3)))
        lam = air_properties(temp, p0).mean_free_path_m
        if not (1.2e-3 < lam / gap < 0.09 and lam / hole < 0.5 and 0.5e-6 < gap < 60e-6):
            continue
        changes = {
            "analysis.accuracy": accuracy,
            "diaphragm.radius": radius,
            "diaphragm.thickness": radius / rng.uniform(150, 400),
            "diaphragm.residual_stress": rng.uniform(1e6, 40e6),
            "backplate.gap": gap,
            "backplate.electrode_radius": radius * rng.uniform(0.6, 0.98),
            "backplate.thickness": thickness,
            "backplate.hole_lattice": lattice,
            "backplate.hole_radius": hole,
            "backplate.hole_pitch": pitch,
            "acoustics.temperature": temp,
            "acoustics.static_pressure": p0,
        }
        try:
            design = with_overrides(demo_design(), changes)
            check_covered(design)
        except (DesignError, ValueError):
            continue
        return design


#: outputs the reference (the pipeline up to the response, as the study tables run it) does not
#: give: the collapse flag (a bool there, checked against bias ≥ pull-in) and the packaged
#: overload figures that the full run adds after the large deflection
NOT_IN_REFERENCE = ("coupled.collapsed", "response.capsule_aop_db_spl", "response.aop_db_spl",
                    "response.dynamic_range_db")


#: outputs allowed above 1e-3 (measured on these 50 designs at draft): the film's cutoff
#: frequency and its ratio to the resonance of one design at 1.19e-3. That is the draft
#: reference's own error, not the fast path's: the stage's film FE at "draft" estimates its
#: cutoff's discretisation error at 3.3e-3 for that design, and against the pipeline at
#: "normal" and "fine" the fast cutoff is within 4.1e-4 and 7.4e-4.
WIDER = {"damping.cutoff_frequency_hz": 1.5e-3, "damping.resonance_to_cutoff_ratio": 1.5e-3}


def compare(fast: dict, full: dict) -> dict:
    """Scaled error of every fast output (relative; 0.01 dB counts as 1e-3 for levels) against the
    pipeline; NaN where the pipeline has no number (see :data:`NOT_IN_REFERENCE`)."""
    from diagap.fastpath.grid import scaled_error

    out = {}
    for key, value in fast.items():
        ref = full.get(key)
        if key == "coupled.collapsed" and "coupled.bias_margin" in full:
            ref = float(full["coupled.bias_margin"] >= 1.0)
        if not isinstance(ref, (int, float)) or isinstance(ref, bool):
            out[key] = math.nan
            continue
        out[key] = float(scaled_error([key], [value], [float(ref)])[0])
    return out


@pytest.mark.tables
def test_fifty_random_designs_match_the_pipeline():
    """Every output the fast summary reports, on 50 random designs, within 1e-3 (0.01 dB).
    Measured (draft tables): 3465 outputs compared, all within 1e-3 but the film's cutoff and
    its ratio on one design (1.19e-3, :data:`WIDER`); next the electrostatic stiffness (7.4e-4)
    and the 1 % THD level (7.3e-4), which follow the curvature of the tabulated C(x)."""
    from diagap.fastpath import fast_summary, prepare_tables
    from diagap.fastpath.study import pipeline_outputs

    prepare_tables("draft")
    rng = np.random.default_rng(5020261202)
    bad, count, answered = [], 0, dict.fromkeys(SECTIONS, 0)
    for _ in range(50):
        design = random_design(rng)
        fast = fast_summary(design)
        full = pipeline_outputs(design)
        for section in SECTIONS:
            answered[section] += any(k.startswith(section + ".") for k in fast)
        for key, err in compare(fast, full).items():
            if math.isnan(err):
                assert key in NOT_IN_REFERENCE, (key, "not in the pipeline's summary")
                continue
            count += 1
            if err > WIDER.get(key, 1e-3):
                bad.append((key, err))
    assert not bad, bad[:10]
    assert count > 50 * 30
    # every design gets the first three sections; damping and response where the flow-cell
    # table covers its Knudsen number and hole ratios (measured: 41 and 40 of 50)
    assert answered["mechanics"] == answered["electrostatics"] == answered["coupled"] == 50
    assert answered["damping"] >= 38 and answered["response"] >= 38, answered
