"""From the design and FE results to the inputs of each solver and to lumped parameters (SI)."""
from __future__ import annotations

from diagap.design import Design

__all__ = ["plate_problem", "film_coefficients", "response_inputs"]


def plate_problem(design: Design):
    """The diaphragm problem of ``design`` for :func:`diagap.fem.plate.solver.solve_plate`."""
    from diagap.fem.plate.solver import PlateProblem

    d = design.diaphragm
    return PlateProblem(shape=d.shape, size_m=d.size_m, youngs_modulus_pa=d.youngs_modulus_pa,
                        poisson_ratio=d.poisson_ratio, thickness_m=d.thickness_m,
                        density_kg_m3=d.density_kg_m3, residual_stress_pa=d.residual_stress_pa,
                        edge=d.edge)


def film_coefficients(design, air, hole_resistance_pa_s_per_m3: float | None = None):
    """The film of ``design`` for :mod:`fem.response` (rarefied viscosity, hole resistance from
    :func:`fem.film.perforation.perforation` at the design's ``analysis.accuracy``, as in the
    damping stage, hole and film inertance); a given ``hole_resistance_pa_s_per_m3`` (per hole)
    is used instead of the Stokes cell solve."""
    from diagap.fem.film.perforation import film_viscosity, perforation
    from diagap.fem.response.film import FilmCoefficients, hole_inertance

    b = design.backplate
    g = b.gap_m
    holes = {}
    if b.hole_lattice != "none":
        if hole_resistance_pa_s_per_m3 is None:
            perf = perforation(b.hole_lattice, b.hole_radius_m, b.hole_pitch_m, b.thickness_m,
                               g, air.viscosity_pa_s, air.mean_free_path_m,
                               accuracy=design.analysis.accuracy)
            n_h, z_h = perf.holes_per_m2, perf.resistance_pa_s_per_m3
        else:
            from diagap.fem.film.perforation import lattice_cell_area

            n_h = 1.0 / lattice_cell_area(b.hole_pitch_m, b.hole_lattice)
            z_h = float(hole_resistance_pa_s_per_m3)
        holes = dict(holes_per_m2=n_h, hole_resistance_pa_s_per_m3=z_h,
                     hole_inertance_kg_per_m4=hole_inertance(air.density_kg_per_m3,
                                                             b.hole_radius_m, b.thickness_m))
    return FilmCoefficients(
        gap_m=g, film_viscosity_pa_s=film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, g),
        static_pressure_pa=air.static_pressure_pa, air_density_kg_m3=air.density_kg_per_m3,
        viscosity_pa_s=air.viscosity_pa_s, **holes)


def response_inputs(design, density, rim, air):
    """:class:`fem.response.coupled.ResponseInputs` of ``design`` (film, back volume, vent,
    baffled-piston front, bias circuit with charge feedback)."""
    from diagap.dielectrics import effective_bias_v
    from diagap.fem.response.coupled import ResponseInputs
    from diagap.package_design import gas_from_air, package_acoustics, package_loads
    from diagap.readout_design import bias_leg_resistance_ohm

    b, e, a = design.backplate, design.electrical, design.acoustics
    loads = package_loads(package_acoustics(design, gas_from_air(air)))
    return ResponseInputs(
        problem=plate_problem(design), electrode_size_m=b.electrode_size_m, gap_m=b.gap_m,
        density=density, rim=rim, film=film_coefficients(design, air),
        back_volume_m3=a.back_volume_m3, vent_resistance_pa_s_per_m3=a.vent_resistance_pa_s_per_m3,
        gamma=air.heat_capacity_ratio, static_pressure_pa=a.static_pressure_pa, radiation=True,
        air_density_kg_m3=air.density_kg_per_m3, sound_speed_m_s=air.speed_of_sound_m_per_s,
        bias_voltage_v=effective_bias_v(design), bias_resistance_ohm=bias_leg_resistance_ohm(design),
        shunt_capacitance_f=e.parasitic_capacitance_f + e.preamp_input_capacitance_f, **loads)
