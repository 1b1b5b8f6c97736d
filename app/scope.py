"""What a run describes: the capsule alone, or the packaged microphone.

``"capsule"``: the diaphragm, gap, backplate, back volume and bias circuit only; sensitivity,
noise and overload are those of the capsule at its output node, and every output says "capsule
only". ``"packaged"``: the design also describes what lies around the capsule in a product (a
``[readout]`` section: its noise, clipping and bias supply), and the results include it.
"""
from __future__ import annotations

__all__ = ["response_scope", "scope_text", "SCOPES"]

SCOPES = ("capsule", "packaged")


def response_scope(design) -> str:
    """``"packaged"`` when the design describes parts beyond the capsule, else ``"capsule"``."""
    return "packaged" if getattr(design, "readout", None) is not None else "capsule"


def scope_text(scope: str | None) -> str:
    """One line for people: what the results cover."""
    if scope == "packaged":
        return ("scope: packaged microphone (capsule with the readout's noise, clipping and bias "
                "supply)")
    return ("scope: capsule only (no [readout]: the readout's noise and clipping are not "
            "included)")
