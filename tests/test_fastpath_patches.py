"""A study's patches of the global tables (diagap.fastpath.patches).

References are the scaled FE functions the global tables tabulate (the cell, rim and Stokes
cell solvers, called directly) and, in the marked check, the full FE pipeline; the region's
bounds are checked against the groups computed here by hand from the raw design values
(R_c = p·√(√3/2π) of the hexagonal lattice's circle of equal area).
"""
from __future__ import annotations

import math
import pickle

import numpy as np
import pytest

from diagap import demo_design, with_overrides
from diagap.fastpath import FastPathUnavailable
from diagap.fastpath.patches import (MARGIN, PatchSet, _ByHead, patch_table, study_patches,
                                     table_points, using)
from diagap.fastpath.refine import serial_mapper

OPTIMISE_BOX = (("backplate.hole_radius", 2e-6, 6e-6), ("backplate.hole_pitch", 14e-6, 30e-6),
                ("backplate.electrode_radius", 0.3e-3, 0.48e-3))


def _design():
    return demo_design().with_accuracy("draft")


def test_region_holds_every_corner_and_fixes_what_the_box_does_not_move():
    design = _design()
    patches = study_patches(design, OPTIMISE_BOX)
    regions = {r.name: r for r in patches.regions}
    assert set(regions) == {"cell-hex", "rim", "flowcell"}
    flow = regions["flowcell"]
    # t/R_c by hand at the pitch bounds; the region holds them and is at most 1 % (of its
    # log width) wider on either side
    rc = math.sqrt(math.sqrt(3.0) / (2.0 * math.pi))
    t = design.backplate.thickness_m
    lo, hi = t / (rc * 30e-6), t / (rc * 14e-6)
    width = math.log(hi / lo)
    assert lo * math.exp(-1.001 * MARGIN * width) <= flow.lows[2] <= lo
    assert hi <= flow.highs[2] <= hi * math.exp(1.001 * MARGIN * width)
    # the gap is not varied: the Knudsen number is fixed, as is the rim's t/g
    assert flow.lows[3] == flow.highs[3]
    assert regions["rim"].lows[1] == regions["rim"].highs[1] == pytest.approx(0.5, rel=1e-12, abs=0)
    # every corner's coordinates lie in the regions
    for radius in (2e-6, 6e-6):
        for pitch in (14e-6, 30e-6):
            for electrode in (0.3e-3, 0.48e-3):
                corner = with_overrides(design, {"backplate.hole_radius": radius,
                                                 "backplate.hole_pitch": pitch,
                                                 "backplate.electrode_radius": electrode})
                for name, points in table_points(corner).items():
                    r = regions[name]
                    for x in points:
                        assert all(a * (1 - 1e-12) <= v <= b * (1 + 1e-12)
                                   for v, a, b in zip(x, r.lows, r.highs)), (name, x)


def test_regions_stop_at_the_global_tables_range():
    """Holes up to r/R_c = 0.905 (beyond the flow cell's 0.86) and a/p = 0.475 (beyond the
    cell table's 0.45): the regions end at those limits; a box (and nominal design) entirely
    beyond them gets no patch of those tables (the fast path refuses such designs before
    reading a table)."""
    from diagap.fastpath import cells, flowcell

    design = _design()  # pitch 20 µm, hexagonal lattice
    partly = {r.name: r for r in study_patches(
        design, (("backplate.hole_radius", 4e-6, 9.5e-6),)).regions}
    q = flowcell.CELL_RANGE["hole_radius_over_cell_radius"][1]
    assert partly["flowcell"].highs[0] == pytest.approx(q / (1 - q), rel=1e-9, abs=0)
    a = cells.CELL_RANGE["hole_radius_over_pitch"][1]
    assert partly["cell-hex"].lows[0] == pytest.approx(0.5 - a, rel=1e-9, abs=0)
    wide_holes = with_overrides(design, {"backplate.hole_radius": 9.7e-6})  # nominal inside
    beyond = study_patches(wide_holes, (("backplate.hole_radius", 9.6e-6, 9.8e-6),))
    assert {r.name for r in beyond.regions} == {"rim"}


def test_a_patch_agrees_with_the_cell_fe_and_refuses_outside_its_region():
    """Only the electrode radius varies: the cell table's patch has one free axis, the local
    gap over pitch of the c(g) samples; between its nodes it agrees with the cell FE within
    its tolerance, and outside its region it raises (one line naming the group)."""
    from diagap.fastpath.cells import scaled_cell

    design = _design()
    patches = study_patches(design, (("backplate.electrode_radius", 0.3e-3, 0.48e-3),))
    region = patches.region("cell-hex", "draft")
    assert region.lows[:2] == region.highs[:2] and region.lows[2] < region.highs[2]
    table, facts = patch_table(region, serial_mapper)
    assert len(facts["nodes"]) == 1 and not facts["uncertified"]
    tol = 2.5e-4
    assert table.held_out_error[0] <= tol
    rng = np.random.default_rng(3)
    for u in rng.random(3):
        g = region.lows[2] * (region.highs[2] / region.lows[2]) ** u
        x = (region.lows[0], region.lows[1], g)
        ref = scaled_cell("hex", "draft", x)["perforation_factor"]
        assert table(x)[0] == pytest.approx(ref, rel=tol, abs=0)
    with pytest.raises(FastPathUnavailable, match="half_web_over_pitch = .* outside"):
        table((region.lows[0] * 1.01, region.lows[1], region.lows[2]))
    with pytest.raises(FastPathUnavailable, match="gap_over_pitch"):
        table((region.lows[0], region.lows[1], region.highs[2] * 1.01))


