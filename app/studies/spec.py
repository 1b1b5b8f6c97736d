"""The text of study sections: limits on summary quantities, varied design values, and the file.

Limits (tolerance specs and optimisation constraints) are one line each::

    PATH <= VALUE            e.g. "coupled.bias_margin <= 0.5"
    PATH >= VALUE            e.g. "coupled.resonance_at_bias_hz >= 20 kHz"
    PATH = VALUE +- TOL      e.g. "response.sensitivity_db_v_per_pa = -46 +- 1" (also ±)

PATH is a summary path (:mod:`diagap.evaluate`). VALUE and TOL are a number in the key's SI unit
or a number with a unit convertible to it (the unit of the key from :mod:`diagap.names`); levels
in dB take a bare number. ``<`` and ``>`` mean the same as ``<=`` and ``>=``.

A design file may hold study sections ([tolerances], [optimise]) beside the design;
:func:`load_study` returns the design and the section's table.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

from diagap.design import SCHEMA, DesignError, parse_design
from diagap.quantities import Field, quantity_text

__all__ = ["Limit", "parse_limit", "load_study", "design_value", "input_field", "STUDY_SECTIONS",
           "key_quantity"]

STUDY_SECTIONS = ("tolerances", "optimise")
_LIMIT = re.compile(r"\s*(?P<path>[A-Za-z_][\w.]*)\s*(?P<op><=|>=|<|>|=)\s*(?P<rest>.+?)\s*")
_PLUSMINUS = re.compile(r"\s*(?P<value>.+?)\s*(?:\+-|\+/-|±)\s*(?P<tol>.+?)\s*")
_UNICODE_UNITS = {"³": "^3", "²": "^2", "Ω": "ohm", "·": "*", "µ": "u"}


@dataclass(frozen=True)
class Limit:
    """One limit on a summary quantity: ``low <= value <= high`` (either side may be open)."""

    path: str
    low: float = -math.inf
    high: float = math.inf
    text: str = ""

    def met(self, value: float) -> bool:
        """True when ``value`` is finite and inside the limit."""
        return math.isfinite(value) and self.low <= value <= self.high

    def margin(self, value: float) -> float:
        """Signed distance inside the limit (≥ 0 when met), in the key's SI unit; NaN → −inf."""
        if not math.isfinite(value):
            return -math.inf
        return min(value - self.low, self.high - value)

    def to_dict(self) -> dict:
        return {"path": self.path, "low": None if math.isinf(self.low) else self.low,
                "high": None if math.isinf(self.high) else self.high, "text": self.text}


def _si_unit(path: str) -> str:
    from diagap.names import lookup

    name = lookup(path)
    unit = "" if name is None else name.si_unit
    if unit.startswith("dB") or unit in ("", "°"):
        return ""
    for a, b in _UNICODE_UNITS.items():
        unit = unit.replace(a, b)
    return unit


def key_quantity(path: str, text: str, where: str) -> float:
    """A value of the summary path ``path`` in SI: a bare number (SI) or a number with a unit."""
    unit = _si_unit(path)
    text = text.strip()
    if unit == "" and text.lower().endswith("db"):
        text = text[:-2]
    return quantity_text(where, text, Field(unit or ""), bare_si=True)


def parse_limit(text, where: str = "limit") -> Limit:
    """Parse one limit line (module docstring).

    Raises
    ------
    DesignError
        Not of the grammar, an unknown section, or a value that is not a quantity (one line).
    """
    from diagap.evaluate import check_keys

    if not isinstance(text, str):
        raise DesignError(f"{where} = {text!r}: expected a text such as "
                          f"\"coupled.bias_margin <= 0.5\"")
    m = _LIMIT.fullmatch(text)
    if m is None:
        raise DesignError(f"{where} = {text!r}: expected PATH <= VALUE, PATH >= VALUE or "
                          f"PATH = VALUE +- TOL")
    path, op, rest = m.group("path"), m.group("op"), m.group("rest")
    check_keys([path], f"{where}: summary path")
    if op == "=":
        pm = _PLUSMINUS.fullmatch(rest)
        if pm is None:
            raise DesignError(f"{where} = {text!r}: an equality needs a tolerance, "
                              f"PATH = VALUE +- TOL")
        value = key_quantity(path, pm.group("value"), where)
        tol = abs(key_quantity(path, pm.group("tol"), where))
        return Limit(path, value - tol, value + tol, text.strip())
    value = key_quantity(path, rest, where)
    if op in ("<=", "<"):
        return Limit(path, high=value, text=text.strip())
    return Limit(path, low=value, text=text.strip())


def input_field(path: str, where: str) -> Field:
    """The schema field of a numeric design key ``section.key`` (checked)."""
    parts = path.split(".") if isinstance(path, str) else []
    if len(parts) != 2 or parts[0] not in SCHEMA or parts[1] not in SCHEMA[parts[0]]:
        raise DesignError(f"{where}: {path!r} is not a design key (section.key, e.g. "
                          f"backplate.gap)")
    f = SCHEMA[parts[0]][parts[1]]
    if f.choices or isinstance(f.default, tuple) or f.unit is None:
        raise DesignError(f"{where}: {path} is not a single numeric value")
    return f


def design_value(design, path: str) -> float:
    """The SI value of the numeric design key ``path`` in ``design``."""
    section, key = path.split(".")
    obj = getattr(design, section)
    if obj is None:
        raise DesignError(f"{path}: the design has no [{section}] section")
    names = {"radius": "size_m", "side": "size_m", "electrode_radius": "electrode_size_m",
             "electrode_side": "electrode_size_m", "residual_stress": "residual_stress_pa",
             "poisson_ratio": "poisson_ratio", "density": "density_kg_m3",
             "youngs_modulus": "youngs_modulus_pa", "vent_resistance":
             "vent_resistance_pa_s_per_m3", "bias_voltage": "bias_voltage_v",
             "bias_resistance": "bias_resistance_ohm", "temperature": "temperature_k",
             "static_pressure": "static_pressure_pa", "back_volume": "back_volume_m3",
             "parasitic_capacitance": "parasitic_capacitance_f",
             "preamp_input_capacitance": "preamp_input_capacitance_f"}
    attr = names.get(key, f"{key}_m")
    value = getattr(obj, attr, None)
    if value is None:
        raise DesignError(f"{path}: not set in the design (give it a value first)")
    return float(value)


def load_study(path, section: str) -> tuple:
    """The design of the file ``path`` and its study section ``section`` (a dict).

    The study sections are taken out before the design is validated.

    Raises
    ------
    DesignError
        An unreadable file or design, or a missing or malformed section (one line).
    """
    from diagap.design import read_design_table

    p = Path(path)
    raw = read_design_table(p)
    studies = {s: raw.pop(s) for s in STUDY_SECTIONS if s in raw}
    design = parse_design(raw, str(p))
    table = studies.get(section)
    if table is None:
        command = "tolerance" if section == "tolerances" else section
        raise DesignError(f"{p}: no [{section}] section (see 'diagap {command} --help')")
    if not isinstance(table, dict):
        raise DesignError(f"{p}: {section} must be a table [{section}]")
    return design, table
