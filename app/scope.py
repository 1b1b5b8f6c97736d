"""What a run describes: the capsule alone, or the packaged microphone.

``"capsule"``: the diaphragm, gap, backplate, back volume and bias circuit only; the diaphragm's
front faces the free field directly (its own radiation load only), and sensitivity, noise and
overload are those of the capsule at its output node. Every output then says "capsule only".

``"packaged"``: the design also describes what lies around the capsule in a product: a sound port
and front chamber between the sound field and the diaphragm (``[port]``, ``[front]``; their
Helmholtz resonance shapes the upper band edge) and/or a readout stage (``[readout]``: its noise,
clipping and bias supply). The results include what is described, and the scope line names it.
"""
from __future__ import annotations

__all__ = ["SCOPES", "response_scope", "scope_text", "scope_words", "package_parts",
           "summary_parts"]

SCOPES = ("capsule", "packaged")


def package_parts(design) -> tuple[str, ...]:
    """The package elements a design describes, in words ("sound port", "front chamber",
    "readout")."""
    parts = []
    if getattr(design, "port", None) is not None:
        parts.append("sound port")
    if getattr(design, "front", None) is not None:
        parts.append("front chamber")
    if getattr(design, "readout", None) is not None:
        parts.append("readout")
    return tuple(parts)


def summary_parts(summary: dict) -> tuple[str, ...]:
    """:func:`package_parts` read from a summary dictionary's normalised design."""
    d = summary.get("design") or {}
    words = {"port": "sound port", "front": "front chamber", "readout": "readout"}
    return tuple(w for k, w in words.items() if d.get(k) is not None)


def response_scope(design) -> str:
    """``"packaged"`` when the design describes a [port], [front] or [readout] section, else
    ``"capsule"``."""
    return "packaged" if package_parts(design) else "capsule"


def scope_text(scope: str | None, parts: tuple[str, ...] = ()) -> str:
    """One line for people: what the results cover."""
    if scope == "packaged":
        what = ", ".join(parts) if parts else "package elements"
        return f"scope: packaged microphone (capsule with {what})"
    return ("scope: capsule only (no [port], [front] or [readout]: the package acoustics and the "
            "readout's noise and clipping are not included)")


def scope_words(response: dict) -> str:
    """One or two sentences saying what the response describes (for report captions)."""
    f_h, f_0 = response.get("helmholtz_resonance_hz"), response.get("helmholtz_lossless_hz")
    if response.get("scope") != "packaged":
        return (" Capsule only: no sound port, front chamber or readout stage is modelled; the "
                "diaphragm faces the free field.")
    if not f_h:
        return " Packaged: the readout stage is included; the diaphragm faces the free field."
    out = (" Packaged: the sound port and front chamber stand between the sound field and the "
           f"diaphragm; their Helmholtz resonance is at {f_h / 1e3:.3g} kHz")
    if f_0:
        out += f" ({f_0 / 1e3:.3g} kHz for port and chamber alone, lossless)"
    out += "."
    if "reduction_error_db" in response:
        out += (" The distributed solve carries the same port, front chamber, back volume and "
                "vent as the lumped model.")
    return out
