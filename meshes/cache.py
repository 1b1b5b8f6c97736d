"""On-disk cache of generated meshes and solver results, keyed by their inputs and by the code.

The cache directory follows the platform's conventions (``platformdirs.user_cache_dir``); the
environment variable ``DIAGAP_CACHE_DIR`` overrides it and ``DIAGAP_NO_CACHE=1`` (or
:func:`set_enabled(False) <set_enabled>`, used by the CLI's ``--no-cache``) turns caching off.

An entry is one ``.npz`` file (numpy arrays, no pickles) named ``<kind>-<key>.npz``, where the
key hashes the kind, the parameters (floats rounded to 12 significant digits) and the *code
hash*: a SHA-256 of the source files of the package that produces the entry and of the packages
it depends on (``meshes`` for meshes; ``meshes`` and ``fem`` for solver results), and of the
versions of gmsh, scikit-fem, numpy and scipy. It is computed once per process; any edit of the
producing code gives new keys, so stale entries are never read (no hand-bumped version number).

Every entry also stores, in an extra array ``__diagap_meta__`` (JSON text), the code hash and a
SHA-256 checksum of its content (each array's name, dtype, shape and bytes). On load, an entry
that cannot be read (truncated, empty, not a zip file, bit-flipped) or whose checksum or code
hash does not match (altered values) is discarded and rebuilt; the first such entry of a process
is reported with ``logging.warning``, later ones at INFO level. A damaged cache never stops a run.

Writes are atomic (a hidden temporary file in the cache directory, flushed and fsync'ed, then
``os.replace``), so parallel sweep workers never read a half-written entry; temporary files left
by a killed process are removed after an hour.
"""
from __future__ import annotations

import hashlib
import json
import logging
import os
import sys
import tempfile
import time
from functools import lru_cache
from pathlib import Path
from typing import Callable

import numpy as np

__all__ = ["cache_dir", "cache_key", "cached_arrays", "set_enabled", "enabled", "code_hash",
           "content_checksum", "tree_hash"]

log = logging.getLogger(__name__)

_STATE = {"enabled": os.environ.get("DIAGAP_NO_CACHE", "") not in ("1", "true", "yes"),
          "warned": False, "swept": False}
_META = "__diagap_meta__"
_ROOMS = ("meshes", "fem")  # producing packages, in dependency order (fem uses meshes)
_LIBRARIES = ("gmsh", "scikit-fem", "numpy", "scipy")
_STALE_TMP_S = 3600.0


def set_enabled(flag: bool) -> None:
    """Turn the on-disk cache on or off for this process."""
    _STATE["enabled"] = bool(flag)


def enabled() -> bool:
    return _STATE["enabled"]


def cache_dir() -> Path:
    """The directory holding cache entries (created on demand)."""
    env = os.environ.get("DIAGAP_CACHE_DIR")
    if env:
        return Path(env)
    from platformdirs import user_cache_dir

    return Path(user_cache_dir("diagap")) / "meshes"


def _room_of(module: str) -> str:
    """The producing package of a module name: 'meshes' or 'fem' (anything else: 'fem')."""
    parts = module.split(".")
    if len(parts) > 1 and parts[0] == "diagap" and parts[1] == "meshes":
        return "meshes"
    return "fem"


def tree_hash(roots: dict) -> str:
    """SHA-256 of every ``*.py`` file (relative name and bytes) under each ``{label: folder}``."""
    h = hashlib.sha256()
    for label, root in sorted(roots.items()):
        for path in sorted(Path(root).rglob("*.py")):
            h.update(f"{label}/{path.relative_to(root).as_posix()}\0".encode())
            h.update(path.read_bytes())
            h.update(b"\0")
    return h.hexdigest()


@lru_cache(maxsize=None)
def _source_hash(room: str) -> str:
    """SHA-256 of the source files of ``room`` and the rooms before it, and library versions."""
    from importlib import import_module
    from importlib.metadata import PackageNotFoundError, version

    roots = {name: Path(import_module(f"diagap.{name}").__file__).parent
             for name in _ROOMS[:_ROOMS.index(room) + 1]}
    h = hashlib.sha256(tree_hash(roots).encode())
    for lib in _LIBRARIES:
        try:
            h.update(f"{lib}={version(lib)}\0".encode())
        except PackageNotFoundError:  # pragma: no cover - all are dependencies
            h.update(f"{lib}=?\0".encode())
    return h.hexdigest()


