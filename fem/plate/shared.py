"""One assembled plate operator per diaphragm and mesh, shared by every solve of a process.

The stages of a run solve the same diaphragm on the same meshes several times: the coupled solve,
the distributed frequency response and the large-deflection solve all use the two finest meshes
of the coupling family (electrode edge embedded). Assembling the Argyris system
(:func:`diagap.fem.plate.system.build_plate_system`) and factorising its stiffness are the same
work each time, so they are done once: the assembled :class:`~diagap.fem.plate.system.PlateSystem`
(which keeps its stiffness factorisation, its mass matrix and its point functionals once they are
first asked for) is kept in a small in-process memo.

Key: the diaphragm (:class:`~diagap.fem.plate.solver.PlateProblem`, a frozen dataclass: shape,
size, material, stress, edge, all compared by value), the mesh size parameters
(:class:`~diagap.fem.levels.MeshSize`) and the embedded electrode size (scaled, or None). These
are every input of the assembly (the mesh generator is deterministic in its parameters), so a
changed design never meets an operator of another design. The memo holds at most ``MAX_ENTRIES``
systems (least recently used dropped first). A shared system is only read by its users (its lazily
filled ``_cache`` holds values derived from its own matrices), never changed.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from typing import Callable

__all__ = ["shared_plate", "clear_shared_plates", "MAX_ENTRIES"]

#: systems kept: the two finest levels of the mechanics family and of the coupling family, and
#: the mechanics levels of a compliant backplate (a sweep worker then keeps about one design's
#: systems, with their factorisations)
MAX_ENTRIES = 6

_memo: OrderedDict = OrderedDict()
_lock = threading.Lock()


def shared_plate(problem, size, inner: float | None, build: Callable[[], object]):
    """The system of ``problem`` on the mesh of ``size`` (electrode edge ``inner``, scaled, or
    None), from the memo or made by ``build()`` and kept."""
    key = (problem, size, None if inner is None else float(inner))
    with _lock:
        if key in _memo:
            _memo.move_to_end(key)
            return _memo[key]
    system = build()
    with _lock:
        _memo[key] = system
        _memo.move_to_end(key)
        while len(_memo) > MAX_ENTRIES:
            _memo.popitem(last=False)
    return system


def clear_shared_plates() -> None:
    """Forget every kept system (e.g. to time a run as a fresh process would)."""
    with _lock:
        _memo.clear()
