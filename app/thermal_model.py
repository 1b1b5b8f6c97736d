"""The thermal data of a design: expansion of the diaphragm and its substrate, and the temperature
at which the residual stress is given.

The residual stress follows the temperature through the expansion mismatch with the substrate
(:mod:`diagap.lumped.thermal`):

    σ(T) = σ0 − E/(1 − ν)·(α_f − α_s)·(T − T0)

Inputs (all optional):

* ``[diaphragm] thermal_expansion`` α_f (1/K); else the material preset's value.
* ``[diaphragm] stress_reference_temperature`` T0: the temperature at which
  ``residual_stress`` σ0 holds (default 20 °C). The stress belongs to the diaphragm, so its
  reference temperature is stated beside it.
* ``[substrate] material`` (a preset of :data:`diagap.materials.SUBSTRATES`) or
  ``[substrate] thermal_expansion`` α_s (1/K); default silicon.
* ``[analysis] temperatures``: operating temperatures of the drift analysis (:mod:`diagap.thermal`).

A design that gives none of these has no thermal model: its residual stress is used as given at
every temperature, exactly as before thermal data existed. A design that gives any of them has
one, and then its single run is evaluated at its operating temperature — ``[acoustics]
temperature``, which already sets the gas properties (20 °C without [acoustics]) — with the
stress σ(T_op): the diaphragm the run analyses is the one at that temperature. At T_op = T0 the
stress is σ0.
"""
from __future__ import annotations

from dataclasses import dataclass

from diagap.fem.constants import ROOM_TEMPERATURE_K
from diagap.lumped.thermal import buckles, critical_stress_pa, thermal_stress_pa
from diagap.materials import DEFAULT_SUBSTRATE, MATERIALS, SUBSTRATES
from diagap.quantities import DesignError

__all__ = ["ThermalModel", "thermal_model", "operating_stress_pa", "check_hole_knudsen",
           "DEFAULT_REFERENCE_TEMPERATURE_K", "MAX_TEMPERATURES"]

#: temperature at which the residual stress holds when the design does not say (20 °C)
DEFAULT_REFERENCE_TEMPERATURE_K = ROOM_TEMPERATURE_K
#: most temperatures of one drift analysis (each costs about one bias-point analysis)
MAX_TEMPERATURES = 25


@dataclass(frozen=True)
class ThermalModel:
    """Thermal data of a design (SI). ``reference_stress_pa`` is σ0 at
    ``reference_temperature_k``; the diaphragm's ``residual_stress_pa`` is σ at the operating
    temperature."""

    film_expansion_per_k: float
    substrate_expansion_per_k: float
    substrate: str | None  # the substrate preset, None for an explicit α_s
    reference_temperature_k: float
    reference_stress_pa: float
    youngs_modulus_pa: float
    poisson_ratio: float

    def stress_pa(self, temperature_k: float) -> float:
        """σ(T) in Pa, tensile positive."""
        return thermal_stress_pa(self.reference_stress_pa, self.youngs_modulus_pa,
                                 self.poisson_ratio, self.film_expansion_per_k,
                                 self.substrate_expansion_per_k, temperature_k,
                                 self.reference_temperature_k)


def _given(v: dict, key: str) -> bool:
    return v.get(key) is not None


def thermal_model(diaphragm: dict, substrate: dict | None, temperatures: tuple,
                  props: dict) -> ThermalModel | None:
    """The thermal model from the parsed sections (SI values), or None without thermal data.

    ``diaphragm`` and ``substrate`` are the parsed sections (``substrate`` None when absent),
    ``temperatures`` the analysis list (K), ``props`` the diaphragm's resolved E and ν.
    """
    if not (_given(diaphragm, "thermal_expansion") or _given(diaphragm,
                                                             "stress_reference_temperature")
            or substrate is not None or temperatures):
        return None
    if len(temperatures) > MAX_TEMPERATURES:
        raise DesignError(f"analysis.temperatures: {len(temperatures)} temperatures; at most "
                          f"{MAX_TEMPERATURES} are allowed")
    if len(set(temperatures)) != len(temperatures):
        t = next(t for t in temperatures if temperatures.count(t) > 1)
        raise DesignError(f"analysis.temperatures: {t:g} K is listed twice; give each "
                          f"temperature once")
    alpha_f = diaphragm.get("thermal_expansion")
    if alpha_f is None:
        preset = MATERIALS.get(diaphragm.get("material") or "")
        alpha_f = preset.thermal_expansion_per_k if preset is not None else None
    if alpha_f is None:
        raise DesignError(
            "diaphragm.thermal_expansion: missing (the thermal stress needs the diaphragm's "
            "expansion coefficient; give it in 1/K, e.g. \"2.8e-6 1/K\", or a diaphragm.material "
            f"preset: {', '.join(MATERIALS)})")
    sub = substrate or {}
    name = None
    if _given(sub, "thermal_expansion"):
        alpha_s = sub["thermal_expansion"]
        if _given(sub, "material"):
            raise DesignError(f"substrate.thermal_expansion: given together with "
                              f"substrate.material = {sub['material']!r}; give one of them")
    else:
        name = sub.get("material") or DEFAULT_SUBSTRATE
        alpha_s = SUBSTRATES[name].thermal_expansion_per_k
    t0 = diaphragm.get("stress_reference_temperature")
    return ThermalModel(alpha_f, alpha_s, name,
                        DEFAULT_REFERENCE_TEMPERATURE_K if t0 is None else t0,
                        diaphragm["residual_stress"], props["youngs_modulus_pa"],
                        props["poisson_ratio"])


def operating_stress_pa(model: ThermalModel, temperature_k: float, shape: str, edge: str,
                        size_m: float, thickness_m: float,
                        field: str = "acoustics.temperature") -> float:
    """σ at the operating temperature; a one-line error naming ``field`` when the diaphragm
    buckles there."""
    sigma = model.stress_pa(temperature_k)
    s_cr = critical_stress_pa(shape, edge, size_m, thickness_m, model.youngs_modulus_pa,
                              model.poisson_ratio)
    if buckles(sigma, s_cr):
        raise DesignError(
            f"{field} = {temperature_k:g} K: the thermal stress there, "
            f"{sigma:.4g} Pa (from diaphragm.residual_stress = {model.reference_stress_pa:g} Pa "
            f"at {model.reference_temperature_k:g} K), is at or beyond the buckling stress; "
            f"must be > -{s_cr:.4g} Pa (critical stress for a {edge} {shape})")
    return sigma


def check_hole_knudsen(temperatures_k: tuple, pressure_pa: float, hole_radius_m: float,
                       max_knudsen: float) -> None:
    """Refuse a listed temperature at which the air in the holes is no longer a slip-flow
    continuum (mean free path / hole radius above ``max_knudsen``)."""
    from diagap.fem.air import air_properties

    for i, t in enumerate(temperatures_k):
        lam = air_properties(t, pressure_pa).mean_free_path_m
        if hole_radius_m * max_knudsen < lam:
            raise DesignError(
                f"analysis.temperatures[{i}] = {t:g} K: the air's mean free path there "
                f"({lam:.3g} m) exceeds {max_knudsen:g} times backplate.hole_radius "
                f"({hole_radius_m:g} m); allowed up to Knudsen number {max_knudsen:g}")
