"""A study's box table that lacks an output the study needs is not used (diagap.studies.tables).

A box whose corner collapses at its bias (bias at or above pull-in) has no response outputs at
that corner, so the tensor table over the box cannot hold them; the study must then say so and
evaluate its points with the full FE, never answer from a table without the output. The table
builder is replaced here by a stand-in returning a small table (the real build takes minutes);
the logic under test is the check of the table's outputs against the study's paths.
"""
from __future__ import annotations

import logging

import numpy as np
import pytest

from diagap import demo_design
from diagap.fastpath.grid import Axis, TensorTable


def _table(names):
    axes = (Axis("diaphragm.thickness", False, (0.9e-6, 1.1e-6), 2),)
    values = np.ones((2, len(names)))
    return TensorTable(axes, tuple(names), values, np.zeros(len(names), bool),
                       np.zeros(len(names)))


@pytest.fixture()
def fake_build(monkeypatch):
    import diagap.fastpath as fastpath

    made = {}

    def study_table(box, mapper=None, **options):
        return made["table"], made["facts"]

    monkeypatch.setattr(fastpath, "study_table", study_table, raising=False)
    monkeypatch.setattr("diagap.fastpath.study.study_table", study_table)
    return made


@pytest.mark.parametrize("names,uncertified,used", [
    (("coupled.bias_margin", "response.snr_db"), (), True),
    (("coupled.bias_margin",), (), False),                      # response missing (collapse)
    (("coupled.bias_margin", "response.snr_db"), ("response.snr_db",), False),  # uncertified
])
def test_table_used_only_with_every_needed_output(fake_build, names, uncertified, used, caplog):
    from diagap.studies.tables import prepare_tables

    fake_build["table"], fake_build["facts"] = _table(names), {"uncertified": list(uncertified)}
    keys = ("coupled.bias_margin", "response.snr_db")
    ranges = (("diaphragm.thickness", 0.9e-6, 1.1e-6),)
    with caplog.at_level(logging.WARNING):
        evaluator, built = prepare_tables(demo_design().with_accuracy("draft"), keys, ranges,
                                          workers=1)
    assert built.used is used
    assert (evaluator.box is not None) is used
    if not used:
        assert "response.snr_db" in built.reason and "full FE" in built.reason
        assert any("study table incomplete" in r.getMessage() for r in caplog.records)


def test_global_tables_answering_at_every_corner_replace_the_box_table(fake_build, monkeypatch):
    """Where the global tables give every key at the nominal design and the box's corners, no
    box table is built and the evaluations read the global tables; one corner they do not
    answer means the box table (here a stand-in) after all."""
    import diagap.fastpath as fastpath
    from diagap.studies.tables import prepare_tables

    keys = ("coupled.bias_margin", "response.snr_db")
    ranges = (("diaphragm.thickness", 0.9e-6, 1.1e-6), ("backplate.gap", 3.8e-6, 4.2e-6))
    asked = []

    def global_fast(design, box=None, *, mapper=None, **options):
        assert box is None and mapper is fastpath.read_only  # read only, never built here
        asked.append((design.diaphragm.thickness_m, design.backplate.gap_m))
        out = {"coupled.bias_margin": 0.4}
        if design.diaphragm.thickness_m < 1.05e-6 or design.backplate.gap_m < 4.1e-6:
            out["response.snr_db"] = 60.0   # all but the (thick, wide) corner
        return out

    monkeypatch.setattr(fastpath, "fast_summary", global_fast)
    fake_build["table"], fake_build["facts"] = _table(keys), {"uncertified": []}
    design = demo_design().with_accuracy("draft")
    evaluator, built = prepare_tables(design, keys, ranges, workers=1)
    assert built.used and built.kind == "box" and evaluator.box is not None
    assert (1.1e-6, 4.2e-6) in asked

    monkeypatch.setattr(fastpath, "fast_summary",
                        lambda d, box=None, *, mapper=None, **o: {k: 1.0 for k in keys})
    evaluator, built = prepare_tables(design, keys, ranges, workers=1)
    assert built.used and built.kind == "global" and evaluator.box is None
    assert built.to_dict()["kind"] == "global"
    evaluator, built = prepare_tables(design, keys, ranges, workers=1,
                                      table_options={"box_only": True})
    assert built.kind == "box" and evaluator.box is not None


