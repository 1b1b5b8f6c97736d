"""scikit-fem solvers of diagap, SI at every interface, scaled coordinates inside.

plate (Argyris Kirchhoff plate with tension, membrane limit), electrostatic (unit cells of the
perforated backplate), cell_table (c(g)), rim_fringing, capacitance (device C(x)), coupled and
coupled_plate (bias equilibrium, softening, pull-in), squeeze (Reynolds film with perforation
sinks), perforation (hole and cell flow resistances, rarefaction), air (gas properties).
Imports are lazy so that `import fem` stays cheap.
"""
from importlib import import_module

_EXPORTS = {
    "PlateProblem": "plate", "PlateResult": "plate", "solve_plate": "plate",
    "assemble_plate": "plate", "PlateInputError": "plate", "BucklingError": "plate",
    "cell_capacitance": "electrostatic", "lattice_summary": "electrostatic",
    "CellResult": "electrostatic", "ElectrostaticsInputError": "electrostatic",
    "capacitance_density_table": "cell_table", "CapacitanceDensity": "cell_table",
    "rim_fringing": "rim_fringing", "RimResult": "rim_fringing",
    "device_capacitance": "capacitance", "DeviceCapacitance": "capacitance",
    "trace_branch": "coupled", "equilibrium_at_voltage": "coupled", "CouplingSystem": "coupled",
    "ElectrostaticLoad": "coupled", "CoupledError": "coupled",
    "solve_coupled": "coupled_plate", "CoupledResult": "coupled_plate",
    "squeeze_film": "squeeze", "film_impedance": "squeeze", "SqueezeResult": "squeeze",
    "perforation": "perforation", "rarefaction_factor": "perforation",
    "air_properties": "air", "AirProperties": "air",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'fem' has no attribute {name!r}")
