"""scikit-fem solvers of diagap, SI at every interface, scaled coordinates inside.

Rooms by physics: ``plate`` (Argyris Kirchhoff plate with tension, membrane limit), ``field``
(unit cells of the perforated backplate, c(g) table, rim fringing, device C(x)), ``film``
(Reynolds squeeze film with perforation sinks, hole and cell flow resistances), ``coupling``
(bias equilibrium, softening, pull-in). Shared: ``forms`` (weak forms), ``richardson`` (error
estimates from mesh levels), ``levels`` (the diaphragm's accuracy levels), ``validate`` (input
checks), ``constants`` (ε0, k_B, reference pressures), ``air`` (gas properties), ``locate``
(point location on triangle meshes).
Imports are lazy so that `import diagap.fem` stays cheap.
"""
from importlib import import_module

_EXPORTS = {
    "PlateProblem": "plate.solver", "PlateResult": "plate.solver", "solve_plate": "plate.solver",
    "assemble_plate": "plate.solver", "PlateInputError": "plate.solver", "BucklingError": "plate.solver",
    "cell_capacitance": "field.cell", "lattice_summary": "field.cell",
    "CellResult": "field.cell", "ElectrostaticsInputError": "field.cell",
    "capacitance_density_table": "field.cell_table", "CapacitanceDensity": "field.cell_table",
    "rim_fringing": "field.rim", "RimResult": "field.rim",
    "device_capacitance": "field.device", "DeviceCapacitance": "field.device",
    "trace_branch": "coupling.branch", "equilibrium_at_voltage": "coupling.branch", "CouplingSystem": "coupling.branch",
    "ElectrostaticLoad": "coupling.branch", "CoupledError": "coupling.branch",
    "solve_coupled": "coupling.plate", "CoupledResult": "coupling.plate",
    "squeeze_film": "film.squeeze", "film_impedance": "film.squeeze", "SqueezeResult": "film.squeeze",
    "perforation": "film.perforation", "rarefaction_factor": "film.perforation",
    "cell_flow_resistance": "film.stokes", "HoleFlow": "film.stokes",
    "air_properties": "air", "AirProperties": "air",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'diagap.fem' has no attribute {name!r}")
