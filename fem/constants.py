"""Physical constants and reference values used across diagap (SI units).

The fundamental constants come from :mod:`scipy.constants` (CODATA, exact in the 2019 SI where
the SI fixes them); the acoustic references are conventions of the trade:

* ``EPSILON_0_F_PER_M`` — vacuum permittivity ε0 (F/m), ``scipy.constants.epsilon_0``; air's
  relative permittivity (1.0006) is taken as 1 throughout.
* ``BOLTZMANN_J_PER_K`` — Boltzmann constant k_B = 1.380649e-23 J/K (exact, SI 2019),
  ``scipy.constants.k``.
* ``P_REF_PA`` — reference sound pressure 20 µPa, 0 dB SPL (IEC 61672-1, ANSI S1.1).
* ``STANDARD_PRESSURE_PA`` — one standard atmosphere, 101 325 Pa, ``scipy.constants.atm``.
* ``ROOM_TEMPERATURE_K`` — 20 °C, the default temperature of a design (common practice).
"""
from __future__ import annotations

from scipy.constants import atm, epsilon_0, k, zero_Celsius

__all__ = ["EPSILON_0_F_PER_M", "BOLTZMANN_J_PER_K", "P_REF_PA", "STANDARD_PRESSURE_PA",
           "ROOM_TEMPERATURE_K"]

EPSILON_0_F_PER_M: float = epsilon_0
BOLTZMANN_J_PER_K: float = k
P_REF_PA: float = 20e-6
STANDARD_PRESSURE_PA: float = atm
ROOM_TEMPERATURE_K: float = zero_Celsius + 20.0
