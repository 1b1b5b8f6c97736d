"""The optional ``[readout]`` design section: the preamplifier or converter after the capsule and
its bias supply, parsed into :class:`diagap.lumped.readout.Readout` (SI).

Keys (ranges in :data:`diagap.schema.SCHEMA`)::

    [readout]
    noise_density = "10 nV/rtHz"      # white input-referred voltage noise e_n (required)
    noise_corner = "200 Hz"           # 1/f corner f_c: PSD e_n²(1 + f_c/f) (default 0)
    gain = 10                         # V/V, or gain_db = 20 (one of them; default 1 V/V)
    input_capacitance = "0.2 pF"      # readout input capacitance C_in
    clip_amplitude = "0.5 V"          # largest input amplitude before clipping (peak)
    full_scale_input = "0.25 V"       # digital output: input amplitude (peak) of a 0 dBFS sine,
    # full_scale_spl = 120            #   or the SPL (dB) of that sine (one of them)
    charge_pump_resistance = "1 Mohm" # bias supply source resistance, in series with R_bias
    charge_pump_noise = "1 uV/rtHz"   # its noise density (default: thermal of that resistance)

``input_capacitance`` is the capacitor ``[electrical] preamp_input_capacitance`` describes (the
readout's input capacitance at the output node); it may be given in either section, not in both.
When given here it fills ``electrical.preamp_input_capacitance``, so every model that loads the
node with it (lumped, distributed, quasi-static, SPICE) sees one value; designs without
``[readout]`` read exactly as before. Levels in dB are plain numbers (``gain_db = 20``,
``full_scale_spl = 120``); a text ``"120 dB"`` is read the same way.
"""
from __future__ import annotations

import re

from diagap.quantities import DesignError

__all__ = ["parse_readout", "fill_input_capacitance", "bias_leg_resistance_ohm"]

_DB_TEXT = re.compile(r"\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d{1,3})?)\s*dB(?:\s*SPL)?\s*")
_DB_KEYS = ("gain_db", "full_scale_spl")


def _plain_db(table: dict) -> dict:
    """``"120 dB"`` → 120.0 for the level keys (pint would read dB as a power ratio)."""
    out = dict(table)
    for key in _DB_KEYS:
        v = out.get(key)
        if isinstance(v, str):
            m = _DB_TEXT.fullmatch(v)
            if m:
                out[key] = float(m.group(1))
    return out


def _one_of(v: dict, a: str, b: str) -> None:
    if v[a] is not None and v[b] is not None:
        raise DesignError(f"readout.{b} = {v[b]:g}: give readout.{a} or readout.{b}, not both")


def parse_readout(raw: dict, section_parser):
    """The :class:`~diagap.lumped.readout.Readout` of ``raw["readout"]``, or None without it.

    ``section_parser(raw, name)`` is the design module's generic section parser (keys, units and
    ranges); the checks between keys are made here.
    """
    from diagap.lumped.readout import Readout

    if "readout" not in raw:
        return None
    table = raw["readout"]
    if isinstance(table, dict):
        raw = {**raw, "readout": _plain_db(table)}
    v = section_parser(raw, "readout")
    _one_of(v, "gain", "gain_db")
    _one_of(v, "full_scale_input", "full_scale_spl")
    if v["gain"] is not None and v["gain"] <= 0:
        raise DesignError(f"readout.gain = {v['gain']:g}: must be positive (V/V)")
    gain = v["gain"] if v["gain"] is not None else \
        10.0 ** (v["gain_db"] / 20.0) if v["gain_db"] is not None else 1.0
    return Readout(
        noise_density_v_per_rthz=v["noise_density"], noise_corner_hz=v["noise_corner"],
        gain=gain, input_capacitance_f=v["input_capacitance"] or 0.0,
        clip_amplitude_v=v["clip_amplitude"], full_scale_input_v=v["full_scale_input"],
        full_scale_spl_db=v["full_scale_spl"],
        charge_pump_resistance_ohm=v["charge_pump_resistance"],
        charge_pump_noise_v_per_rthz=v["charge_pump_noise"])


def fill_input_capacitance(raw: dict, electrical: dict | None, readout):
    """One input capacitance for both sections: ``readout.input_capacitance`` goes into the
    parsed ``[electrical]`` values (in place), or the readout takes
    ``electrical.preamp_input_capacitance``; refused when given in both. Returns the readout."""
    from dataclasses import replace

    if readout is None or electrical is None:
        return readout
    given_here = "input_capacitance" in raw.get("readout", {})
    given_there = "preamp_input_capacitance" in raw.get("electrical", {})
    if given_here and given_there:
        raise DesignError(f"readout.input_capacitance = {readout.input_capacitance_f:g} F: "
                          f"the readout's input capacitance is already given as "
                          f"electrical.preamp_input_capacitance; give it in one section")
    if given_here:
        electrical["preamp_input_capacitance"] = readout.input_capacitance_f
        return readout
    return replace(readout, input_capacitance_f=electrical["preamp_input_capacitance"])


def bias_leg_resistance_ohm(design) -> float:
    """R_b + R_s: the bias resistor in series with the bias supply's source resistance (Ω)."""
    r_s = design.readout.charge_pump_resistance_ohm if design.readout is not None else 0.0
    return design.electrical.bias_resistance_ohm + r_s
