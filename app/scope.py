"""What the reported response describes: the capsule alone, or the packaged microphone.

``"capsule"``: the diaphragm's front faces the free field directly (its own radiation load only),
so the response, noise and overload are those of the capsule.  ``"packaged"``: a sound port and
front chamber stand between the sound field and the diaphragm (their Helmholtz resonance shapes
the upper band edge), so the figures are those of the microphone as built.  Other package
elements (a readout stage, for instance) extend :func:`response_scope`.
"""
from __future__ import annotations

__all__ = ["SCOPES", "response_scope"]

SCOPES = ("capsule", "packaged")


def response_scope(design) -> str:
    """"packaged" when the design describes a [port] or [front] section, else "capsule"."""
    packaged = getattr(design, "port", None) is not None or \
        getattr(design, "front", None) is not None
    return "packaged" if packaged else "capsule"
