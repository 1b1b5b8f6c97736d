"""SPICE netlist of the lumped capsule model (``model.cir``).

The netlist holds a subcircuit ``diagap_capsule`` with three pins — ``p`` (sound pressure as a
voltage, 1 V = 1 Pa, against ground), ``out`` (the output node, volts) and ``bias`` (the bias
supply) — and a test bench (pressure source AC 1, bias source DC V_b, ``.ac dec`` from 1 Hz to
100 kHz, ``.print``).  Only standard elements are used: R, L, C, independent sources and the
linear controlled sources E (VCVS) and F (CCCS), with plain numeric values.

The circuit is the acoustic impedance analogy of :mod:`diagap.lumped.circuit`: inside the subcircuit a
node voltage is a pressure (1 V = 1 Pa) and a branch current is a volume velocity scaled by the
impedance scale ZS (ohm per Pa·s/m³): 1 A ≙ 1/ZS m³/s.  Acoustic impedances are multiplied by ZS
(R = ZS·R_a, L = ZS·M_a, C = C_a/ZS), so the element values stay in a range SPICE handles well:
ZS is the power of ten that maps the diaphragm's characteristic impedance √(M_a/C_a) = √(km)/A²
to about 1 kΩ (unscaled, C_a and C_bv would be ~1e-15 F and the pivot tolerances of SPICE
solvers start to matter).  The electrical side stays physical (R_bias, C0, C_p, C_in in Ω and F).

Coupling, with Γ = V_b·dC/dx and A = A_eff:

* ``Eke``: VCVS in the diaphragm branch, −(k_e/k)·V(C_m) — the voltage on the spring capacitor is
  k·x/A, so this is the pressure −k_e·x/A of the constant-voltage electrostatic softening;
* ``Egam``: VCVS in the diaphragm branch, −(Γ/A)·V(out, bias) — the force Γ·v as a pressure;
* ``Fmot``: CCCS from ``out`` to ground, (Γ·ZS/A)·I(Vsense) — the motional current Γ·ẋ.

A frequency-dependent film (``film_damping``) cannot be written with these elements: the netlist
then uses b = ``damping_n_s_per_m`` and no film stiffness, and says so in its header.
"""
from __future__ import annotations

import logging
import math
from dataclasses import fields
from pathlib import Path

from diagap.lumped.circuit import acoustic_elements
from diagap.lumped.model import LumpedModel

__all__ = ["spice_netlist", "write_spice", "impedance_scale", "SUBCKT_NAME"]

SUBCKT_NAME = "diagap_capsule"
_log = logging.getLogger(__name__)

_UNITS = {"_n_per_m": "N/m", "_kg": "kg", "_m2": "m^2", "_n_s_per_m": "N*s/m", "_m3": "m^3",
          "_pa_s_per_m3": "Pa*s/m^3", "_kg_m3": "kg/m^3", "_m_s": "m/s", "_pa": "Pa",
          "_f_per_m": "F/m", "_f": "F", "_ohm": "ohm", "_v": "V", "_m": "m", "_k": "K"}


def _unit(name: str) -> str:
    for suffix, unit in sorted(_UNITS.items(), key=lambda kv: -len(kv[0])):
        if name.endswith(suffix):
            return unit
    return "1"


def impedance_scale(model: LumpedModel) -> float:
    """ZS (ohm per Pa·s/m³): power of ten bringing √(k m)/A² to ~1 kΩ."""
    z_char = math.sqrt(model.stiffness_n_per_m * model.mass_kg) / model.area_m2**2
    return 10.0 ** round(math.log10(1e3 / z_char))


def _num(v: float) -> str:
    return f"{v:.12g}"


