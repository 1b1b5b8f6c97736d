"""Material presets for diaphragms (typical values; explicit values in a design override them).

Each preset lists Young's modulus E (Pa), Poisson's ratio ν, density ρ (kg/m³) and the linear
thermal-expansion coefficient α (1/K, near room temperature) with the source the typical value
comes from. Thin-film properties depend on the deposition process: treat them as
starting points and replace them with measured values of your own process.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Material", "MATERIALS", "Substrate", "SUBSTRATES", "DEFAULT_SUBSTRATE"]


@dataclass(frozen=True)
class Material:
    youngs_modulus_pa: float
    poisson_ratio: float
    density_kg_m3: float
    source: str
    thermal_expansion_per_k: float | None = None  # α near room temperature, 1/K


MATERIALS: dict[str, Material] = {
    "polysilicon": Material(
        160e9, 0.22, 2330.0,
        "Sharpe, Yuan, Edwards, 'A new technique for measuring the mechanical properties of thin "
        "films', J. MEMS 6 (1997): E = 160-169 GPa, nu = 0.22; density of silicon 2330 kg/m^3; "
        "alpha = 2.8e-6 1/K, Tada et al., 'Thermal expansion coefficient of polycrystalline "
        "silicon and silicon dioxide thin films at high temperatures', J. Appl. Phys. 87 "
        "(2000) [from memory]",
        2.8e-6,
    ),
    "silicon-nitride": Material(
        222e9, 0.28, 3000.0,
        "Vlassak & Nix, 'A new bulge test technique for the determination of Young's modulus and "
        "Poisson's ratio of thin films', J. Mater. Res. 7 (1992): low-stress LPCVD SiNx, "
        "E = 222 GPa, nu = 0.28 (values from memory); density ~3000 kg/m^3 (typical); "
        "alpha = 2.3e-6 1/K, typical of LPCVD silicon nitride films, reported 1.6-3.3e-6 "
        "[from memory]",
        2.3e-6,
    ),
    "nickel": Material(
        200e9, 0.31, 8900.0,
        "engineering handbook values for annealed nickel (typical, from memory); "
        "alpha = 13.4e-6 1/K, CRC Handbook of Chemistry and Physics, thermal expansion of the "
        "elements at 293 K [from memory]",
        13.4e-6,
    ),
    "pet": Material(
        4.0e9, 0.38, 1390.0,
        "typical datasheet values for biaxially oriented PET film (from memory); "
        "alpha = 17e-6 1/K in the film plane, same kind of source [from memory]",
        17e-6,
    ),
}


@dataclass(frozen=True)
class Substrate:
    """What the diaphragm is anchored to: its thermal expansion sets the diaphragm's thermal
    strain (the film follows the substrate in its plane)."""

    thermal_expansion_per_k: float  # α near room temperature, 1/K
    source: str


SUBSTRATES: dict[str, Substrate] = {
    "silicon": Substrate(
        2.6e-6,
        "Okada & Tokumaru, 'Precise determination of lattice parameter and thermal expansion "
        "coefficient of silicon between 300 and 1500 K', J. Appl. Phys. 56 (1984): "
        "2.59e-6 1/K at 293 K [from memory]"),
    "borosilicate-glass": Substrate(
        3.3e-6, "typical handbook value of borosilicate glass for anodic bonding to silicon, "
        "3.25e-6 1/K [from memory]"),
    "brass": Substrate(
        19e-6, "CRC Handbook of Chemistry and Physics, engineering alloys: cartridge brass "
        "19-20e-6 1/K [from memory]"),
    "stainless-steel": Substrate(
        17.3e-6, "typical handbook value for austenitic stainless steel (type 304) at 20-100 "
        "degC [from memory]"),
}
#: the substrate of a design that gives thermal data but no [substrate] section
DEFAULT_SUBSTRATE = "silicon"
