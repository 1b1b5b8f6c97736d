"""Quantities with units in design files: the unit registry, field descriptions and the checks
that turn a number (SI) or a string with units into an SI float, with one-line errors."""
from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from typing import Any

__all__ = ["DesignError", "Field", "unit_registry", "parse_quantity", "parse_choice", "fmt_value"]


class DesignError(ValueError):
    """A design value that is missing, of the wrong kind, or outside what is allowed."""


_UREG = None


def unit_registry():
    """The shared pint registry (offset units such as degC convert to kelvin)."""
    global _UREG
    if _UREG is None:
        import pint

        _UREG = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return _UREG


@dataclass(frozen=True)
class Field:
    """One design key: its SI unit (None for text), its bounds, choices and default."""

    unit: str | None = None
    low: float | None = None
    high: float | None = None
    low_open: bool = True
    high_open: bool = True
    choices: tuple[str, ...] = ()
    default: Any = None
    required: bool = False


def _fmt(v) -> str:
    return repr(v) if isinstance(v, str) else f"{v:g}" if isinstance(v, float) else str(v)


def _choice(name: str, value, f: Field) -> str:
    if not isinstance(value, str) or value not in f.choices:
        near = difflib.get_close_matches(str(value), f.choices, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise DesignError(f"{name} = {_fmt(value)}: must be one of {', '.join(f.choices)}{hint}")
    return value


def _quantity(name: str, value, f: Field) -> float:
    """Convert a number (SI) or a string with units to an SI float and check its bounds."""
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise DesignError(f"{name} = {_fmt(value)}: expected a number or a string with units "
                          f"of {f.unit or 'a dimensionless number'}")
    if isinstance(value, str):
        import pint

        try:
            q = unit_registry().Quantity(value)
        except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError):
            raise DesignError(f"{name} = {value!r}: not a quantity with units "
                              f"(expected e.g. \"1 {f.unit or ''}\")".replace(' ")', '")')) from None
        target = unit_registry().Quantity(1, f.unit or "dimensionless")
        if q.dimensionality != target.dimensionality:
            raise DesignError(f"{name} = {value!r}: wrong dimension {q.dimensionality}, expected "
                              f"{target.dimensionality} (e.g. {f.unit or 'a plain number'})")
        x = float(f"{float(q.to(f.unit or 'dimensionless').magnitude):.15g}")
    else:
        x = float(value)
    if not math.isfinite(x):
        raise DesignError(f"{name} = {_fmt(value)}: must be a finite number")
    _bounds(name, value, x, f)
    return x


def _bounds(name: str, value, x: float, f: Field) -> None:
    unit = f" {f.unit}" if f.unit else ""
    lo_bad = f.low is not None and (x <= f.low if f.low_open else x < f.low)
    hi_bad = f.high is not None and (x >= f.high if f.high_open else x > f.high)
    if not (lo_bad or hi_bad):
        return
    if f.low is not None and f.high is not None:
        lb, hb = ("(" if f.low_open else "["), (")" if f.high_open else "]")
        allowed = f"in {lb}{f.low:g}, {f.high:g}{hb}{unit}"
    elif f.low == 0.0 and f.low_open:
        allowed = "positive"
    elif f.low == 0.0:
        allowed = "zero or positive"
    else:
        allowed = f"{'>' if f.low_open else '>='} {f.low:g}{unit}"
    shown = _fmt(value) if isinstance(value, str) else f"{x:g}{unit}"
    raise DesignError(f"{name} = {shown}: must be {allowed}")




parse_quantity = _quantity
parse_choice = _choice
fmt_value = _fmt
