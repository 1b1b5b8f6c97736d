"""The package around the capsule in a design file: [port], [front] and the lossy back volume and
vent channel of [acoustics], checked and turned into the acoustic elements of
:mod:`diagap.lumped.package`.

Rules (each broken rule is a one-line :class:`diagap.design.DesignError`):

* [port]: ``length`` and exactly one cross-section, ``radius`` or ``slot_width`` + ``slot_height``;
* [front]: ``volume`` and optionally ``wall_area`` (at least the area of the sphere of that
  volume); a [front] needs a [port], its opening to the sound field;
* [acoustics]: exactly one of ``vent_resistance`` or a vent channel (``vent_length`` with
  ``vent_radius`` or ``vent_slot_width`` + ``vent_slot_height``); at most one of
  ``back_volume_area`` and ``back_volume_box`` (three lengths whose product is ``back_volume``
  within 1 %).

A vent channel's low-frequency resistance (Poiseuille with Sampson's or Hasimoto's end
resistance, :class:`diagap.lumped.tubes.Channel`) stands in for ``vent_resistance`` wherever one
number is needed (the acoustic corner, the distortion model, the SPICE netlist).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from diagap.quantities import DesignError

__all__ = ["Port", "Front", "VentChannel", "package_sections", "acoustics_extras",
           "package_acoustics", "gas_of", "gas_from_air", "PackageLoad", "package_loads",
           "package_noise", "package_response_data"]


@dataclass(frozen=True)
class Port:
    """The sound inlet: length and a circular (radius) or rectangular (height, width) section."""

    length_m: float
    radius_m: float | None = None
    slot_m: tuple | None = None

    def channel(self):
        from diagap.lumped.tubes import Channel

        return Channel(self.length_m, radius_m=self.radius_m, slot_m=self.slot_m)


@dataclass(frozen=True)
class Front:
    """The front chamber: volume and (optional) wall area."""

    volume_m3: float
    wall_area_m2: float | None = None


@dataclass(frozen=True)
class VentChannel:
    """The vent as a channel: length and a circular or rectangular section."""

    length_m: float
    radius_m: float | None = None
    slot_m: tuple | None = None

    def channel(self):
        from diagap.lumped.tubes import Channel

        return Channel(self.length_m, radius_m=self.radius_m, slot_m=self.slot_m)


def _section_of(raw: dict, name: str) -> dict | None:
    from diagap.design import _section

    return _section(raw, name) if name in raw else None


def _cross_section(where: str, radius, width, height, radius_key: str, width_key: str,
                   height_key: str):
    if radius is not None:
        if width is not None or height is not None:
            raise DesignError(f"{where}.{radius_key} = {radius!r} m: give either {radius_key} or "
                              f"{width_key} + {height_key}, not both")
        return radius, None
    if width is None or height is None:
        missing = height_key if width is not None else width_key
        raise DesignError(f"{where}.{missing}: missing (a slot needs {width_key} and "
                          f"{height_key}, or give {radius_key})")
    return None, (height, width)


def _sphere_area(volume_m3: float) -> float:
    return (36.0 * math.pi * volume_m3**2) ** (1.0 / 3.0)


def package_sections(raw: dict, acoustics: dict | None) -> tuple[Port | None, Front | None]:
    """[port] and [front] of a design, checked (None where absent)."""
    p = _section_of(raw, "port")
    f = _section_of(raw, "front")
    port = front = None
    if p is not None:
        if p["radius"] is None and p["slot_width"] is None and p["slot_height"] is None:
            raise DesignError("port.radius: missing (give radius, or slot_width + slot_height)")
        r, slot = _cross_section("port", p["radius"], p["slot_width"], p["slot_height"],
                                 "radius", "slot_width", "slot_height")
        port = Port(p["length"], r, slot)
    if f is not None:
        if port is None:
            raise DesignError("front: needs a [port] section (the chamber's opening to the "
                              "sound field)")
        s = f["wall_area"]
        if s is not None and s < _sphere_area(f["volume"]) * (1 - 1e-9):
            raise DesignError(f"front.wall_area = {s:.4g} m^2: must be at least "
                              f"{_sphere_area(f['volume']):.4g} m^2 (a sphere of that volume)")
        front = Front(f["volume"], s)
    if (port is not None) and acoustics is None:
        raise DesignError("port: needs an [acoustics] section (back volume, vent, air)")
    return port, front


def acoustics_extras(a: dict) -> dict:
    """Lossy back volume and vent channel of [acoustics] as :class:`Acoustics` keywords; fills
    ``a["vent_resistance"]`` with the channel's low-frequency resistance when a channel is given."""
    chan_keys = ("vent_radius", "vent_slot_width", "vent_slot_height", "vent_length")
    has_channel = any(a[k] is not None for k in chan_keys)
    if has_channel and a["vent_resistance"] is not None:
        raise DesignError(f"acoustics.vent_resistance = {a['vent_resistance']:.4g} Pa*s/m^3: "
                          "give either vent_resistance or a vent channel (vent_radius or "
                          "vent_slot_width + vent_slot_height, and vent_length), not both")
    out: dict = {}
    if has_channel:
        if a["vent_length"] is None:
            raise DesignError("acoustics.vent_length: missing (required for a vent channel, in m)")
        if a["vent_radius"] is None and a["vent_slot_width"] is None \
                and a["vent_slot_height"] is None:
            raise DesignError("acoustics.vent_radius: missing (a vent channel needs vent_radius "
                              "or vent_slot_width + vent_slot_height)")
        r, slot = _cross_section("acoustics", a["vent_radius"], a["vent_slot_width"],
                                 a["vent_slot_height"], "vent_radius", "vent_slot_width",
                                 "vent_slot_height")
        vent = VentChannel(a["vent_length"], r, slot)
        gas = gas_of(a["temperature"], a["static_pressure"])
        a["vent_resistance"] = vent.channel().static_resistance_pa_s_per_m3(gas)
        out["vent_channel"] = vent
    elif a["vent_resistance"] is None:
        raise DesignError("acoustics.vent_resistance: missing (required unless a vent channel "
                          "is given, in Pa*s/m^3)")
    area, box = a["back_volume_area"], a["back_volume_box"]
    v = a["back_volume"]
    if area is not None and box:
        raise DesignError("acoustics.back_volume_box: give either back_volume_area or "
                          "back_volume_box, not both")
    if area is not None:
        if area < _sphere_area(v) * (1 - 1e-9):
            raise DesignError(f"acoustics.back_volume_area = {area:.4g} m^2: must be at least "
                              f"{_sphere_area(v):.4g} m^2 (a sphere of the back volume)")
        out["back_volume_area_m2"] = area
    if box:
        if len(box) != 3:
            raise DesignError(f"acoustics.back_volume_box: {len(box)} lengths given; must be "
                              "three (the box's sides)")
        prod = box[0] * box[1] * box[2]
        if abs(prod / v - 1.0) > 0.01:
            raise DesignError(f"acoustics.back_volume_box: the sides give {prod:.4g} m^3; must "
                              f"equal back_volume = {v:.4g} m^3 within 1 %")
        out["back_volume_box_m"] = tuple(box)
    return out


