"""Design files: TOML with units, parsed with pint into frozen dataclasses in SI.

A quantity is a plain number in SI units or a string with units (``"0.5 mm"``, ``"10 MPa"``,
``"20 degC"``). Every check raises :class:`DesignError` with one line naming the field, the value
found and what is allowed. See :data:`diagap.schema.SCHEMA` for the keys and their allowed
ranges; [acoustics] and [electrical] may be left out (``OPTIONAL_SECTIONS``). Files larger than
``MAX_FILE_BYTES`` are refused unread.
"""
from __future__ import annotations

import difflib
import math
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from typing import Any


try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover
    import tomli as tomllib

from diagap.lumped.buckling import critical_tension_n_per_m
from diagap.materials import MATERIALS
from diagap.readout_design import fill_input_capacitance, parse_readout
from diagap.quantities import DesignError, Field, _choice, _fmt, _quantity  # noqa: F401
from diagap.schema import (  # noqa: F401  (re-exported: the schema belongs to designs)
    _TOP, DEFAULT_AIR, MAX_FILE_BYTES, MAX_HOLE_KNUDSEN, MIN_SLENDERNESS, OPTIONAL_SECTIONS,
    SCHEMA)
from diagap.thermal_model import (ThermalModel, check_hole_knudsen, operating_stress_pa,
                                  thermal_model)

__all__ = [
    "DesignError", "Design", "Diaphragm", "Backplate", "Acoustics", "Electrical", "Analysis",
    "load_design", "read_design_table", "parse_design", "demo_design", "demo_text", "starter_text", "with_override",
    "with_overrides", "SCHEMA",
]


@dataclass(frozen=True)
class Diaphragm:
    shape: str
    size_m: float  # radius (circle) or side (square)
    thickness_m: float
    youngs_modulus_pa: float
    poisson_ratio: float
    density_kg_m3: float
    residual_stress_pa: float
    edge: str
    material: str | None = None

    @property
    def bending_stiffness_n_m(self) -> float:
        e, h, nu = self.youngs_modulus_pa, self.thickness_m, self.poisson_ratio
        return e * h**3 / (12.0 * (1.0 - nu**2))

    @property
    def tension_n_per_m(self) -> float:
        return self.residual_stress_pa * self.thickness_m

    @property
    def area_m2(self) -> float:
        return math.pi * self.size_m**2 if self.shape == "circle" else self.size_m**2


@dataclass(frozen=True)
class Backplate:
    gap_m: float
    thickness_m: float
    electrode_size_m: float  # electrode radius (circle) or side (square)
    hole_lattice: str
    hole_radius_m: float
    hole_pitch_m: float
    stopper_height_m: float | None = None  # bumps on the backplate: contact at gap − height
    plate: "BackplatePlate | None" = None  # compliant backplate (None: rigid)

    @property
    def clearance_m(self) -> float:
        """Centre travel to contact: the gap, less the stopper height if any."""
        return self.gap_m - (self.stopper_height_m or 0.0)

    @property
    def perforated(self) -> bool:
        return self.hole_lattice != "none"


@dataclass(frozen=True)
class BackplatePlate:
    """The backplate as a compliant perforated plate spanning the diaphragm's outline (same
    shape and radius/side, its own edge condition); its thickness and holes are the backplate's."""

    youngs_modulus_pa: float
    poisson_ratio: float
    density_kg_m3: float
    residual_stress_pa: float
    edge: str
    material: str | None = None


@dataclass(frozen=True)
class Acoustics:
    back_volume_m3: float  # closed volume behind the backplate
    vent_resistance_pa_s_per_m3: float  # static-pressure equalisation path
    temperature_k: float
    static_pressure_pa: float
    # lossy back volume and vent channel (diagap.package_design); None: adiabatic, resistance
    back_volume_area_m2: float | None = None
    back_volume_box_m: tuple | None = None
    vent_channel: object | None = None


@dataclass(frozen=True)
class Electrical:
    bias_voltage_v: float
    bias_resistance_ohm: float
    parasitic_capacitance_f: float
    preamp_input_capacitance_f: float


