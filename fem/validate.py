"""Input checks of the fem solvers: one-line refusals naming the field, the value and what is
allowed.

Each solver keeps its own ``ValueError`` subclass (the command line maps every ``ValueError`` from
an input to exit code 2) and binds it once::

    _check = Checks(SqueezeError)
    g = _check.positive("gap_m", gap_m)            # "gap_m = -1e-06 must be a finite number > 0"
    _check.choice("shape", shape, ("circle", "square"))

Messages have the form ``"<field> = <value!r> must be <allowed>"``.
"""
from __future__ import annotations

import math
import numbers

__all__ = ["Checks"]


class Checks:
    """Validators that raise ``error`` (a ``ValueError`` subclass) with a one-line message.

    Parameters
    ----------
    error : type
        Exception class raised on a failed check; must subclass ``ValueError``.
    """

    def __init__(self, error: type = ValueError):
        if not issubclass(error, ValueError):
            raise TypeError(f"error = {error!r} must be a ValueError subclass")
        self.error = error

    def require(self, ok: bool, message: str) -> None:
        """Raise ``error(message)`` unless ``ok``."""
        if not ok:
            raise self.error(message)

    def number(self, name: str, value) -> float:
        """``value`` as a finite float (bools and non-numbers refused)."""
        try:
            x = float(value)
        except (TypeError, ValueError):
            x = math.nan
        self.require(not isinstance(value, (bool, str)) and math.isfinite(x),
                     f"{name} = {value!r} must be a finite number")
        return x

    def positive(self, name: str, value, allow_zero: bool = False) -> float:
        """``value`` as a float, finite and > 0 (>= 0 with ``allow_zero``)."""
        bound = ">= 0" if allow_zero else "> 0"
        try:
            x = float(value)
        except (TypeError, ValueError):
            x = math.nan
        ok = (x >= 0 if allow_zero else x > 0) and math.isfinite(x)
        self.require(ok and not isinstance(value, (bool, str)),
                     f"{name} = {value!r} must be a finite number {bound}")
        return x

    def in_range(self, name: str, value, low: float, high: float, unit: str = "",
                 closed: bool = True) -> float:
        """``value`` as a float within [low, high] (the open interval unless ``closed``)."""
        try:
            x = float(value)
        except (TypeError, ValueError):
            x = math.nan
        ok = (low <= x <= high) if closed else (low < x < high)
        u = f" {unit}" if unit else ""
        left, right = "[]" if closed else "()"
        numeric = isinstance(value, numbers.Real) and not isinstance(value, bool)
        shown = f"{x:g}" if numeric else repr(value)
        self.require(ok and numeric,
                     f"{name} = {shown}{u} must lie in {left}{low:g}, {high:g}{right}{u}")
        return x

    def choice(self, name: str, value, allowed):
        """``value`` if it is one of ``allowed``."""
        try:
            ok = value in tuple(allowed)
        except TypeError:
            ok = False
        self.require(ok, f"{name} = {value!r} must be one of {', '.join(map(str, allowed))}")
        return value
