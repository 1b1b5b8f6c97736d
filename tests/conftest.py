"""Session-wide test settings.

* A fresh, empty on-disk cache for the whole session: ``DIAGAP_CACHE_DIR`` points at a temporary
  folder before diagap is imported, so the tests never read (or pollute) the user's real mesh and
  solution cache, and a solver change cannot pass on stale cached solutions. Subprocesses started
  by the tests (the command-line checks) inherit the variable through ``os.environ``.
* External checks (ngspice, chromium) are marked ``@pytest.mark.external_tool(name, found,
  reason)``: without the tool they are skipped with the reason printed (``-ra`` in addopts); when
  the environment variable ``CI`` is set, a missing tool is a failure instead, so CI cannot pass
  with an external check silently left out.
"""
from __future__ import annotations

import os
import shutil
import tempfile

import pytest

_SESSION_CACHE: dict[str, str] = {}


def on_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no")


def pytest_configure(config):
    config.addinivalue_line(
        "markers", "external_tool(name, found, reason): check needing an external program; "
        "skipped without it, a failure when CI is set")
    if "dir" not in _SESSION_CACHE:
        _SESSION_CACHE["previous"] = os.environ.get("DIAGAP_CACHE_DIR")
        _SESSION_CACHE["dir"] = tempfile.mkdtemp(prefix="diagap-test-cache-")
        os.environ["DIAGAP_CACHE_DIR"] = _SESSION_CACHE["dir"]


def pytest_unconfigure(config):
    d = _SESSION_CACHE.pop("dir", None)
    if d is None:
        return
    previous = _SESSION_CACHE.pop("previous", None)
    if previous is None:
        os.environ.pop("DIAGAP_CACHE_DIR", None)
    else:
        os.environ["DIAGAP_CACHE_DIR"] = previous
    shutil.rmtree(d, ignore_errors=True)


def pytest_report_header(config):
    return f"diagap test cache (fresh for this session): {os.environ.get('DIAGAP_CACHE_DIR')}"


def pytest_runtest_setup(item):
    for mark in item.iter_markers("external_tool"):
        name, found, reason = mark.args
        if found:
            continue
        if on_ci():
            pytest.fail(f"{name} not found on CI (CI={os.environ.get('CI')!r}): {reason}",
                        pytrace=False)
        pytest.skip(reason)


@pytest.fixture(scope="session")
def diagap_cache_dir():
    """The session's temporary cache folder (the value of DIAGAP_CACHE_DIR)."""
    return os.environ["DIAGAP_CACHE_DIR"]