def test_a_patch_with_nothing_free_is_the_fe_value_itself():
    """The flow cell of a box that moves none of its groups: one Stokes solve."""
    from diagap.fastpath.flowcell import scaled_cell

    design = _design()
    patches = study_patches(design, (("backplate.electrode_radius", 0.3e-3, 0.48e-3),))
    region = patches.region("flowcell", "draft")
    assert region.lows == region.highs
    table, facts = patch_table(region, serial_mapper)
    assert facts["reference_points"] == 1
    ref = scaled_cell("draft", region.lows)["resistance_factor"]
    assert table(region.lows)[list(table.names).index("resistance_factor")] == \
        pytest.approx(ref, rel=1e-12, abs=0)
    with pytest.raises(FastPathUnavailable, match="knudsen"):
        table((*region.lows[:3], region.lows[3] * 1.001))


def test_knudsen_batches_agree_with_single_solves():
    """Points that differ only in the Knudsen number share one mesh (one Stokes assembly)."""
    from diagap.fastpath.flowcell import scaled_cell, scaled_cells

    template = (0.5, 0.2, 0.3, 0.02)  # the free values differ from the template's
    mapper = _ByHead(serial_mapper, lambda head, lasts: scaled_cells("draft", head, lasts),
                     template, (1, 3))
    rows = mapper(None, [(0.4, 0.01), (0.4, 0.05)])
    for (gc, kn), row in zip([(0.4, 0.01), (0.4, 0.05)], rows):
        ref = scaled_cell("draft", (0.5, gc, 0.3, kn))["resistance_factor"]
        assert row["resistance_factor"] == pytest.approx(ref, rel=1e-9, abs=0)


def test_patches_travel_with_the_evaluator_and_leave_the_global_tables_otherwise():
    from diagap.evaluate import KeyEvaluator
    from diagap.fastpath.patches import active, active_table

    patches = study_patches(_design(), OPTIMISE_BOX)
    ev = KeyEvaluator(("response.snr_db",), False, patches=patches)
    back = pickle.loads(pickle.dumps(ev))
    assert back.patches == patches and "patches=PatchSet('draft'" in repr(ev)
    assert active() is None and active_table("rim", "draft", serial_mapper) is None
    with using(patches):
        assert active() is patches
        assert active_table("rim", "normal", serial_mapper) is None  # another accuracy
        assert active_table("cell-square", "draft", serial_mapper) is None  # not in the box
    assert active() is None
    assert isinstance(patches, PatchSet) and hash(patches) == hash(back.patches)


@pytest.mark.tables
def test_patches_of_the_demo_optimisation_match_the_pipeline():
    """The fast summary read from the optimisation box's patches against the full FE pipeline
    at six random designs of the box: every output within 1e-3 (0.01 dB). Measured
    (tests/bench/bench_patches.py, 20 designs at draft): 1536 outputs, the largest the film's
    cutoff 9.1e-4 (the draft reference's own error is of that size, test_fastpath_all.WIDER)."""
    from diagap.fastpath import fast_summary
    from diagap.fastpath.refine import close_mapper, mapper_for
    from diagap.fastpath.study import pipeline_outputs
    from test_fastpath_all import NOT_IN_REFERENCE, WIDER, compare

    design = _design()
    patches = study_patches(design, OPTIMISE_BOX)
    mapper = mapper_for()
    try:
        fast_summary(design, mapper=mapper, patches=patches)
    finally:
        close_mapper(mapper)
    rng = np.random.default_rng(7)
    bad, count = [], 0
    for _ in range(6):
        d = with_overrides(design, {p: lo + (hi - lo) * rng.random()
                                    for p, lo, hi in OPTIMISE_BOX})
        fast = fast_summary(d, patches=patches)
        assert "damping.hole_resistance_pa_s_per_m3" in fast and "response.snr_db" in fast
        for key, err in compare(fast, pipeline_outputs(d)).items():
            if math.isnan(err):
                assert key in NOT_IN_REFERENCE, key
                continue
            count += 1
            if err > WIDER.get(key, 1e-3):
                bad.append((key, err))
    assert not bad, bad[:10]
    assert count > 6 * 60
