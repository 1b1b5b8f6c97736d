"""Tables on disk: a :class:`~diagap.fastpath.grid.TensorTable` as numpy arrays in the cache.

Tables go into the same cache directory and through the same entry format as meshes and solver
results (:func:`diagap.meshes.cache.cached_arrays`: one ``.npz`` per entry, atomic writes, a
content checksum and code hash checked on every load, damaged entries discarded and rebuilt).
The key of a table holds its parameters and the *source hash* of every package whose code
produces its reference values (meshes, fem, lumped and the application), so that an edit of the
physics or of the pipeline gives a new table.
"""
from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path
from typing import Callable

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable

__all__ = ["table_arrays", "table_from_arrays", "cached_table", "source_hash",
           "VALUE_MODULES", "held_table"]

_HELD: dict = {}  # tables already read in this process, by kind and parameters


#: application modules whose code shapes tabulated values (the pipeline's stages and inputs,
#: and the fast path's own table code); other application modules (CLI, reports) do not
VALUE_MODULES = ("stages.py", "response_stage.py", "pipeline.py", "extract.py", "design.py",
                 "schema.py", "materials.py", "quantities.py", "dielectrics.py", "backplate.py",
                 "package_design.py", "readout_design.py", "scope.py", "sweep/point.py",
                 "fastpath/grid.py", "fastpath/refine.py", "fastpath/plate.py",
                 "fastpath/study.py", "fastpath/nested.py")


@lru_cache(maxsize=None)
def module_hash(path: str) -> str:
    """SHA-256 of a module's source after its docstring: a table key changes with the code
    that defines it (not with the measured numbers its docstring quotes). Once per process and
    module (a table look-up asks for it every time)."""
    import ast
    import hashlib

    src = Path(path).read_text()
    body = ast.parse(src).body
    if body and isinstance(body[0], ast.Expr) and isinstance(getattr(body[0], "value", None),
                                                            ast.Constant):
        src = "\n".join(src.splitlines()[body[0].end_lineno:])
    return hashlib.sha256(src.encode()).hexdigest()[:16]


@lru_cache(maxsize=None)
def source_hash() -> str:
    """SHA-256 over the source of diagap.meshes, diagap.fem, diagap.lumped and the application
    modules in :data:`VALUE_MODULES` (the producers of every tabulated value)."""
    import hashlib
    from importlib import import_module

    from diagap.meshes.cache import code_hash, tree_hash

    roots = {n: Path(import_module(f"diagap.{n}").__file__).parent
             for n in ("meshes", "fem", "lumped")}
    h = hashlib.sha256(tree_hash(roots).encode())
    app = Path(import_module("diagap").__file__).parent
    for name in VALUE_MODULES:
        h.update(name.encode() + b"\0" + (app / name).read_bytes() + b"\0")
    h.update(code_hash("diagap.fem").encode())
    return h.hexdigest()


def table_arrays(table: TensorTable, facts: dict) -> dict:
    """The arrays of one table entry (no pickles: text goes in as a JSON byte array)."""
    meta = {"axes": [{"name": a.name, "log": a.log, "breaks": list(a.breaks), "n": a.n}
                     for a in table.axes],
            "names": list(table.names), "facts": facts}
    return {"values": table.values, "log_outputs": table.log_outputs.astype(np.int8),
            "held_out_error": table.held_out_error,
            "meta": np.frombuffer(json.dumps(meta).encode(), dtype=np.uint8)}


def table_from_arrays(arrays: dict) -> tuple[TensorTable, dict]:
    """(table, build facts) from :func:`table_arrays`."""
    meta = json.loads(np.asarray(arrays["meta"], dtype=np.uint8).tobytes().decode())
    axes = tuple(Axis(a["name"], bool(a["log"]), tuple(a["breaks"]), int(a["n"]))
                 for a in meta["axes"])
    table = TensorTable(axes, tuple(meta["names"]), np.asarray(arrays["values"], float),
                        np.asarray(arrays["log_outputs"]).astype(bool),
                        np.asarray(arrays["held_out_error"], float))
    return table, meta["facts"]


def cached_table(kind: str, params: dict,
                 build: Callable[[], tuple]) -> tuple[TensorTable, dict]:
    """The table ``(kind, params)`` from the cache, built by ``build() -> (table, facts)`` on a
    miss or when the stored entry is damaged."""
    from diagap.meshes.cache import cached_arrays

    def make():
        table, facts = build()
        return table_arrays(table, facts)

    key = dict(params, source=source_hash())
    return table_from_arrays(cached_arrays(kind, key, make, module="diagap.fastpath"))


def held_table(kind: str, params: dict,
               build: Callable[[], tuple]) -> tuple[TensorTable, dict]:
    """:func:`cached_table`, kept in memory after the first read in this process (a fast-path
    evaluation then costs no disk access)."""
    key = (kind, json.dumps(params, sort_keys=True, default=str))
    if key not in _HELD:
        _HELD[key] = cached_table(kind, params, build)
    return _HELD[key]