def _header(model: LumpedModel, zs: float) -> list[str]:
    lines = ["diagap lumped capsule model (acoustic impedance analogy)",
             "* Model parameters (SI):"]
    for f in fields(model):
        v = getattr(model, f.name)
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            lines.append(f"*   {f.name} = {_num(v)} {_unit(f.name)}")
    lines += [
        f"*   transduction Gamma = V_b*dC/dx = {_num(model.transduction_n_per_v)} N/V",
        f"*   back-volume compliance V/(gamma*p0) = "
        f"{_num(model.back_volume_compliance_m3_per_pa)} m^3/Pa",
        f"* Impedance scale ZS = {_num(zs)} ohm per Pa*s/m^3: inside the subcircuit 1 V = 1 Pa,",
        f"*   1 A = {_num(1 / zs)} m^3/s of volume velocity; R = ZS*R_a, L = ZS*M_a, C = C_a/ZS.",
        "* Pins: p = sound pressure (V = Pa), out = output node (V), bias = bias supply (V).",
    ]
    if model.film_damping is not None:
        lines.append("* NOTE: the frequency-dependent film damping b(f), k_film(f) is not "
                     "represented; b = damping_n_s_per_m, k_film = 0.")
    if model.radiation_radius_m > 0:
        lines.append("* NOTE: the front radiation load is its low-ka acoustic mass 8*rho/(3*pi^2*a) "
                     "(Lrad); the radiation resistance and the mass's ka dependence are not "
                     "represented.")
    if getattr(model, "package", None) is not None:
        lines.append("* NOTE: the capsule alone: the sound port, front chamber, back-volume wall "
                     "losses and vent channel are not represented (the vent is its "
                     "low-frequency resistance, the back volume adiabatic).")
    return lines


def _subckt(model: LumpedModel, zs: float) -> list[str]:
    el = acoustic_elements(model)
    g = el.transduction_pa_per_v
    ke_ratio = model.electrostatic_stiffness_n_per_m / model.stiffness_n_per_m
    lines = [f".subckt {SUBCKT_NAME} p out bias",
             "* diaphragm branch, front node p to back-volume node nb",
             "Vsense p n1 DC 0"]
    if model.radiation_radius_m > 0:
        m_rad = 8.0 * model.air_density_kg_m3 / (3.0 * math.pi**2 * model.radiation_radius_m)
        lines += [f"Lrad n1 n1r {_num(zs * m_rad)}", f"Lm n1r n2 {_num(zs * el.mass_kg_per_m4)}"]
    else:
        lines.append(f"Lm n1 n2 {_num(zs * el.mass_kg_per_m4)}")
    if el.resistance_pa_s_per_m3 > 0:
        lines.append(f"Rm n2 n3 {_num(zs * el.resistance_pa_s_per_m3)}")
    else:
        lines.append("Vrm n2 n3 DC 0")
    lines += [f"Cm n3 n4 {_num(el.compliance_m3_per_pa / zs)}",
              f"Eke n4 n5 n3 n4 {_num(-ke_ratio)}",
              f"Egam n5 nb out bias {_num(-g)}",
              "* vent and back volume",
              f"Rv p nb {_num(zs * el.vent_resistance_pa_s_per_m3)}",
              f"Cbv nb 0 {_num(el.back_volume_compliance_m3_per_pa / zs)}",
              "* electrical side: bias resistor, capsule, parasitic and preamp input capacitance",
              f"Rbias bias out {_num(el.bias_resistance_ohm)}",
              f"C0 out 0 {_num(model.rest_capacitance_f)}"]
    if model.parasitic_capacitance_f > 0:
        lines.append(f"Cpar out 0 {_num(model.parasitic_capacitance_f)}")
    if model.preamp_input_capacitance_f > 0:
        lines.append(f"Cin out 0 {_num(model.preamp_input_capacitance_f)}")
    lines += ["* motional current Gamma*dx/dt",
              f"Fmot out 0 Vsense {_num(g * zs)}",
              f".ends {SUBCKT_NAME}"]
    return lines


def _bench(model: LumpedModel) -> list[str]:
    return ["* test bench: 1 Pa at the front, bias supply, small-signal sweep",
            "Vpress pin 0 DC 0 AC 1",
            f"Vbias vb 0 DC {_num(model.bias_voltage_v)} AC 0",
            f"X1 pin out vb {SUBCKT_NAME}",
            ".ac dec 50 1 100k",
            ".print ac vdb(out) vp(out)",
            ".end"]


def spice_netlist(model: LumpedModel) -> str:
    """The netlist text (header, subcircuit, test bench)."""
    zs = impedance_scale(model)
    if model.film_damping is not None:
        _log.info("SPICE netlist: film damping table replaced by damping_n_s_per_m")
    return "\n".join(_header(model, zs) + _subckt(model, zs) + _bench(model)) + "\n"


def write_spice(model: LumpedModel, path) -> Path:
    """Write the netlist; ``path`` is a file, or an existing directory (then ``model.cir``)."""
    p = Path(path)
    out = p / "model.cir" if p.is_dir() else p
    out.write_text(spice_netlist(model))
    return out
