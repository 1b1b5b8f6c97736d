"""Sweep definitions: ``--vary`` texts, the grid of points and stable point ids.

One variation names a design key and the values it takes::

    PATH=START:STOP:N        N values spaced linearly from START to STOP, both included
    PATH=START:STOP:N:log    N values spaced geometrically (START, STOP > 0 in SI)
    PATH=V1,V2,...           the listed values (one value is allowed)

``PATH`` is a design key ``section.key`` (``backplate.hole_radius``). A value is a number with a
unit, with or without a space and optionally quoted: ``2um``, ``2 um``, ``"2 um"``,
``1e12 Pa*s/m^3``, ``20degC`` (the grammar of :mod:`diagap.quantities`; a bare number is refused
for a key with a unit, so that ``4`` is never silently read as 4 m), or a plain number for a
dimensionless key (``diaphragm.poisson_ratio=0.2,0.3``). Every value must lie in the key's range
(:data:`diagap.design.SCHEMA`).
START and STOP are converted to SI before spacing, so ``20degC:40degC:3`` gives 293.15, 303.15
and 313.15 K. Keys with named choices take names: ``backplate.hole_lattice=hex,square``.

The sweep is the cartesian product of all variations, the last one varying fastest. Values are
rounded to 12 significant digits, so that a point's id -- a hash of its overrides -- does not
depend on floating-point noise of the spacing.
"""
from __future__ import annotations

import difflib
import hashlib
import itertools
import json
import math
import re
from dataclasses import dataclass
from typing import Any, Iterable, Sequence

from diagap.design import SCHEMA, Field

__all__ = ["SweepError", "Variation", "parse_vary", "check_path", "grid", "point_id", "si_round",
           "column_name", "MAX_POINTS"]

MAX_POINTS = 100_000


class SweepError(ValueError):
    """A sweep definition or sweep folder that cannot be used (one-line message)."""


@dataclass(frozen=True)
class Variation:
    """One varied design key.

    Parameters
    ----------
    path : str
        The design key ``section.key``.
    values : tuple
        The values in SI units (floats), or names for keys with choices.
    unit : str or None
        The SI unit of the key (``"m"``, ``"Pa"``, ``""`` for a plain number, None for names).
    spacing : str
        ``"linear"``, ``"log"`` or ``"list"``: how the values were given (plots use a log axis
        for ``"log"``).
    text : str
        The text the variation was parsed from (for messages and the sweep manifest).
    """

    path: str
    values: tuple
    unit: str | None = None
    spacing: str = "list"
    text: str = ""

    @property
    def column(self) -> str:
        """The CSV column of this input: the key with its SI unit (``backplate.hole_radius_m``)."""
        return column_name(self.path, self.unit)

    @property
    def numeric(self) -> bool:
        return self.unit is not None


def column_name(path: str, unit: str | None) -> str:
    """``path`` with a suffix naming ``unit`` as summary keys do (``Pa*s/m^3`` → ``pa_s_per_m3``)."""
    if not unit:
        return path
    suffix = unit.lower().replace("^", "").replace("*", "_").replace("/", "_per_")
    return f"{path}_{suffix}"


def si_round(x: float) -> float:
    """``x`` rounded to 12 significant digits (stable ids and clean CSV values)."""
    return float(f"{float(x):.12g}")


def _keys() -> list[str]:
    return [f"{s}.{k}" for s, fields in SCHEMA.items() for k in fields]


def _field(text: str, path: str) -> Field:
    parts = path.split(".")
    if len(parts) == 2 and parts[0] in SCHEMA and parts[1] in SCHEMA[parts[0]]:
        return SCHEMA[parts[0]][parts[1]]
    near = difflib.get_close_matches(path, _keys(), n=1, cutoff=0.6)
    hint = (f"; did you mean {near[0]!r}?" if near
            else f" (use section.key; sections: {', '.join(SCHEMA)})")
    raise SweepError(f"--vary {text!r}: unknown design key {path!r}{hint}")


def check_path(path: str) -> None:
    """Raise :class:`SweepError` unless ``path`` is a design key ``section.key``."""
    _field(path, path)


def _unquote(s: str) -> str:
    s = s.strip()
    if len(s) >= 2 and s[0] == s[-1] and s[0] in "\"'":
        s = s[1:-1].strip()
    return s


def _to_si(text: str, value: str, f: Field, path: str = "") -> float:
    """A quantity with units (a plain number for a dimensionless key), converted to the SI unit
    of field ``f`` with the design parser's grammar and checked against the key's range."""
    from diagap.quantities import DesignError, parse_quantity

    value = _unquote(value)
    if not value:
        raise SweepError(f"--vary {text!r}: empty value")
    try:
        x = parse_quantity(path or "value", value, f)
    except DesignError as exc:
        raise SweepError(f"--vary {text!r}: {exc}") from None
    return si_round(x)


