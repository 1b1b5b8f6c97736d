"""The on-disk cache: damaged entries are rebuilt, results equal a cold run's; code changes
invalidate entries.

A cold run of the demo design at draft accuracy fills a fresh cache; each test copies that cache,
damages every entry in one way (truncated, empty, one flipped bit, values multiplied by 1.1 and
saved again with the old checksum) and runs again: every numeric output and uncertainty must equal
the cold run's (rel=1e-12, abs=0), every entry must be rebuilt to the cold run's arrays, and the
damage is reported by exactly one warning.
"""
import json
import logging
import shutil

import numpy as np
import pytest

from diagap.design import demo_design
from diagap.meshes import cache
from diagap.pipeline import run_design
from diagap.sweep.point import flatten_summary
from diagap.writer import json_ready

LOGGER = "diagap.meshes.cache"


def _values(design) -> dict:
    summary = json_ready(run_design(design).summary())
    outputs, uncertainty = flatten_summary(summary)
    return {**outputs, **{f"uncertainty.{k}": v for k, v in uncertainty.items()}}


def _arrays(path) -> dict:
    with np.load(path, allow_pickle=False) as data:
        return {k: data[k] for k in data.files}


@pytest.fixture(scope="module")
def cold(tmp_path_factory):
    """(cache folder, design, values) of a cold run in a fresh cache."""
    folder = tmp_path_factory.mktemp("cold-cache")
    design = demo_design().with_accuracy("draft")
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("DIAGAP_CACHE_DIR", str(folder))
        mp.setattr(cache, "_STATE", {**cache._STATE, "enabled": True})
        from diagap.fem.plate.shared import clear_shared_plates

        clear_shared_plates()  # a cold run: no plates kept in memory by earlier tests
        values = _values(design)
    entries = sorted(p.name for p in folder.glob("*.npz"))
    assert any(n.startswith("disk-") for n in entries)
    assert any(n.startswith("cell-table-solution-") for n in entries)
    assert any(n.startswith("electrode-pair-solution-") for n in entries)
    return folder, design, values


