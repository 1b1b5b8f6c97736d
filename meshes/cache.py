"""On-disk cache of generated meshes, keyed by a hash of the geometry and mesh settings.

The cache directory follows the platform's conventions (``platformdirs.user_cache_dir``); the
environment variable ``DIAGAP_CACHE_DIR`` overrides it and ``DIAGAP_NO_CACHE=1`` (or
:func:`set_enabled(False) <set_enabled>`, used by the CLI's ``--no-cache``) turns caching off.
Meshes are stored as ``.npz`` files holding the point and cell arrays in scaled coordinates.
"""
from __future__ import annotations

import hashlib
import json
import os
import tempfile
from pathlib import Path
from typing import Callable

import numpy as np

__all__ = ["cache_dir", "cache_key", "cached_arrays", "set_enabled", "enabled"]

_STATE = {"enabled": os.environ.get("DIAGAP_NO_CACHE", "") not in ("1", "true", "yes")}
_VERSION = 1  # bump when a mesh generator changes its output


def set_enabled(flag: bool) -> None:
    """Turn the on-disk mesh cache on or off for this process."""
    _STATE["enabled"] = bool(flag)


def enabled() -> bool:
    return _STATE["enabled"]


def cache_dir() -> Path:
    """The directory holding cached meshes (created on demand)."""
    env = os.environ.get("DIAGAP_CACHE_DIR")
    if env:
        return Path(env)
    from platformdirs import user_cache_dir

    return Path(user_cache_dir("diagap")) / "meshes"


def cache_key(kind: str, params: dict) -> str:
    """A stable hash of a mesh kind and its parameters (floats rounded to 12 significant digits)."""

    def norm(v):
        if isinstance(v, float):
            return float(f"{v:.12g}")
        if isinstance(v, (list, tuple)):
            return [norm(x) for x in v]
        if isinstance(v, dict):
            return {k: norm(x) for k, x in sorted(v.items())}
        return v

    blob = json.dumps({"kind": kind, "v": _VERSION, "p": norm(params)}, sort_keys=True)
    return hashlib.sha256(blob.encode()).hexdigest()[:24]


def cached_arrays(kind: str, params: dict, build: Callable[[], dict]) -> dict:
    """Return the arrays for ``(kind, params)``, building and storing them on a miss.

    ``build`` returns a dict of numpy arrays (for example ``{"p": points, "t": cells}``).
    Writes are atomic (temporary file then rename) so parallel sweep workers never read a
    half-written file.
    """
    if not enabled():
        return build()
    path = cache_dir() / f"{kind}-{cache_key(kind, params)}.npz"
    if path.exists():
        try:
            with np.load(path) as data:
                return {k: data[k] for k in data.files}
        except (OSError, ValueError):
            pass  # corrupt entry: rebuild below
    arrays = build()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".npz.tmp")
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, **arrays)
        os.replace(tmp, path)
    except OSError:
        pass  # a read-only cache is not an error
    return arrays
