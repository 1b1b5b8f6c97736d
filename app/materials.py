"""Material presets for diaphragms (typical values; explicit values in a design override them).

Each preset lists Young's modulus E (Pa), Poisson's ratio ν and density ρ (kg/m³) with the source the
typical value comes from. Thin-film properties depend on the deposition process: treat them as
starting points and replace them with measured values of your own process.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Material", "MATERIALS"]


@dataclass(frozen=True)
class Material:
    youngs_modulus_pa: float
    poisson_ratio: float
    density_kg_m3: float
    source: str


MATERIALS: dict[str, Material] = {
    "polysilicon": Material(
        160e9, 0.22, 2330.0,
        "Sharpe, Yuan, Edwards, 'A new technique for measuring the mechanical properties of thin "
        "films', J. MEMS 6 (1997): E = 160-169 GPa, nu = 0.22; density of silicon 2330 kg/m^3",
    ),
    "silicon-nitride": Material(
        222e9, 0.28, 3000.0,
        "Vlassak & Nix, 'A new bulge test technique for the determination of Young's modulus and "
        "Poisson's ratio of thin films', J. Mater. Res. 7 (1992): low-stress LPCVD SiNx, "
        "E = 222 GPa, nu = 0.28 (values from memory); density ~3000 kg/m^3 (typical)",
    ),
    "nickel": Material(
        200e9, 0.31, 8900.0,
        "engineering handbook values for annealed nickel (typical, from memory)",
    ),
    "pet": Material(
        4.0e9, 0.38, 1390.0,
        "typical datasheet values for biaxially oriented PET film (from memory)",
    ),
}
