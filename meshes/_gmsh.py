"""A quiet gmsh session as a context manager, and extraction of node/element arrays."""
from __future__ import annotations

import contextlib
import threading

import numpy as np

__all__ = ["gmsh_session", "triangles", "nodes_of"]

_LOCK = threading.Lock()  # the gmsh API is a process-wide singleton


@contextlib.contextmanager
def gmsh_session(name: str = "diagap"):
    """Initialise gmsh silently, yield the module, always finalise."""
    import gmsh

    with _LOCK:
        gmsh.initialize(["-noenv"], readConfigFiles=False, interruptible=False)
        try:
            gmsh.option.setNumber("General.Terminal", 0)
            gmsh.option.setNumber("General.Verbosity", 0)
            gmsh.option.setNumber("General.NumThreads", 1)
            gmsh.model.add(name)
            yield gmsh
        finally:
            gmsh.finalize()


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