@pytest.mark.parametrize("margin,covered", [(1.2, True), (1.005, False)])
def test_corner_collapsed_beyond_doubt_counts_as_answered(fake_build, monkeypatch, margin,
                                                          covered):
    """A corner biased clearly beyond pull-in has no response in the full FE either (the
    pipeline skips it): the global tables cover such a box. A corner whose collapse is within
    ten times the bias margin's certified 1e-3 of pull-in does not count."""
    import diagap.fastpath as fastpath
    from diagap.studies.tables import prepare_tables

    keys = ("coupled.bias_margin", "response.snr_db")
    ranges = (("backplate.gap", 3.8e-6, 4.2e-6),)

    def global_fast(design, box=None, *, mapper=None, **options):
        if design.backplate.gap_m < 3.9e-6:  # the narrow-gap corner collapses
            return {"coupled.bias_margin": margin, "coupled.collapsed": 1.0}
        return {"coupled.bias_margin": 0.5, "coupled.collapsed": 0.0, "response.snr_db": 60.0}

    monkeypatch.setattr(fastpath, "fast_summary", global_fast)
    fake_build["table"], fake_build["facts"] = _table(keys), {"uncertified": []}
    evaluator, built = prepare_tables(demo_design().with_accuracy("draft"), keys, ranges,
                                      workers=1)
    assert (built.kind == "global") is covered


def test_optimisation_builds_the_patches_of_its_family(fake_build, monkeypatch):
    """An optimisation (``build_global``) whose box lies in the global tables' family builds
    its patches of the global tables (:mod:`diagap.fastpath.patches`) through the fast summary
    of its nominal design and corners, then reads them, with no box table;
    a box outside the family (a simply supported edge) or a tolerance study (no
    ``build_global``) or one worker (no build in this process) builds the box table; a box the
    built tables still do not cover falls back to it."""
    import diagap.fastpath as fastpath
    from diagap import with_overrides
    from diagap.studies.tables import prepare_tables

    keys = ("coupled.bias_margin", "response.snr_db")
    ranges = (("backplate.hole_radius", 3e-6, 5e-6), ("backplate.hole_pitch", 18e-6, 22e-6))
    built_for: list = []
    state = {"built": False, "answers": True}

    def global_fast(design, box=None, *, mapper=None, patches=None, **options):
        if patches is None:  # the global tables themselves are not built
            raise fastpath.FastPathUnavailable("flowcell table not built")
        assert patches.region("flowcell", "draft") is not None
        if mapper is not fastpath.read_only:  # a building mapper: the tables now exist
            built_for.append((design.backplate.hole_radius_m, design.backplate.hole_pitch_m))
            state["built"] = True
        if not (state["built"] and state["answers"]):
            raise fastpath.FastPathUnavailable("flowcell table not built")
        return {k: 1.0 for k in keys}

    monkeypatch.setattr(fastpath, "fast_summary", global_fast)
    fake_build["table"], fake_build["facts"] = _table(keys), {"uncertified": []}
    design = demo_design().with_accuracy("draft")

    evaluator, built = prepare_tables(design, keys, ranges, workers=1)  # tolerance-like
    assert built.kind == "box" and evaluator.box is not None and not built_for

    evaluator, built = prepare_tables(design, keys, ranges, workers=1, build_global=True)
    assert built.kind == "box" and not built_for  # one worker: no global build in-process

    evaluator, built = prepare_tables(design, keys, ranges, workers=2, build_global=True)
    assert built.used and built.kind == "patches" and evaluator.box is None
    assert evaluator.patches.region("cell-hex", "draft") is not None
    assert len(built_for) == 5 and (5e-6, 22e-6) in built_for  # nominal and four corners

    state["built"], built_for[:] = False, []
    supported = with_overrides(design, {"diaphragm.edge": "simply-supported"})
    evaluator, built = prepare_tables(supported, keys, ranges, workers=2, build_global=True)
    assert built.kind == "box" and not built_for  # outside the family: nothing built

    state["answers"] = False  # built, but a key still missing at the corners
    evaluator, built = prepare_tables(design, keys, ranges, workers=2, build_global=True)
    assert built.kind == "box" and evaluator.box is not None and len(built_for) == 5
