"""Quantities with units: the unit registry, field descriptions and the one parser that turns a
number (SI) or a string with units into an SI float, with one-line errors.

Accepted text (design files, ``--vary`` and every command-line option): exactly one number --
optional sign, digits with an optional decimal point, optional exponent -- followed by one unit
expression made of unit names joined by ``*``, ``/`` or a space, each with an optional integer
power (``^3`` or ``**3``) and at most one level of parentheses: ``"4.5 um"``, ``"1e12 Pa*s/m^3"``,
``"20 degC"``, ``"2um"``. The text is checked against this grammar (and a length limit) *before*
pint sees it, so that decimal commas (``"4,5 um"``), spaces inside numbers (``"1 2 um"``),
arithmetic (``"10**10**10 m"``) and unbalanced parentheses are refused at once instead of being
misread or evaluated. A bare number is a plain number for a dimensionless field; for a field with
a unit, design files read TOML numbers in SI, while text without a unit (an option, a string) is
refused with the expected unit named.
"""
from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass
from typing import Any

__all__ = ["DesignError", "Field", "unit_registry", "parse_quantity", "parse_choice", "fmt_value",
           "quantity_text", "option_quantity", "MAX_TEXT", "example_for"]

#: longest quantity text accepted (characters)
MAX_TEXT = 64


class DesignError(ValueError):
    """A design value that is missing, of the wrong kind, or outside what is allowed."""


_UREG = None


def unit_registry():
    """The shared pint registry (offset units such as degC convert to kelvin)."""
    global _UREG
    if _UREG is None:
        import pint

        _UREG = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
        _UREG.define("rtHz = hertz ** 0.5 = _ = sqrtHz")  # noise densities: "10 nV/rtHz"
    return _UREG


@dataclass(frozen=True)
class Field:
    """One design key: its SI unit (None for text), its bounds, choices and default.

    ``low``/``high`` are the allowed range in SI (``*_open``: the bound itself excluded);
    ``example`` is a value in a usual unit shown in messages (``"4.5 um"``).
    """

    unit: str | None = None
    low: float | None = None
    high: float | None = None
    low_open: bool = True
    high_open: bool = True
    choices: tuple[str, ...] = ()
    default: Any = None
    required: bool = False
    example: str | None = None


# ----------------------------------------------------------------------------- the grammar
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d{1,4})?"
_NAME = r"[A-Za-z_\u00b0\u00b5\u03bc\u03a9\u2126][A-Za-z_\u00b0\u00b5\u03bc\u03a9\u2126]*"
_POWER = r"(?:\s*(?:\^|\*\*)\s*[+-]?\d{1,2})?"
_FACTOR = rf"(?:{_NAME}{_POWER})"
_SEP = r"(?:\s*[*/]\s*|\s+)"
_PLAIN = rf"{_FACTOR}(?:{_SEP}{_FACTOR})*"
_GROUP = rf"(?:{_FACTOR}|\(\s*{_PLAIN}\s*\){_POWER})"
_UNIT = rf"(?:1\s*/\s*)?{_GROUP}(?:{_SEP}{_GROUP})*"
_QUANTITY = re.compile(rf"\s*(?P<num>{_NUMBER})\s*(?P<unit>{_UNIT})?\s*")

_EXAMPLES = {"m": "4.5 um", "Pa": "10 MPa", "kg/m^3": "2330 kg/m^3", "m^3": "1 mm^3",
             "Pa*s/m^3": "1e12 Pa*s/m^3", "K": "20 degC", "V": "10 V", "ohm": "10 Gohm",
             "F": "0.3 pF", "B": "4 GB", "": "0.3"}


def example_for(f: Field) -> str:
    """A well-formed value for field ``f`` in a usual unit."""
    return f.example or _EXAMPLES.get(f.unit or "", f"1 {f.unit}")


def _fmt(v) -> str:
    return repr(v) if isinstance(v, str) else f"{v:g}" if isinstance(v, float) else str(v)


