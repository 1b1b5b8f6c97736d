"""What the reported response describes: the capsule alone, or the packaged microphone.

``"capsule"``: the diaphragm's front faces the free field directly (its own radiation load only),
so the response, noise and overload are those of the capsule.  ``"packaged"``: a sound port and
front chamber stand between the sound field and the diaphragm (their Helmholtz resonance shapes
the upper band edge), so the figures are those of the microphone as built.  Other package
elements (a readout stage, for instance) extend :func:`response_scope`.
"""
from __future__ import annotations

__all__ = ["SCOPES", "response_scope", "scope_words"]

SCOPES = ("capsule", "packaged")


def response_scope(design) -> str:
    """"packaged" when the design describes a [port] or [front] section, else "capsule"."""
    packaged = getattr(design, "port", None) is not None or \
        getattr(design, "front", None) is not None
    return "packaged" if packaged else "capsule"


def scope_words(response: dict) -> str:
    """One or two sentences saying what the response describes (for report captions)."""
    if response.get("scope") != "packaged":
        return (" Capsule only: no sound port, front chamber or readout stage is modelled; the "
                "diaphragm faces the free field.")
    out = " Packaged: the sound port and front chamber stand between the sound field and the " \
        "diaphragm"
    f_h, f_0 = response.get("helmholtz_resonance_hz"), response.get("helmholtz_lossless_hz")
    if f_h:
        out += f"; their Helmholtz resonance is at {f_h / 1e3:.3g} kHz"
        if f_0:
            out += f" ({f_0 / 1e3:.3g} kHz for port and chamber alone, lossless)"
    out += "."
    if "reduction_error_db" in response:
        out += (" The distributed solve carries the same port, front chamber, back volume and "
                "vent as the lumped model.")
    return out