def _truncate(path):
    data = path.read_bytes()
    path.write_bytes(data[:len(data) // 2])


def _empty(path):
    path.write_bytes(b"")


def _flip_bit(path):
    data = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0x10
    path.write_bytes(bytes(data))


def _scale_values(path):
    """Multiply every float array by 1.1 and save again with the stored metadata unchanged."""
    arrays = _arrays(path)
    for k, a in arrays.items():
        if a.dtype.kind == "f":
            arrays[k] = a * 1.1
    with open(path, "wb") as fh:
        np.savez(fh, **arrays)


@pytest.mark.parametrize("damage", [_truncate, _empty, _flip_bit, _scale_values],
                         ids=["truncated", "empty", "bit-flipped", "altered-values"])
def test_damaged_entries_are_rebuilt_and_results_equal_a_cold_run(cold, damage, tmp_path,
                                                                  monkeypatch, caplog):
    folder, design, reference = cold
    work = tmp_path / "cache"
    shutil.copytree(folder, work)
    entries = sorted(work.glob("*.npz"))
    for path in entries:
        damage(path)
    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(work))
    monkeypatch.setattr(cache, "_STATE", {**cache._STATE, "enabled": True, "warned": False})
    from diagap.fem.plate.shared import clear_shared_plates

    clear_shared_plates()  # as a new process: the plates come from the (damaged) cache
    with caplog.at_level(logging.INFO, logger=LOGGER):
        values = _values(design)
    assert values.keys() == reference.keys()
    for key, ref in reference.items():
        if isinstance(ref, float):
            assert values[key] == pytest.approx(ref, rel=1e-12, abs=0), key
        else:
            assert values[key] == ref, key
    for path in entries:  # every damaged entry was rebuilt to the cold run's arrays
        got, want = _arrays(path), _arrays(folder / path.name)
        assert got.keys() == want.keys()
        for k in want:
            assert np.array_equal(got[k], want[k]), (path.name, k)
    warnings = [r for r in caplog.records if r.name == LOGGER and r.levelno == logging.WARNING]
    assert len(warnings) == 1 and "discarded a damaged cache entry" in warnings[0].getMessage()
    infos = [r for r in caplog.records if r.name == LOGGER and r.levelno == logging.INFO]
    assert len(infos) == len(entries) - 1


def _counting_build(calls):
    def build():
        calls.append(1)
        return {"c": np.linspace(1e-4, 2e-4, 5), "n": np.array([7])}
    return build


def test_code_change_invalidates_entries(tmp_path, monkeypatch):
    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(cache, "_STATE", {**cache._STATE, "enabled": True})
    calls = []
    build = _counting_build(calls)
    first = cache.cached_arrays("probe", {"g": 1e-6}, build)
    again = cache.cached_arrays("probe", {"g": 1e-6}, build)
    assert len(calls) == 1 and np.array_equal(first["c"], again["c"])
    monkeypatch.setattr(cache, "code_hash", lambda module: "0" * 64)  # the solver was edited
    cache.cached_arrays("probe", {"g": 1e-6}, build)
    assert len(calls) == 2
    cache.cached_arrays("probe", {"g": 1e-6}, build)
    assert len(calls) == 2


def test_entry_of_other_code_under_the_same_name_is_rebuilt(tmp_path, monkeypatch, caplog):
    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(cache, "_STATE", {**cache._STATE, "enabled": True, "warned": False})
    calls = []
    build = _counting_build(calls)
    cache.cached_arrays("probe", {"g": 1e-6}, build)
    (path,) = tmp_path.glob("probe-*.npz")
    arrays = _arrays(path)
    meta = json.loads(arrays["__diagap_meta__"].tobytes())
    meta["code"] = "f" * 64  # consistent checksum, but written by other code
    arrays["__diagap_meta__"] = np.frombuffer(json.dumps(meta).encode(), dtype=np.uint8)
    with open(path, "wb") as fh:
        np.savez(fh, **arrays)
    with caplog.at_level(logging.WARNING, logger=LOGGER):
        cache.cached_arrays("probe", {"g": 1e-6}, build)
    assert len(calls) == 2 and "made by other code" in caplog.text


def test_code_hash_follows_the_source(tmp_path):
    pkg = tmp_path / "pkg"
    (pkg / "sub").mkdir(parents=True)
    (pkg / "a.py").write_text("x = 1\n")
    (pkg / "sub" / "b.py").write_text("y = 2\n")
    before = cache.tree_hash({"fem": pkg})
    assert cache.tree_hash({"fem": pkg}) == before
    (pkg / "sub" / "b.py").write_text("y = 3\n")
    edited = cache.tree_hash({"fem": pkg})
    (pkg / "sub" / "c.py").write_text("")
    assert len({before, edited, cache.tree_hash({"fem": pkg})}) == 3
    # meshes are keyed by the meshes source only, solver results by the meshes and fem source
    assert cache.code_hash("diagap.meshes.cell") != cache.code_hash("diagap.fem.field.rim")
    assert cache.code_hash("diagap.fem.field.rim") == cache.code_hash("diagap.fem.field.cell_table")


def test_unwritable_cache_is_not_an_error(tmp_path, monkeypatch):
    target = tmp_path / "file"
    target.write_text("not a folder")
    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(target / "cache"))
    monkeypatch.setattr(cache, "_STATE", {**cache._STATE, "enabled": True})
    calls = []
    out = cache.cached_arrays("probe", {"g": 1e-6}, _counting_build(calls))
    assert len(calls) == 1 and out["n"][0] == 7


def test_temporary_files_of_killed_writers_are_removed(tmp_path, monkeypatch):
    import os
    import time

    monkeypatch.setenv("DIAGAP_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(cache, "_STATE", {**cache._STATE, "enabled": True, "swept": False})
    old = tmp_path / ".disk-0123.npz.abcd.tmp"  # a writer killed two hours ago
    young = tmp_path / ".disk-4567.npz.efgh.tmp"  # another process writing right now
    for p in (old, young):
        p.write_bytes(b"partial")
    two_hours_ago = time.time() - 7200
    os.utime(old, (two_hours_ago, two_hours_ago))
    cache.cached_arrays("probe", {"g": 1e-6}, _counting_build([]))
    assert not old.exists() and young.exists()
    assert [p.name for p in tmp_path.glob(".*.tmp")] == [young.name]