def gas_of(temperature_k: float, static_pressure_pa: float):
    """The air of the design as a :class:`diagap.lumped.tubes.Gas`."""
    from diagap.fem.air import air_properties

    return gas_from_air(air_properties(temperature_k, static_pressure_pa))


def gas_from_air(air):
    """:class:`diagap.lumped.tubes.Gas` of a :class:`diagap.fem.air.AirProperties`."""
    from diagap.lumped.tubes import Gas

    return Gas(air.density_kg_per_m3, air.viscosity_pa_s, air.speed_of_sound_m_per_s,
               air.heat_capacity_ratio, air.static_pressure_pa)


def package_acoustics(design, gas=None):
    """The :class:`diagap.lumped.package.PackageAcoustics` of a design (None when the design
    has no port, front chamber, lossy back volume or vent channel: the capsule alone)."""
    from diagap.lumped.cavity import Cavity, box_thermal_permeability_m2
    from diagap.lumped.package import PackageAcoustics

    ac = design.acoustics
    if ac is None:
        return None
    back = None
    if ac.back_volume_box_m:
        a, b, c = ac.back_volume_box_m
        back = Cavity(ac.back_volume_m3, 2.0 * (a * b + b * c + c * a),
                      box_thermal_permeability_m2(a, b, c))
    elif ac.back_volume_area_m2 is not None:
        back = Cavity(ac.back_volume_m3, ac.back_volume_area_m2)
    port = design.port.channel() if design.port is not None else None
    front = (Cavity(design.front.volume_m3, design.front.wall_area_m2)
             if design.front is not None else None)
    vent = ac.vent_channel.channel() if ac.vent_channel is not None else None
    if port is None and back is None and vent is None:
        return None
    gas = gas or gas_of(ac.temperature_k, ac.static_pressure_pa)
    return PackageAcoustics(gas, port=port, front_chamber=front, back_volume=back, vent=vent)


@dataclass(frozen=True)
class PackageLoad:
    """One element of the package as a function of ω for the distributed solve
    (:class:`diagap.fem.response.coupled.ResponseInputs`): ``kind`` "front" → (T, Z_th),
    "back" → Y_bv, "vent" → Z_v (picklable, unlike a closure)."""

    package: object
    kind: str

    def __call__(self, omega: float):
        f = [omega / (2.0 * math.pi)]
        if self.kind == "front":
            net = self.package.front_network(f)
            return complex(net.transfer[0]), complex(net.impedance[0])
        if self.kind == "back":
            return complex(self.package.back_admittance(f)[0])
        return complex(self.package.vent_impedance(f)[0])


def package_loads(package) -> dict:
    """The ``front_load``/``back_admittance``/``vent_impedance`` keywords of the distributed solve
    for ``package`` (empty for None)."""
    if package is None:
        return {}
    out = {}
    if package.has_front_path:
        out["front_load"] = PackageLoad(package, "front")
    if package.back_volume is not None:
        out["back_admittance"] = PackageLoad(package, "back")
    if package.vent is not None:
        out["vent_impedance"] = PackageLoad(package, "vent")
    return out


def package_noise(model, f) -> dict:
    """Output noise PSDs of every dissipative element of a model with package elements."""
    from diagap.lumped.circuit import solve_circuit

    return solve_circuit(model, f).thermal_noise_output_psds(model.temperature_k)


def package_response_data(model) -> dict:
    """Front-path figures: the loaded Helmholtz resonance (peak of |p_f/p|) and the lossless
    value (c/2π)√(S/(V_f L_eff)) of port and front chamber alone."""
    from diagap.lumped.package import front_resonance_hz

    pk = model.package
    if pk is None or not pk.has_front_path:
        return {}
    return {"helmholtz_resonance_hz": front_resonance_hz(model),
            "helmholtz_lossless_hz": pk.helmholtz_lossless_hz()}
