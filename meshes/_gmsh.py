"""A quiet gmsh session as a context manager, and extraction of node/element arrays."""
from __future__ import annotations

import contextlib
import threading

import numpy as np

__all__ = ["gmsh_session", "triangles", "nodes_of"]

_LOCK = threading.Lock()  # the gmsh API is a process-wide singleton


def _ignore_sigpipe() -> None:
    """Set SIGPIPE back to "ignore", Python's own setting, from any thread.

    gmsh's initialisation resets SIGPIPE to its default action (terminate the process). Python
    ignores it so that a write to a closed pipe or socket raises ``BrokenPipeError``; without
    that, a process that has meshed is killed outright when, say, a worker of its process pool
    dies or a Dask connection drops.
    """
    import signal

    if not hasattr(signal, "SIGPIPE"):  # pragma: no cover - not POSIX
        return
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGPIPE, signal.SIG_IGN)
    else:
        import ctypes

        ctypes.CDLL(None).signal(int(signal.SIGPIPE), ctypes.c_void_p(int(signal.SIG_IGN)))


@contextlib.contextmanager
def gmsh_session(name: str = "diagap"):
    """Initialise gmsh silently, yield the module, always finalise."""
    import gmsh

    with _LOCK:
        gmsh.initialize(["-noenv"], readConfigFiles=False, interruptible=False)
        _ignore_sigpipe()
        try:
            gmsh.option.setNumber("General.Terminal", 0)
            gmsh.option.setNumber("General.Verbosity", 0)
            gmsh.option.setNumber("General.NumThreads", 1)
            gmsh.model.add(name)
            yield gmsh
        finally:
            gmsh.finalize()
            _ignore_sigpipe()


def nodes_of(gmsh, dim: int = 2):
    """All mesh nodes as a (dim, N) array and a map from gmsh node tag to column index."""
    tags, coords, _ = gmsh.model.mesh.getNodes()
    xyz = coords.reshape(-1, 3).T
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(tags.size)
    return xyz[:dim].copy(), index


def triangles(gmsh):
    """(p, t) of the linear triangles of the current 2D model, unused nodes removed."""
    p, index = nodes_of(gmsh, 2)
    etypes, _, enodes = gmsh.model.mesh.getElements(2)
    blocks = [index[n.astype(np.int64)].reshape(-1, 3) for et, n in zip(etypes, enodes) if et == 2]
    t = np.vstack(blocks).T
    used = np.unique(t)
    remap = np.full(p.shape[1], -1, dtype=np.int64)
    remap[used] = np.arange(used.size)
    return p[:, used], remap[t]
