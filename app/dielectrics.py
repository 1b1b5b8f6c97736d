"""Dielectric layers and electret charge of a design: the [layers] and [electret] sections.

[layers] (optional) puts an insulating layer on the gap side of the backplate electrode
(``backplate_thickness``, ``backplate_permittivity``) and/or of the diaphragm electrode
(``diaphragm_thickness``, ``diaphragm_permittivity``). ``backplate.gap`` stays the AIR gap, between
the layer surfaces (the diaphragm travels at most the gap before the layers touch). The backplate's
layer is part of ``backplate.thickness`` (the holes go through both; the conducting electrode is
the rest, thickness − layer) and is perforated with the holes. The diaphragm's layer is taken as
electrically active only: its mass and stiffness belong in the diaphragm's own properties.

[electret] (optional) holds a fixed surface charge density ``charge_density`` on the gap-side
surface of one layer (``layer = "backplate"`` or ``"diaphragm"``). It acts as a bias source
V_eq = σ t/(ε0 ε_r) (backplate layer; −σ t/(ε0 ε_r) on the diaphragm layer) in series with the
supply (:mod:`diagap.fem.field.layers`): every result that depends on the bias uses
V_supply + V_eq. With [electret], ``electrical.bias_voltage`` may be left out (0 V: no supply);
the bias resistor still sets the electrical high-pass with the capsule capacitance.

Limits (checked here, one-line :class:`~diagap.quantities.DesignError`): each layer thinner than
the air gap, the backplate's layer thinner than the backplate, a thickness and a permittivity
given together, and the electrical thickness Σ t/ε_r at most ``MAX_ELECTRICAL_RATIO`` of the air
gap (the capacitance table then reaches the pull-in fold of a clamped diaphragm).
"""
from __future__ import annotations

from dataclasses import dataclass

from diagap.fem.field.layers import GapLayers, electret_equivalent_bias_v
from diagap.quantities import DesignError

__all__ = ["Electret", "parse_layers", "parse_electret", "effective_bias_v",
           "electret_bias_v", "MAX_ELECTRICAL_RATIO", "ELECTRET_NOTE", "table_lower_fraction"]

#: largest electrical thickness of the layers, Σ t/ε_r, relative to the air gap
MAX_ELECTRICAL_RATIO = 0.5
#: what a reader must know about an electret's charge (report notes, command line)
ELECTRET_NOTE = ("electret charge decays with temperature and humidity: the equivalent bias "
                 "holds for the stated charge density only; derate it for the service life")


@dataclass(frozen=True)
class Electret:
    """Fixed charge on one layer: σ [C/m²] on the gap-side surface of ``layer``."""

    charge_density_c_per_m2: float
    layer: str = "backplate"


def parse_layers(v: dict | None, gap_m: float, backplate_thickness_m: float) -> GapLayers | None:
    """The [layers] values (SI, from the schema parser) as :class:`GapLayers`, cross-checked."""
    if v is None:
        return None
    out = {}
    for side in ("backplate", "diaphragm"):
        t, eps = v[f"{side}_thickness"], v[f"{side}_permittivity"]
        if (t is None) != (eps is None):
            given, need = (("thickness", "permittivity") if eps is None
                           else ("permittivity", "thickness"))
            raise DesignError(f"layers.{side}_{given}: given without layers.{side}_{need} "
                              f"(a layer needs both)")
        if t is None:
            continue
        if t >= gap_m:
            raise DesignError(f"layers.{side}_thickness = {t:g} m: must be thinner than the air "
                              f"gap ({gap_m:g} m)")
        out[f"{side}_thickness_m"], out[f"{side}_permittivity"] = t, eps
    if not out:
        raise DesignError("layers: no layer given; set backplate_thickness and "
                          "backplate_permittivity and/or the diaphragm_ pair, or remove [layers]")
    layers = GapLayers(**out)
    if layers.backplate_thickness_m >= backplate_thickness_m:
        raise DesignError(f"layers.backplate_thickness = {layers.backplate_thickness_m:g} m: "
                          f"must be thinner than backplate.thickness ({backplate_thickness_m:g} m)"
                          f", which includes it")
    if layers.electrical_thickness_m > MAX_ELECTRICAL_RATIO * gap_m:
        raise DesignError(f"layers: electrical thickness (thickness/permittivity summed) "
                          f"{layers.electrical_thickness_m:g} m must be at most "
                          f"{MAX_ELECTRICAL_RATIO:g} x the air gap ({MAX_ELECTRICAL_RATIO * gap_m:g}"
                          f" m); use thinner layers or a higher permittivity")
    return layers


def parse_electret(v: dict | None, layers: GapLayers | None) -> Electret | None:
    """The [electret] values as :class:`Electret`; the charged layer must exist."""
    if v is None:
        return None
    side = v["layer"]
    if layers is None or getattr(layers, f"{side}_thickness_m") <= 0:
        raise DesignError(f"electret.layer = {side!r}: the design has no {side} layer; add "
                          f"layers.{side}_thickness and layers.{side}_permittivity")
    return Electret(v["charge_density"], side)


def electret_bias_v(design) -> float:
    """V_eq [V] of the design's electret (0 without [electret])."""
    e = getattr(design, "electret", None)
    if e is None:
        return 0.0
    return electret_equivalent_bias_v(e.charge_density_c_per_m2, design.layers, e.layer)


def effective_bias_v(design) -> float:
    """Total effective bias [V]: the supply (0 without [electrical]) plus the electret's V_eq."""
    supply = design.electrical.bias_voltage_v if design.electrical is not None else 0.0
    return supply + electret_bias_v(design)


def table_lower_fraction(design, base: float) -> float:
    """Smallest local air gap of the capacitance table, relative to the gap: ``base`` without
    layers, base/(1 + 3 t_e/g) with them (the fold of a clamped diaphragm lies near half the
    electrical gap, g + t_e, so thicker layers need smaller air gaps in the table)."""
    layers = getattr(design, "layers", None)
    if layers is None:
        return base
    return base / (1.0 + 3.0 * layers.electrical_thickness_m / design.backplate.gap_m)