@dataclass(frozen=True)
class Analysis:
    accuracy: str
    max_memory_b: float | None = None  # the design's own memory limit (None: the default)
    static_pressures_pa: tuple = ()  # large-deflection pressures (Pa, + toward the backplate)
    temperatures_k: tuple = ()  # operating temperatures of the drift analysis (K)


@dataclass(frozen=True)
class Design:
    name: str
    description: str
    diaphragm: Diaphragm
    backplate: Backplate
    acoustics: Acoustics | None  # None: no [acoustics]; the lumped model is skipped
    electrical: Electrical | None  # None: no [electrical]; bias-point results are skipped
    analysis: Analysis
    raw: tuple = ()  # the parsed TOML as nested (key, value) pairs, for overrides in sweeps
    readout: Any = None  # diagap.lumped.readout.Readout, None: no [readout] (capsule only)
    # thermal data (None: none given; the residual stress is then used at every temperature);
    # with it, diaphragm.residual_stress_pa is the stress at the operating temperature
    thermal: ThermalModel | None = None
    layers: Any = None  # GapLayers of [layers] (diagap.dielectrics), None: no layers
    electret: Any = None  # Electret of [electret] (diagap.dielectrics), None: no electret
    port: object | None = None  # [port]: diagap.package_design.Port, None without one
    front: object | None = None  # [front]: diagap.package_design.Front, None without one

    def to_dict(self) -> dict:
        """The normalised design in SI (keys carry units), for summary.json."""
        d = asdict(self)
        d.pop("raw", None)
        for key in ("readout", "thermal", "layers", "electret", "port", "front"):
            if d.get(key) is None:  # optional sections: listed only when present
                d.pop(key, None)
        if d["backplate"].get("plate", 0) is None:  # rigid backplate: no entry
            d["backplate"].pop("plate")
        if d.get("acoustics"):
            for key in ("back_volume_area_m2", "back_volume_box_m", "vent_channel"):
                if d["acoustics"].get(key) is None:
                    d["acoustics"].pop(key, None)
        # the size is named for what it is, as in the design file: radius or side
        size = "radius" if self.diaphragm.shape == "circle" else "side"
        d["diaphragm"] = {(f"{size}_m" if k == "size_m" else k): v
                          for k, v in d["diaphragm"].items()}
        d["backplate"] = {(f"electrode_{size}_m" if k == "electrode_size_m" else k): v
                          for k, v in d["backplate"].items()}
        return d

    @property
    def air_conditions(self) -> tuple[float, float]:
        """(temperature K, static pressure Pa) of the air in the gap: the design's [acoustics],
        else :data:`DEFAULT_AIR` (20 degC, 101.325 kPa)."""
        if self.acoustics is None:
            return DEFAULT_AIR
        return self.acoustics.temperature_k, self.acoustics.static_pressure_pa

    def missing_sections(self) -> tuple[str, ...]:
        """The optional sections this design leaves out."""
        return tuple(s for s in OPTIONAL_SECTIONS if getattr(self, s) is None)

    def raw_dict(self) -> dict:
        return _thaw(self.raw)

    def with_accuracy(self, accuracy: str) -> "Design":
        """A copy with ``analysis.accuracy`` replaced (also in the raw table used by overrides)."""
        level = _choice("analysis.accuracy", accuracy, SCHEMA["analysis"]["accuracy"])
        raw = self.raw_dict()
        raw.setdefault("analysis", {})["accuracy"] = level
        return replace(self, analysis=replace(self.analysis, accuracy=level), raw=_freeze(raw))


    def with_max_memory(self, max_memory_b: float | None) -> "Design":
        """A copy with ``analysis.max_memory`` set (bytes; None: unchanged)."""
        if max_memory_b is None:
            return self
        raw = self.raw_dict()
        raw.setdefault("analysis", {})["max_memory"] = f"{max_memory_b:.6g} B"
        return replace(self, analysis=replace(self.analysis, max_memory_b=float(max_memory_b)),
                       raw=_freeze(raw))


def _freeze(d):
    if isinstance(d, dict):
        return tuple((k, _freeze(v)) for k, v in d.items())
    if isinstance(d, list):
        return ("__list__", tuple(_freeze(v) for v in d))
    return d