def _choice(name: str, value, f: Field) -> str:
    if not isinstance(value, str) or value not in f.choices:
        near = difflib.get_close_matches(str(value), f.choices, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise DesignError(f"{name} = {_fmt(value)}: must be one of {', '.join(f.choices)}{hint}")
    return value


def _shown(text: str) -> str:
    return repr(text if len(text) <= MAX_TEXT else text[:20] + "...")


def _not_a_quantity(name: str, text: str, f: Field, why: str = "") -> DesignError:
    like = example_for(f)
    if re.search(r"\d,\d", text):
        fixed = text.strip().replace(",", ".", 1)
        if _QUANTITY.fullmatch(fixed):
            like = fixed
            why = "a decimal comma; use a decimal point"
    why = f" ({why})" if why else ""
    return DesignError(f"{name} = {_shown(text)}: not a quantity{why}; write one number and a "
                       f"unit, like \"{like}\"")


def quantity_text(name: str, text: str, f: Field, bare_si: bool = False) -> float:
    """Parse the text of one quantity into SI for field ``f`` (no bounds check).

    Parameters
    ----------
    name : the field or option named in messages
    text : e.g. ``"4.5 um"``
    f : the field (its SI unit: ``f.unit``; ``""`` or None for a plain number)
    bare_si : accept a number without a unit as SI for a field with a unit
    """
    if len(text) > MAX_TEXT:
        raise _not_a_quantity(name, text, f, f"longer than {MAX_TEXT} characters")
    m = _QUANTITY.fullmatch(text)
    if m is None:
        raise _not_a_quantity(name, text, f)
    unit_text = m.group("unit")
    if unit_text and unit_text.count("(") > 1:  # the grammar allows one group per factor
        raise _not_a_quantity(name, text, f, "nested or repeated parentheses")
    number = float(m.group("num"))
    if not math.isfinite(number):
        raise DesignError(f"{name} = {_shown(text)}: out of range (the number overflows)")
    si_unit = f.unit or "dimensionless"
    if not unit_text:
        if f.unit and not bare_si:
            raise DesignError(f"{name} = {_shown(text)}: give a unit (expected {f.unit} or a "
                              f"multiple), like \"{example_for(f)}\"")
        return number
    import pint

    ureg = unit_registry()
    try:
        q = ureg.Quantity(number, ureg.parse_units(unit_text))
    except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError,
            KeyError):
        raise _not_a_quantity(name, text, f, f"unknown unit {unit_text.strip()!r}") from None
    target = ureg.Quantity(1, si_unit)
    if q.dimensionality != target.dimensionality:
        raise DesignError(f"{name} = {_shown(text)}: wrong dimension {q.dimensionality}, "
                          f"expected {target.dimensionality} (e.g. \"{example_for(f)}\")")
    try:
        x = float(q.to(si_unit).magnitude)
    except (OverflowError, pint.errors.PintError):
        x = math.inf
    if not math.isfinite(x):
        raise DesignError(f"{name} = {_shown(text)}: out of range (overflows in {si_unit})")
    return float(f"{x:.15g}")


def _quantity(name: str, value, f: Field) -> float:
    """Convert a number (SI) or a string with units to an SI float and check its bounds."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise DesignError(f"{name} = {_fmt(value)}: expected a number or a string with units "
                          f"of {f.unit or 'a dimensionless number'}")
    if isinstance(value, str):
        x = quantity_text(name, value, f)
    else:
        try:
            x = float(value)
        except OverflowError:
            x = math.inf
    if not math.isfinite(x):
        raise DesignError(f"{name} = {_fmt(value)}: must be a finite number")
    _bounds(name, value, x, f)
    return x


def option_quantity(option: str, text: str, f: Field) -> float:
    """A command-line option's quantity in SI: the same grammar, a unit required for a field
    with a unit, and the field's bounds."""
    return _quantity(option, text, f)


def _bounds(name: str, value, x: float, f: Field) -> None:
    unit = f" {f.unit}" if f.unit else ""
    lo_bad = f.low is not None and (x <= f.low if f.low_open else x < f.low)
    hi_bad = f.high is not None and (x >= f.high if f.high_open else x > f.high)
    if not (lo_bad or hi_bad):
        return
    shown = _fmt(value) if isinstance(value, str) else f"{x:g}{unit}"
    if f.low is not None and x <= 0 and (f.low > 0 or (f.low == 0 and f.low_open)):
        raise DesignError(f"{name} = {shown}: must be positive")
    if f.low is not None and f.high is not None:
        lb, hb = ("(" if f.low_open else "["), (")" if f.high_open else "]")
        allowed = f"in {lb}{f.low:g}, {f.high:g}{hb}{unit}"
    elif f.low == 0.0 and f.low_open:
        allowed = "positive"
    elif f.low == 0.0:
        allowed = "zero or positive"
    elif f.low is not None:
        allowed = f"{'>' if f.low_open else '>='} {f.low:g}{unit}"
    else:
        allowed = f"{'<' if f.high_open else '<='} {f.high:g}{unit}"
    raise DesignError(f"{name} = {shown}: must be {allowed}")


parse_quantity = _quantity
parse_choice = _choice
fmt_value = _fmt