def _choice(text: str, value: str, f: Field) -> str:
    value = _unquote(value)
    if value not in f.choices:
        near = difflib.get_close_matches(value, f.choices, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise SweepError(f"--vary {text!r}: {value!r} is not one of {', '.join(f.choices)}{hint}")
    return value


def _count(text: str, n: str) -> int:
    try:
        count = int(n.strip())
    except ValueError:
        raise SweepError(f"--vary {text!r}: N = {n.strip()!r} must be a whole number of values "
                         f"(>= 2)") from None
    if not 2 <= count <= MAX_POINTS:
        raise SweepError(f"--vary {text!r}: N = {count} must be in [2, {MAX_POINTS}] "
                         f"(for one value write PATH=VALUE)")
    return count


def _range(text: str, parts: list[str], f: Field,
           path: str = "") -> tuple[tuple[float, ...], str]:
    import numpy as np

    log = len(parts) == 4
    if len(parts) not in (3, 4) or (log and parts[3].strip().lower() != "log"):
        raise SweepError(f"--vary {text!r}: a range is START:STOP:N or START:STOP:N:log")
    start, stop = _to_si(text, parts[0], f, path), _to_si(text, parts[1], f, path)
    n = _count(text, parts[2])
    if start == stop:
        raise SweepError(f"--vary {text!r}: START and STOP are equal ({start:g})")
    if log and (start <= 0 or stop <= 0):
        raise SweepError(f"--vary {text!r}: a log range needs START and STOP > 0 in SI "
                         f"(got {start:g}, {stop:g})")
    values = np.geomspace(start, stop, n) if log else np.linspace(start, stop, n)
    values = tuple(si_round(v) for v in values)
    if len(set(values)) != n:
        raise SweepError(f"--vary {text!r}: {n} values between {start:g} and {stop:g} are not "
                         f"distinct at 12 significant digits")
    return values, "log" if log else "linear"


def parse_vary(text: str) -> Variation:
    """Parse one ``PATH=SPEC`` text (see the module docstring) into a :class:`Variation`.

    Raises
    ------
    SweepError
        With a one-line message naming the text and what is wrong.
    """
    if not isinstance(text, str) or "=" not in text:
        raise SweepError(f"--vary {text!r}: expected PATH=START:STOP:N or PATH=V1,V2,... "
                         f"(e.g. backplate.hole_radius=2um:6um:5)")
    path, spec = (s.strip() for s in text.split("=", 1))
    f = _field(text, path)
    if not spec:
        raise SweepError(f"--vary {text!r}: no values after '='")
    if f.choices:
        if ":" in spec:
            raise SweepError(f"--vary {text!r}: {path} takes names ({', '.join(f.choices)}); "
                             f"list them as V1,V2")
        values, spacing = tuple(_choice(text, v, f) for v in spec.split(",")), "list"
        unit = None
    else:
        unit = f.unit or ""
        if "," in spec or ":" not in spec:
            try:
                values = tuple(_to_si(text, v, f, path) for v in spec.split(","))
            except SweepError as exc:
                if re.search(r"\d,\d", spec):
                    raise SweepError(f"{exc} (',' separates values here; a decimal number "
                                     f"takes a point: 4.5um)") from None
                raise
            spacing = "list"
        else:
            values, spacing = _range(text, spec.split(":"), f, path)
    dup = [v for v, c in _counted(values) if c > 1]
    if dup:
        raise SweepError(f"--vary {text!r}: value {dup[0]!r} is listed more than once")
    return Variation(path, values, unit, spacing, text)


def _counted(values: Iterable) -> list[tuple[Any, int]]:
    seen: dict[Any, int] = {}
    for v in values:
        seen[v] = seen.get(v, 0) + 1
    return list(seen.items())


def grid(variations: Sequence[Variation]) -> list[tuple[tuple[str, Any], ...]]:
    """The cartesian product of ``variations`` as override tuples ``((path, value), ...)``.

    The order follows the variations as given, the last one varying fastest.
    """
    if not variations:
        raise SweepError("a sweep needs at least one --vary PATH=SPEC")
    paths = [v.path for v in variations]
    repeated = sorted({p for p in paths if paths.count(p) > 1})
    if repeated:
        raise SweepError(f"--vary: {repeated[0]} is varied more than once (give all its values "
                         f"in one --vary)")
    total = math.prod(len(v.values) for v in variations)
    if total > MAX_POINTS:
        raise SweepError(f"--vary: the sweep has {total} points, more than the limit {MAX_POINTS}")
    combos = itertools.product(*(v.values for v in variations))
    return [tuple(zip(paths, combo)) for combo in combos]


def point_id(overrides: Iterable[tuple[str, Any]]) -> str:
    """A stable 12-hex-digit id of a point: the hash of its overrides, whatever their order."""
    canon = sorted((p, si_round(v) if isinstance(v, (int, float)) and not isinstance(v, bool)
                    else v) for p, v in overrides)
    blob = json.dumps(canon, separators=(",", ":"))
    return hashlib.sha256(blob.encode()).hexdigest()[:12]