def _thaw(t):
    if isinstance(t, tuple) and len(t) == 2 and t[0] == "__list__":
        return [_thaw(v) for v in t[1]]
    if isinstance(t, tuple):
        return {k: _thaw(v) for k, v in t}
    return t


def _check_keys(section: str, table: dict, fields: dict) -> None:
    for key in table:
        if key not in fields:
            near = difflib.get_close_matches(key, list(fields), n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else f"; known keys: {', '.join(fields)}"
            where = f"{section}.{key}" if section else key
            raise DesignError(f"{where}: unknown key{hint}")


def _section(raw: dict, section: str) -> dict:
    """Parse one section into a dict of SI values / strings (missing optional keys → default)."""
    table = raw.get(section, {})
    if not isinstance(table, dict):
        raise DesignError(f"{section} = {_fmt(table)}: must be a table [{section}]")
    fields = SCHEMA[section]
    _check_keys(section, table, fields)
    out = {}
    for key, f in fields.items():
        name = f"{section}.{key}"
        if key not in table:
            if f.required:
                raise DesignError(f"{name}: missing (required{', in ' + f.unit if f.unit else ''})")
            out[key] = f.default
        elif f.choices:
            out[key] = _choice(name, table[key], f)
        elif isinstance(f.default, tuple):  # a list of quantities
            if not isinstance(table[key], list):
                raise DesignError(f"{name} = {_fmt(table[key])}: must be a list of quantities "
                                  f"(e.g. [\"10 {f.unit}\", \"100 {f.unit}\"])")
            out[key] = tuple(_quantity(f"{name}[{i}]", v, f) for i, v in enumerate(table[key]))
        else:
            out[key] = _quantity(name, table[key], f)
    return out


def _need(section: str, values: dict, key: str, why: str) -> float:
    if values[key] is None:
        unit = SCHEMA[section][key].unit
        raise DesignError(f"{section}.{key}: missing (required {why}, in {unit})")
    return values[key]


def _elastic_properties(section: str, v: dict, need: str, sep: str) -> dict:
    """Young's modulus, Poisson's ratio and density of a plate section: each given value, else
    the section's material preset, else a one-line error naming the key and the presets."""
    preset = MATERIALS.get(v["material"]) if v["material"] else None
    props = {}
    for key, attr in (("youngs_modulus", "youngs_modulus_pa"), ("poisson_ratio", "poisson_ratio"),
                      ("density", "density_kg_m3")):
        if v[key] is not None:
            props[attr] = v[key]
        elif preset is not None:
            props[attr] = getattr(preset, attr)
        else:
            f = SCHEMA[section][key]
            raise DesignError(f"{section}.{key}: missing ({need}"
                              f"{' in ' + f.unit if f.unit else ''}{sep} or a {section}.material "
                              f"preset: {', '.join(MATERIALS)})")
    return props


def _diaphragm(raw: dict) -> Diaphragm:
    v = _section(raw, "diaphragm")
    circle = v["shape"] == "circle"
    size_key, other = ("radius", "side") if circle else ("side", "radius")
    if v[other] is not None:
        raise DesignError(f"diaphragm.{other}: not used for shape = {v['shape']!r} "
                          f"(give diaphragm.{size_key})")
    size = _need("diaphragm", v, size_key, f"for shape = {v['shape']!r}")
    props = _elastic_properties("diaphragm", v, "give it", "")
    if v["thickness"] * MIN_SLENDERNESS > size:
        raise DesignError(f"diaphragm.thickness = {v['thickness']:g} m: must be at most 1/"
                          f"{MIN_SLENDERNESS:g} of the diaphragm {size_key} ({size:g} m), "
                          f"i.e. <= {size / MIN_SLENDERNESS:g} m, for a thin plate")
    d = Diaphragm(v["shape"], size, v["thickness"], props["youngs_modulus_pa"],
                  props["poisson_ratio"], props["density_kg_m3"], v["residual_stress"], v["edge"],
                  v["material"])
    return d


def _thermal(raw: dict, d: Diaphragm, t_op: float) -> tuple[Diaphragm, ThermalModel | None]:
    """The diaphragm at the operating temperature ``t_op`` and the thermal model (None without
    thermal data: the stress as given, checked against buckling)."""
    sub = _section(raw, "substrate") if "substrate" in raw else None
    temps = _section(raw, "analysis")["temperatures"]
    model = thermal_model(_section(raw, "diaphragm"), sub, temps,
                          {"youngs_modulus_pa": d.youngs_modulus_pa,
                           "poisson_ratio": d.poisson_ratio})
    if model is None:
        _check_buckling(d)
        return d, None
    where = "acoustics.temperature" if "acoustics" in raw else "operating temperature"
    sigma = operating_stress_pa(model, t_op, d.shape, d.edge, d.size_m, d.thickness_m, where)
    return replace(d, residual_stress_pa=sigma), model


def _check_buckling(d: Diaphragm) -> None:
    if d.residual_stress_pa >= 0:
        return
    n_cr = critical_tension_n_per_m(d.shape, d.edge, d.size_m, d.bending_stiffness_n_m,
                                    d.poisson_ratio)
    sigma_cr = n_cr / d.thickness_m
    if -d.residual_stress_pa >= sigma_cr:
        raise DesignError(
            f"diaphragm.residual_stress = {d.residual_stress_pa:g} Pa: compressive stress at or "
            f"beyond the buckling load; must be > -{sigma_cr:.4g} Pa (critical stress for a "
            f"{d.edge} {d.shape})")


def _check_holes(r_h: float, air: tuple[float, float]) -> None:
    """Refuse holes so narrow that the air is no longer a slip-flow continuum in them."""
    from diagap.fem.air import air_properties

    lam = air_properties(*air).mean_free_path_m
    if r_h * MAX_HOLE_KNUDSEN < lam:
        raise DesignError(f"backplate.hole_radius = {r_h:g} m: must be >= {lam / MAX_HOLE_KNUDSEN:g}"
                          f" m, {1 / MAX_HOLE_KNUDSEN:g} mean free paths of the air "
                          f"({lam:.3g} m; Knudsen number <= {MAX_HOLE_KNUDSEN:g})")


def _backplate(raw: dict, d: Diaphragm, air: tuple[float, float] = DEFAULT_AIR) -> Backplate:
    v = _section(raw, "backplate")
    circle = d.shape == "circle"
    el_key, other = ("electrode_radius", "electrode_side") if circle else ("electrode_side",
                                                                          "electrode_radius")
    if v[other] is not None:
        raise DesignError(f"backplate.{other}: not used for a {d.shape} diaphragm "
                          f"(give backplate.{el_key})")
    el = v[el_key] if v[el_key] is not None else d.size_m
    if el > d.size_m * (1 + 1e-12):
        raise DesignError(f"backplate.{el_key} = {el:g} m: must not exceed the diaphragm's "
                          f"{'radius' if circle else 'side'} ({d.size_m:g} m)")
    if v["gap"] >= 0.2 * d.size_m:
        raise DesignError(f"backplate.gap = {v['gap']:g} m: must be well below the diaphragm size "
                          f"(< {0.2 * d.size_m:g} m) for a thin air gap")
    lattice = v["hole_lattice"]
    r_h = v["hole_radius"] or 0.0
    pitch = v["hole_pitch"] or 0.0
    if lattice != "none":
        r_h = _need("backplate", v, "hole_radius", f"with hole_lattice = {lattice!r}")
        pitch = _need("backplate", v, "hole_pitch", f"with hole_lattice = {lattice!r}")
        if r_h >= 0.5 * pitch:
            raise DesignError(f"backplate.hole_radius = {r_h:g} m: must be less than half the "
                              f"hole_pitch ({0.5 * pitch:g} m), otherwise the holes touch")
        if pitch >= el:
            raise DesignError(f"backplate.hole_pitch = {pitch:g} m: must be smaller than the "
                              f"electrode ({el_key} = {el:g} m)")
        _check_holes(r_h, air)
    elif v["hole_radius"] is not None or v["hole_pitch"] is not None:
        raise DesignError("backplate.hole_lattice = 'none': hole_radius/hole_pitch given without a "
                          "lattice; set hole_lattice to hex or square, or remove them")
    if v["stopper_height"] is not None and v["stopper_height"] >= v["gap"]:
        raise DesignError(f"backplate.stopper_height = {v['stopper_height']:g} m: must be "
                          f"smaller than the gap ({v['gap']:g} m)")
    return Backplate(v["gap"], v["thickness"], el, lattice, r_h, pitch, v["stopper_height"],
                     _backplate_plate(v))


_PLATE_KEYS = ("material", "youngs_modulus", "poisson_ratio", "density", "residual_stress", "edge")


def _backplate_plate(v: dict) -> "BackplatePlate | None":
    """The compliant-backplate material when any of its keys is given, else None (rigid)."""
    if all(v[k] is None for k in _PLATE_KEYS):
        return None
    props = _elastic_properties("backplate", v, "a compliant backplate needs it", ",")
    return BackplatePlate(props["youngs_modulus_pa"], props["poisson_ratio"],
                          props["density_kg_m3"], v["residual_stress"] or 0.0,
                          v["edge"] or "clamped", v["material"])


#: tables of design-space studies (read by diagap.studies), allowed beside the design
_STUDIES = {"tolerances": Field(), "optimise": Field()}


def parse_design(raw: dict, source: str = "<design>") -> Design:
    """Validate a design given as the dictionary of a TOML file and return it in SI.

    Parameters
    ----------
    raw : dict
        Sections (``diaphragm``, ``backplate``, ``acoustics``, ``electrical``, ``analysis``) of
        key → value; values are numbers in SI or strings with units (``"0.5 mm"``, ``"200 V"``).
    source : str
        Name used in error messages (the file name).

    Returns
    -------
    Design
        Frozen dataclasses in SI units (``design.diaphragm.size_m``, ``design.backplate.gap_m``).

    Raises
    ------
    DesignError
        One line naming the key, the value and what is allowed.
    """
    if not isinstance(raw, dict):
        raise DesignError(f"{source}: a design must be a TOML table")
    _check_keys("", {k: v for k, v in raw.items() if not isinstance(v, dict)} | {
        k: v for k, v in raw.items() if isinstance(v, dict)}, {**_TOP, **SCHEMA, **_STUDIES})
    for key in SCHEMA:
        if key in raw and not isinstance(raw[key], dict):
            raise DesignError(f"{key} = {_fmt(raw[key])}: must be a table [{key}]")
    for key in _TOP:
        if key in raw and not isinstance(raw[key], str):
            raise DesignError(f"{key} = {_fmt(raw[key])}: must be a string")
    from diagap.package_design import acoustics_extras, package_sections

    d = _diaphragm(raw)
    a = _section(raw, "acoustics") if "acoustics" in raw else None
    extras = {} if a is None else acoustics_extras(a)  # may fill a["vent_resistance"]
    acoustics = None if a is None else Acoustics(a["back_volume"], a["vent_resistance"],
                                                 a["temperature"], a["static_pressure"],
                                                 **extras)
    port, front = package_sections(raw, a)
    air = DEFAULT_AIR if a is None else (a["temperature"], a["static_pressure"])
    d, thermal = _thermal(raw, d, air[0])
    b = _backplate(raw, d, air)
    layers, electret, raw_e, no_supply = _dielectrics(raw, b)
    e = _section(raw_e, "electrical") if "electrical" in raw else None
    readout = fill_input_capacitance(raw_e, e, parse_readout(raw, _section))
    electrical = None if e is None else Electrical(e["bias_voltage"], e["bias_resistance"],
                                                   e["parasitic_capacitance"],
                                                   e["preamp_input_capacitance"])
    if no_supply:
        electrical = replace(electrical, bias_voltage_v=0.0)
    n = _section(raw, "analysis")
    if b.perforated and n["temperatures"]:
        check_hole_knudsen(n["temperatures"], air[1], b.hole_radius_m, MAX_HOLE_KNUDSEN)
    return Design(
        name=raw.get("name", _TOP["name"].default),
        description=raw.get("description", ""),
        diaphragm=d,
        backplate=b,
        acoustics=acoustics,
        electrical=electrical,
        analysis=Analysis(n["accuracy"], n["max_memory"], n["static_pressures"],
                          tuple(sorted(n["temperatures"]))),
        raw=_freeze(raw),
        readout=readout,
        thermal=thermal,
        layers=layers,
        electret=electret,
        port=port,
        front=front,
    )


def _dielectrics(raw: dict, b: Backplate):
    """[layers] and [electret] (:mod:`diagap.dielectrics`), and the raw table for [electrical]
    (an electret capsule may leave out the bias supply: bias_voltage is then 0 V; a placeholder
    passes the schema's range check and is replaced), and whether the supply was left out."""
    from diagap.dielectrics import parse_electret, parse_layers

    layers = parse_layers(_section(raw, "layers") if "layers" in raw else None, b.gap_m,
                          b.thickness_m)
    electret = parse_electret(_section(raw, "electret") if "electret" in raw else None, layers)
    raw_e, no_supply = raw, False
    table = raw.get("electrical")
    if electret is not None and isinstance(table, dict) and "bias_voltage" not in table:
        raw_e, no_supply = {**raw, "electrical": {"bias_voltage": 1.0, **table}}, True
    return layers, electret, raw_e, no_supply


def _loads(text: str, source: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise DesignError(f"{source}: not valid TOML ({exc})") from None


def load_design(path: str | Path) -> Design:
    """Read and validate a design file (TOML; see :func:`parse_design`).

    At most :data:`MAX_FILE_BYTES` are read: a design is a short text.

    Parameters
    ----------
    path : str or Path
        The design file.

    Returns
    -------
    Design

    Raises
    ------
    DesignError
        Missing, oversized or unreadable file, invalid TOML or an invalid value (one line).
    """
    return parse_design(read_design_table(path), str(path))


def read_design_table(path: str | Path) -> dict:
    """The TOML table of a design file, unvalidated: at most :data:`MAX_FILE_BYTES` read, UTF-8.

    Raises
    ------
    DesignError
        Missing, oversized or unreadable file, or invalid TOML (one line).
    """
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise DesignError(f"{p}: design file not found") from None
    except OSError as exc:
        raise DesignError(f"{p}: cannot read design file ({exc.__class__.__name__})") from None
    if len(data) > MAX_FILE_BYTES:
        raise DesignError(f"{p}: design file larger than {MAX_FILE_BYTES // 1000} kB; a design "
                          f"is a short TOML text")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise DesignError(f"{p}: cannot read design file (not UTF-8 text)") from None
    return _loads(text, str(p))


def _data(name: str) -> str:
    return (Path(__file__).parent / "data" / name).read_text(encoding="utf-8")


def demo_text() -> str:
    """The TOML text of the built-in demo design (an invented scenario)."""
    return _data("demo.toml")


def starter_text() -> str:
    """A commented starter design for ``diagap init``."""
    return _data("starter.toml")


def demo_design() -> Design:
    """The built-in demo design (an invented scenario), validated: a :class:`Design`."""
    return parse_design(_loads(demo_text(), "<built-in demo>"), "<built-in demo>")


def with_override(design: Design, path: str, value) -> Design:
    """A copy of ``design`` with the key ``section.key`` set to ``value`` (validated again);
    see :func:`with_overrides`."""
    return with_overrides(design, {path: value})


def with_overrides(design: Design, changes: dict) -> Design:
    """A copy of ``design`` with several ``section.key`` values replaced at once.

    Parameters
    ----------
    design : Design
        The design to start from (unchanged).
    changes : dict
        ``"section.key"`` → value as in a design file (``{"backplate.gap": "5 um"}``); ``None``
        removes a key (its default applies again).

    Returns
    -------
    Design
        Validated once, so that combinations valid only together are accepted.

    Raises
    ------
    DesignError
        An unknown key or an invalid value (one line).
    """
    raw = design.raw_dict()
    for path, value in changes.items():
        parts = path.split(".")
        if len(parts) == 1 and parts[0] in _TOP:
            raw[parts[0]] = value
            continue
        if len(parts) != 2 or parts[0] not in SCHEMA:
            raise DesignError(f"{path}: not a design key (use section.key, sections: "
                              f"{', '.join(SCHEMA)})")
        section, key = parts
        if key not in SCHEMA[section]:
            _check_keys(section, {key: None}, SCHEMA[section])
        table = raw.setdefault(section, {})
        if value is None:
            table.pop(key, None)
        else:
            table[key] = value
    return parse_design(raw)
