"""A gmsh session leaves the process's signal dispositions as Python sets them.

gmsh's initialisation resets SIGPIPE to "terminate"; Python ignores SIGPIPE (the Python
Language Reference, "signal" module: "SIGPIPE is ignored ... so that writing to a closed pipe
raises BrokenPipeError"). Checked in the kernel's own view (/proc/self/status, SigIgn mask).
"""
import signal
import sys
import threading

import pytest

from diagap.meshes._gmsh import gmsh_session

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"),
                                reason="reads /proc/self/status (Linux only)")


def _sigpipe_ignored() -> bool:
    for line in open("/proc/self/status", encoding="ascii"):
        if line.startswith("SigIgn:"):
            return bool(int(line.split()[1], 16) >> (int(signal.SIGPIPE) - 1) & 1)
    raise AssertionError("no SigIgn line")


def test_sigpipe_stays_ignored_in_and_after_a_session():
    assert _sigpipe_ignored()
    with gmsh_session():
        assert _sigpipe_ignored()
    assert _sigpipe_ignored()


def test_sigpipe_stays_ignored_when_meshing_in_a_thread():
    seen = []

    def mesh():
        with gmsh_session():
            seen.append(_sigpipe_ignored())

    worker = threading.Thread(target=mesh)
    worker.start()
    worker.join()
    assert seen == [True] and _sigpipe_ignored()
