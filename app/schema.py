"""The design-file schema: every key of every section with its SI unit, its allowed range, its
choices or default, and the cross-field limits -- one table, checked before any computation.

Ranges describe physically plausible capsules (nanometre films to centimetre plates, air at usual
conditions) whose meshes stay within reach; :mod:`diagap.budget` bounds the run size on top.
"""
from __future__ import annotations

from diagap.fem.constants import ROOM_TEMPERATURE_K, STANDARD_PRESSURE_PA
from diagap.materials import MATERIALS, SUBSTRATES
from diagap.quantities import Field

__all__ = ["SCHEMA", "OPTIONAL_SECTIONS", "PACKAGE_SECTIONS", "DEFAULT_AIR", "MIN_SLENDERNESS", "MAX_HOLE_KNUDSEN",
           "MAX_FILE_BYTES"]


def _length(low: float, high: float, **kw) -> Field:
    return Field("m", low=low, high=high, low_open=False, high_open=False, **kw)


def _range(unit: str, low: float, high: float, **kw) -> Field:
    return Field(unit, low=low, high=high, low_open=False, high_open=False, **kw)


#: The allowed range of every design value (SI), checked before any computation: physically
#: plausible capsules (nanometre films to centimetre plates, air at usual conditions) whose
#: meshes stay within reach. Cross-field limits (slenderness, Knudsen number, gap / size, the
#: holes against the pitch and the electrode) are checked in the section parsers below.
SCHEMA: dict[str, dict[str, Field]] = {
    "diaphragm": {
        "shape": Field(choices=("circle", "square"), default="circle"),
        "radius": _length(10e-6, 50e-3),
        "side": _length(20e-6, 100e-3),
        "thickness": _length(10e-9, 1e-3, required=True),
        "material": Field(choices=tuple(MATERIALS)),
        "youngs_modulus": _range("Pa", 1e5, 2e12, example="160 GPa"),
        "poisson_ratio": Field("", low=-1.0, high=0.5),
        "density": _range("kg/m^3", 100.0, 30000.0),
        "residual_stress": _range("Pa", -10e9, 10e9, default=0.0),
        "edge": Field(choices=("clamped", "simply-supported"), default="clamped"),
        # thermal data (optional): α of the film and the temperature at which residual_stress
        # holds; see diagap.thermal_model
        "thermal_expansion": _range("1/K", -1e-4, 1e-3, example="2.8e-6 1/K"),
        "stress_reference_temperature": _range("K", 73.15, 1473.15, example="20 degC"),
    },
    "backplate": {
        "gap": _length(0.1e-6, 1e-3, required=True),
        "thickness": _length(0.1e-6, 10e-3, required=True),
        "electrode_radius": _length(1e-6, 50e-3),
        "electrode_side": _length(2e-6, 100e-3),
        "hole_lattice": Field(choices=("hex", "square", "none"), default="none"),
        "hole_radius": _length(0.1e-6, 5e-3),
        "hole_pitch": _length(0.5e-6, 20e-3),
        "stopper_height": _length(1e-9, 1e-3),
        # a compliant backplate: any of these makes it a plate (absent: rigid)
        "material": Field(choices=tuple(MATERIALS)),
        "youngs_modulus": _range("Pa", 1e5, 2e12, example="160 GPa"),
        "poisson_ratio": Field("", low=-1.0, high=0.5),
        "density": _range("kg/m^3", 100.0, 30000.0),
        "residual_stress": _range("Pa", -10e9, 10e9, example="50 MPa"),
        "edge": Field(choices=("clamped", "simply-supported")),
    },
    "acoustics": {
        "back_volume": _range("m^3", 1e-12, 1e-3, required=True),
        "vent_resistance": _range("Pa*s/m^3", 1e3, 1e20),
        # lossy back volume: its wall area, or a box (three lengths); a vent channel instead of
        # vent_resistance: vent_radius or vent_slot_width + vent_slot_height, and vent_length
        "back_volume_area": _range("m^2", 1e-12, 1.0),
        "back_volume_box": _range("m", 1e-6, 0.1, default=(), example="1 mm"),
        "vent_radius": _length(0.1e-6, 5e-3),
        "vent_slot_width": _length(0.1e-6, 0.1),
        "vent_slot_height": _length(0.1e-6, 5e-3),
        "vent_length": _length(0.1e-6, 0.1),
        "temperature": Field("K", low=173.15, high=473.15, low_open=False, high_open=False,
                             default=ROOM_TEMPERATURE_K),
        "static_pressure": Field("Pa", low=1e3, high=1e6, low_open=False, high_open=False,
                                 default=STANDARD_PRESSURE_PA),
    },
    "electrical": {
        "bias_voltage": Field("V", low=0.0, high=1000.0, high_open=False, required=True),
        "bias_resistance": _range("ohm", 1e3, 1e15, required=True),
        "parasitic_capacitance": _range("F", 0.0, 1e-6, default=0.0),
        "preamp_input_capacitance": _range("F", 0.0, 1e-6, default=0.0),
    },
    # the readout after the capsule and its bias supply (see diagap.readout_design)
    "readout": {
        "noise_density": Field("V/rtHz", low=0.0, high=1e-3, low_open=False, high_open=False,
                               required=True, example="10 nV/rtHz"),
        "noise_corner": _range("Hz", 0.0, 1e6, default=0.0),
        "gain": Field("", low=0.0, high=1e6, high_open=False),
        "gain_db": _range("", -60.0, 120.0),
        "input_capacitance": _range("F", 0.0, 1e-6),
        "clip_amplitude": Field("V", low=0.0, high=1e3, high_open=False, example="0.5 V"),
        "full_scale_input": Field("V", low=0.0, high=1e3, high_open=False, example="0.5 V"),
        "full_scale_spl": _range("", 60.0, 200.0, example="120"),
        "charge_pump_resistance": _range("ohm", 0.0, 1e15, default=0.0),
        "charge_pump_noise": Field("V/rtHz", low=0.0, high=1e-3, low_open=False,
                                   high_open=False, example="1 uV/rtHz"),
    },
    "port": {  # the sound inlet: a circular tube or a rectangular slot
        "radius": _length(1e-6, 10e-3),
        "slot_width": _length(1e-6, 0.1),
        "slot_height": _length(1e-6, 10e-3),
        "length": _length(1e-6, 0.1, required=True),
    },
    "front": {  # the front chamber between the port and the diaphragm
        "volume": _range("m^3", 1e-15, 1e-3, required=True),
        "wall_area": _range("m^2", 1e-12, 1.0),
    },
    "analysis": {
        "accuracy": Field(choices=("draft", "normal", "fine"), default="normal"),
        "max_memory": _range("B", 50e6, 1e12, example="4 GB"),
        # large-deflection pressures: + toward the backplate, − away from it (a list)
        "static_pressures": _range("Pa", -1e6, 1e6, default=(), example="100 Pa"),
        # operating temperatures of the drift analysis (a list; diagap.thermal)
        "temperatures": _range("K", 173.15, 473.15, default=(), example="-40 degC"),
    },
    # what the diaphragm is anchored to (optional; thermal expansion only)
    "substrate": {
        "material": Field(choices=tuple(SUBSTRATES)),
        "thermal_expansion": _range("1/K", -1e-4, 1e-3, example="2.6e-6 1/K"),
    },
    # dielectric layers on the gap side of the electrodes (optional section; see
    # diagap.dielectrics): the backplate's layer is part of backplate.thickness
    "layers": {
        "backplate_thickness": _length(1e-9, 1e-3, example="0.2 um"),
        "backplate_permittivity": _range("", 1.0, 100.0, example="7"),
        "diaphragm_thickness": _length(1e-9, 1e-3, example="0.2 um"),
        "diaphragm_permittivity": _range("", 1.0, 100.0, example="7"),
    },
    # fixed charge on one layer's gap-side surface (optional section; see diagap.dielectrics)
    "electret": {
        "charge_density": _range("C/m^2", -0.05, 0.05, required=True, example="-0.5 mC/m^2"),
        "layer": Field(choices=("backplate", "diaphragm"), default="backplate"),
    },
}
#: sections a design may leave out; the analyses that need them are skipped
OPTIONAL_SECTIONS = ("acoustics", "electrical", "readout")
#: sections describing the package around the capsule (absent: the capsule alone is analysed)
PACKAGE_SECTIONS = ("port", "front")
#: the air of the squeeze film when a design has no [acoustics]: 20 degC, 101.325 kPa
DEFAULT_AIR = (ROOM_TEMPERATURE_K, STANDARD_PRESSURE_PA)
#: least diaphragm size / thickness (Kirchhoff thin plate; common practice: a/h >= ~10)
MIN_SLENDERNESS = 10.0
#: largest Knudsen number mean free path / hole radius (slip-flow corrections stay meaningful)
MAX_HOLE_KNUDSEN = 0.5
#: design files larger than this are refused unread
MAX_FILE_BYTES = 1_000_000
_TOP = {"name": Field(default="unnamed design"), "description": Field(default="")}
