"""Invented scenario of our own: how the demo's hole radius trades capacitance against damping.

Importable (computes at import, prints only under __main__); tests/test_examples.py checks its
numbers. For each hole radius the unit-cell capacitance cost (perforation factor) and the
squeeze-film damping of the demo's rigid-piston-shaped electrode are computed.
"""
import numpy as np

from diagap.fem import air_properties, lattice_summary, squeeze_film

GAP, PITCH, THICKNESS, ELECTRODE = 4e-6, 20e-6, 2e-6, 0.45e-3
RADII_M = np.array([2e-6, 4e-6, 6e-6, 8e-6])
AIR = air_properties(293.15, 101325.0)


def _shape(x, y):
    """The clamped-plate static shape (1 - r²/a²)² over a 0.5 mm diaphragm."""
    return (1 - (x**2 + y**2) / 0.5e-3**2) ** 2


PERFORATION = np.array([lattice_summary(GAP, r, PITCH, "hex", THICKNESS, "draft")["perforation_factor"]
                        for r in RADII_M])
DAMPING = np.array([squeeze_film("circle", ELECTRODE, GAP, r, PITCH, "hex", THICKNESS, AIR, _shape,
                                 [100.0], "draft").damping_n_s_per_m for r in RADII_M])

if __name__ == "__main__":
    for r, c, b in zip(RADII_M, PERFORATION, DAMPING):
        print(f"hole radius {r * 1e6:4.1f} um: capacitance x {c:.4f}, damping {b:.3e} N*s/m")