def code_hash(module: str) -> str:
    """The code hash of entries produced by ``module`` (see the module docstring)."""
    return _source_hash(_room_of(module))


def cache_key(kind: str, params: dict, code: str = "") -> str:
    """A stable hash of a kind, its parameters (floats to 12 significant digits) and the code."""

    def norm(v):
        if isinstance(v, float):
            return float(f"{v:.12g}")
        if isinstance(v, (list, tuple)):
            return [norm(x) for x in v]
        if isinstance(v, dict):
            return {k: norm(x) for k, x in sorted(v.items())}
        return v

    blob = json.dumps({"kind": kind, "code": code, "p": norm(params)}, sort_keys=True)
    return hashlib.sha256(blob.encode()).hexdigest()[:24]


def content_checksum(arrays: dict) -> str:
    """SHA-256 over every array's name, dtype, shape and bytes (in name order)."""
    h = hashlib.sha256()
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        h.update(f"{name}\0{a.dtype.str}\0{a.shape}\0".encode())
        h.update(a.tobytes())
    return h.hexdigest()


class _Damaged(Exception):
    """An entry that was read but does not match its checksum or code hash."""


def _load(path: Path, code: str) -> dict:
    with np.load(path, allow_pickle=False) as data:
        arrays = {k: data[k] for k in data.files}
    raw = arrays.pop(_META, None)
    if raw is None:
        raise _Damaged("no checksum")
    meta = json.loads(raw.tobytes().decode("utf-8"))
    if meta.get("code") != code:
        raise _Damaged("made by other code")
    if meta.get("checksum") != content_checksum(arrays):
        raise _Damaged("content does not match its checksum")
    return arrays


def _discard(path: Path, exc: BaseException) -> None:
    reason = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
    reason = f"{type(exc).__name__}: {reason}" if not isinstance(exc, _Damaged) else reason
    level = logging.INFO if _STATE["warned"] else logging.WARNING
    _STATE["warned"] = True
    log.log(level, "discarded a damaged cache entry %s (%s); it is rebuilt%s", path, reason,
            "" if level == logging.INFO else " (further ones are logged with -v)")
    try:
        path.unlink()
    except OSError:
        pass


def _sweep_stale(folder: Path) -> None:
    """Remove temporary files of killed writers (older than an hour), once per process."""
    if _STATE["swept"]:
        return
    _STATE["swept"] = True
    now = time.time()
    try:
        for p in folder.glob(".*.tmp"):
            if now - p.stat().st_mtime > _STALE_TMP_S:
                p.unlink()
    except OSError:
        pass


def _store(path: Path, arrays: dict, code: str) -> None:
    """Write an entry atomically; a cache that cannot be written is not an error."""
    meta = json.dumps({"code": code, "checksum": content_checksum(arrays)})
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        _sweep_stale(path.parent)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    except OSError:
        return
    try:
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, **arrays, **{_META: np.frombuffer(meta.encode(), dtype=np.uint8)})
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if not isinstance(exc, OSError):
            raise


def cached_arrays(kind: str, params: dict, build: Callable[[], dict],
                  module: str | None = None) -> dict:
    """Return the arrays for ``(kind, params)``, building and storing them on a miss.

    Parameters
    ----------
    kind : str
        The kind of entry (file name prefix), e.g. ``"disk"`` or ``"cell-table-solution"``.
    params : dict
        Everything the entry depends on besides the code (JSON-serialisable).
    build : callable
        Returns a dict of numpy arrays (for example ``{"p": points, "t": cells}``).
    module : str, optional
        The module producing the entry, which selects the code hash; default: the caller's.
    """
    if not enabled():
        return build()
    if module is None:
        module = sys._getframe(1).f_globals.get("__name__", "")
    code = code_hash(module)
    path = cache_dir() / f"{kind}-{cache_key(kind, params, code)}.npz"
    try:
        return _load(path, code)
    except FileNotFoundError:
        pass
    except Exception as exc:  # noqa: BLE001 - any unreadable entry is rebuilt, never fatal
        _discard(path, exc)
    arrays = {k: np.asarray(v) for k, v in build().items()}
    _store(path, arrays, code)
    return arrays
