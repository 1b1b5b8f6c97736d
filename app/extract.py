"""From the design and FE results to the inputs of each solver and to lumped parameters (SI)."""
from __future__ import annotations

from diagap.design import Design

__all__ = ["plate_problem"]


def plate_problem(design: Design):
    """The diaphragm problem of ``design`` for :func:`diagap.fem.plate.solver.solve_plate`."""
    from diagap.fem.plate.solver import PlateProblem

    d = design.diaphragm
    return PlateProblem(shape=d.shape, size_m=d.size_m, youngs_modulus_pa=d.youngs_modulus_pa,
                        poisson_ratio=d.poisson_ratio, thickness_m=d.thickness_m,
                        density_kg_m3=d.density_kg_m3, residual_stress_pa=d.residual_stress_pa,
                        edge=d.edge)
