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
