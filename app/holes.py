"""``diagap holes``: the cost of a backplate hole pattern, evaluated on its own in about a second.

Capacitance side: the axisymmetric unit cell (diagap.fem.field.cell) gives the perforation factor
(cell capacitance / solid-plate value at the gap), compared with the open-area rule of thumb
1 − open area. Flow side: the resistance of one hole with Sampson's end correction plus the film
flow into it (diagap.fem.film.perforation) at 20 °C and 101.325 kPa, the quantity that relieves squeeze-film
damping.
"""
from __future__ import annotations

from diagap.quantities import DesignError, Field, parse_quantity

__all__ = ["evaluate_holes", "holes_table"]

#: the options and the design keys whose allowed ranges they share
_OPTIONS = {"--gap": "gap", "--radius": "hole_radius", "--pitch": "hole_pitch",
            "--thickness": "thickness"}


def _option(option: str, value) -> float:
    """An option's value in SI: a string needs a unit (``"4 um"``); a number is SI (Python API)."""
    from diagap.design import SCHEMA

    f: Field = SCHEMA["backplate"][_OPTIONS[option]]
    return parse_quantity(option, value, f)


def evaluate_holes(gap, radius, pitch, thickness, lattice: str = "hex",
                   accuracy: str = "normal", model: str = "axisymmetric") -> dict:
    """Evaluate a backplate hole pattern on its own (what ``diagap holes`` prints).

    Parameters
    ----------
    gap, radius, pitch, thickness : float or str
        Gap, hole radius, hole pitch and backplate thickness: metres, or strings with units
        (``"4 um"``).
    lattice : {"hex", "square"}
    accuracy : {"draft", "normal", "fine"}
    model : {"axisymmetric", "3d"}
        Equal-area axisymmetric unit cell, or the 3D lattice cell as well.

    Returns
    -------
    dict
        ``perforation_factor`` (cell capacitance over ε0/g) with ``rel_error``,
        ``open_area_fraction``, ``open_area_rule_factor`` (1 − open area),
        ``capacitance_density_f_per_m2``, ``hole_density_per_m2``,
        ``hole_flow_resistance_pa_s_per_m3`` (20 °C, 1 atm), ``dofs``, ``runtime_s``.

    Raises
    ------
    DesignError
        A value that is not a positive length, or holes that touch (one line).
    """
    from diagap.design import DEFAULT_AIR, _check_holes
    from diagap.fem.air import air_properties
    from diagap.fem.field.cell import cell_capacitance, lattice_summary
    from diagap.fem.film.perforation import perforation
    from diagap.lumped.analytic import open_area_perforation_factor

    g, r, p, t = (_option("--gap", gap), _option("--radius", radius), _option("--pitch", pitch),
                  _option("--thickness", thickness))
    if r >= 0.5 * p:
        raise DesignError(f"--radius = {r:g} m: must be less than half the pitch ({0.5 * p:g} m), "
                          f"otherwise the holes touch")
    try:
        _check_holes(r, DEFAULT_AIR)
    except DesignError as exc:
        raise DesignError(str(exc).replace("backplate.hole_radius", "--radius")) from None
    out = lattice_summary(g, r, p, lattice, t, accuracy)
    if model == "3d":
        cell = cell_capacitance(g, r, p, lattice, t, accuracy, model="3d")
        out.update(model="3d", perforation_factor=cell.perforation_factor,
                   capacitance_density_f_per_m2=cell.capacitance_density_f_per_m2,
                   capacitance_loss_fraction=1.0 - cell.perforation_factor,
                   rel_error=cell.rel_error, runtime_s=out["runtime_s"] + cell.runtime_s,
                   dofs=cell.dofs)
    air = air_properties(*DEFAULT_AIR)
    perf = perforation(lattice, r, p, t, g, air.viscosity_pa_s, air.mean_free_path_m)
    out["open_area_rule_factor"] = open_area_perforation_factor(out["open_area_fraction"])
    out["hole_flow_resistance_pa_s_per_m3"] = perf.resistance_pa_s_per_m3
    return out


def holes_table(r: dict) -> str:
    rows = [
        ("lattice", r["lattice"], r.get("model", "axisymmetric") + " cell"),
        ("open area fraction", f"{r['open_area_fraction']:.4f}", ""),
        ("perforation factor (FE cell)", f"{r['perforation_factor']:.5f}",
         f"± {r['rel_error']:.1e} rel."),
        ("open-area rule 1 - open area", f"{r['open_area_rule_factor']:.5f}", ""),
        ("capacitance loss", f"{100 * r['capacitance_loss_fraction']:.2f} %", ""),
        ("capacitance density", f"{r['capacitance_density_f_per_m2'] * 1e6:.5g}", "uF/m^2"),
        ("hole density", f"{r['hole_density_per_m2'] * 1e-6:.5g}", "per mm^2"),
        ("flow resistance per hole", f"{r['hole_flow_resistance_pa_s_per_m3']:.4g}",
         "Pa*s/m^3 (20 degC, 1 atm)"),
        ("runtime", f"{r['runtime_s']:.2f}", "s"),
    ]
    return "\n".join(f"{a:<32} {b:>14}  {c}" for a, b, c in rows)
