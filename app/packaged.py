"""The microphone's overload point, dynamic range and digital sensitivity, and the scope of a run.

Added to the ``response`` section once the large-deflection section is known (it supplies the
quasi-static distortion up to contact):

* ``capsule_aop_db_spl`` — the lowest SPL at which the capsule's own THD reaches 10 % at 1 kHz.
  The harmonic balance of the one-degree-of-freedom model (:mod:`diagap.lumped.distortion`,
  ``aop_10pct_spl_db``: film dynamics, bias circuit, C(x) of the static shape) when it reaches
  10 % inside its range. Its scan stops where the diaphragm leaves the sampled C(x) range (short
  of the backplate) or Newton fails; it is not valid beyond. There the quasi-static
  large-deflection value (:mod:`diagap.overload`, ``thd_10pct_spl_db_quasistatic``: von Kármán
  stiffening, electrostatic force and the deflected shape's C up to contact) is taken, and never
  below the last level the harmonic balance solved with THD < 10 %. When the quasi-static curve
  meets the backplate before 10 %, the contact level at bias limits (``"backplate contact"``).
* with a ``[readout]``: ``readout_clip_spl_db`` (the input amplitude reaches the clipping level,
  :meth:`diagap.lumped.readout.Readout.clip_spl_db`) and, with a digital output,
  ``sensitivity_dbfs`` and ``full_scale_spl_db`` (a full-scale sine is 0 dBFS);
* ``aop_db_spl`` — the lowest of these levels, ``aop_limited_by`` the mechanism, ``aop_note`` how
  it was found; ``dynamic_range_db`` = ``aop_db_spl`` − ``noise_dba_spl``;
* ``scope`` (:func:`diagap.scope.response_scope`).

Without a ``[readout]`` the overload point is the capsule's alone, and the note says so.
"""
from __future__ import annotations

import math

__all__ = ["packaged_section", "capsule_overload", "LIMITS"]

#: the mechanisms that can set the overload point
LIMITS = ("capsule distortion", "backplate contact", "readout clipping", "digital full scale")


def capsule_overload(resp: dict, large_deflection: dict | None) -> tuple:
    """(SPL dB or None, mechanism or None, how it was found) of the capsule alone."""
    f = resp.get("thd_frequency_hz", 1000.0)
    hb = resp.get("aop_10pct_spl_db")
    if hb is not None:
        return hb, LIMITS[0], f"10 % THD at {f:g} Hz by harmonic balance"
    ld = large_deflection or {}
    curve = resp.get("thd_vs_spl") or []
    last = curve[-1][0] if curve else -math.inf
    qs = ld.get("thd_10pct_spl_db_quasistatic")
    if qs is not None:
        return max(qs, last), LIMITS[0], (
            "10 % THD of the quasi-static large-deflection curve (the harmonic balance stays "
            f"below 10 % up to {last:.1f} dB SPL, where its model ends)")
    contact = ld.get("contact_spl_db_at_bias")
    if contact is not None:
        return max(contact, last), LIMITS[1], (
            "the biased diaphragm reaches the backplate before the THD reaches 10 %")
    return None, None, "no 10 % THD point or contact within the computed range"


def _readout_limits(readout, data: dict) -> dict:
    s = data["sensitivity_v_per_pa"]
    clip = readout.clip_spl_db(s)
    data["readout_gain_db"] = readout.gain_db
    data["readout_sensitivity_db_v_per_pa"] = data["sensitivity_db_v_per_pa"] + readout.gain_db
    data["readout_clip_spl_db"] = clip
    limits = {LIMITS[2]: clip}
    if readout.digital:
        data["sensitivity_dbfs"] = readout.sensitivity_dbfs(s)
        data["full_scale_spl_db"] = readout.full_scale_level_db(s)
        limits[LIMITS[3]] = data["full_scale_spl_db"]
    return limits


def packaged_section(design, response, large_deflection=None):
    """A copy of the ``response`` :class:`~diagap.stages.Section` with the scope, the overload
    point and the dynamic range (and the readout's levels when the design has a ``[readout]``)."""
    from diagap.lumped.readout import overload_point
    from diagap.scope import response_scope
    from diagap.stages import Section

    data = dict(response.data)
    scope = response_scope(design)
    ld = large_deflection.data if large_deflection is not None else None
    capsule, mechanism, how = capsule_overload(data, ld)
    limits = {mechanism or LIMITS[0]: capsule}
    if design.readout is not None:
        limits.update(_readout_limits(design.readout, data))
    aop, by = overload_point(limits)
    note = how if by in LIMITS[:2] or by is None else f"{by}; capsule alone: {how}"
    if scope == "capsule":
        note += " (capsule only: the readout's clipping is not modelled)"
    noise = data.get("noise_dba_spl")
    data.update({
        "scope": scope, "capsule_aop_db_spl": capsule, "aop_db_spl": aop,
        "aop_limited_by": by or "not reached", "aop_note": note,
        "dynamic_range_db": None if aop is None or noise is None else aop - noise,
    })
    return Section(data, dict(response.uncertainty), dict(response.objects))
