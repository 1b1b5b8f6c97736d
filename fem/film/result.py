"""The result of a squeeze-film solve (:func:`diagap.fem.film.squeeze.squeeze_film`): the film impedance
referred to the centre velocity, b(f) and k_film(f), the cut-off, the perforation numbers and
their error estimates, with the ``damping`` section of summary.json."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from diagap.fem.film.perforation import Perforation

__all__ = ["SqueezeResult"]


@dataclass(frozen=True, eq=False)
class SqueezeResult:
    """Film impedance referred to the centre velocity (SI); arrays follow ``frequencies_hz``.

    Attributes
    ----------
    damping_n_s_per_m : float
        Low-frequency (incompressible) damping b(0) (N·s/m).
    damping_uncertainty_n_s_per_m : float
        Estimated discretisation error of ``damping_n_s_per_m``.
    frequencies_hz, damping_spectrum_n_s_per_m, film_stiffness_n_per_m : ndarray
        b(f) (N·s/m) and k_film(f) (N/m); ``*_uncertainty`` arrays are the error estimates.
    cutoff_frequency_hz, cutoff_uncertainty_hz : float
        Frequency where k_film = 2πf·b, and its discretisation error.
    gas_spring_stiffness_n_per_m : float
        High-frequency limit p0 ∫φ² dA / g.
    decay_length_m : float
        Pressure decay length at the rim, L/√α (inf without holes).
    convergence_order, dofs, damping_levels_n_s_per_m :
        Observed order, free DOFs and b(0) of the three nested mesh levels (coarse to fine).
    """

    shape: str
    squeeze_length_m: float
    gap_m: float
    film_viscosity_pa_s: float
    static_pressure_pa: float
    damping_n_s_per_m: float
    damping_uncertainty_n_s_per_m: float
    frequencies_hz: np.ndarray
    damping_spectrum_n_s_per_m: np.ndarray
    damping_spectrum_uncertainty_n_s_per_m: np.ndarray
    film_stiffness_n_per_m: np.ndarray
    film_stiffness_uncertainty_n_per_m: np.ndarray
    cutoff_frequency_hz: float
    cutoff_uncertainty_hz: float
    gas_spring_stiffness_n_per_m: float
    decay_length_m: float
    convergence_order: float
    dofs: tuple
    damping_levels_n_s_per_m: tuple
    perforation: Perforation | None = None
    knudsen_number: float | None = field(default=None)

    def squeeze_number(self, frequency_hz) -> np.ndarray | float:
        """σ = 12 μ_eff ω L² / (p0 g²), L = electrode radius (circle) or side (square)."""
        omega = 2.0 * np.pi * np.asarray(frequency_hz, dtype=float)
        sig = (12.0 * self.film_viscosity_pa_s * omega * self.squeeze_length_m**2
               / (self.static_pressure_pa * self.gap_m**2))
        return float(sig) if sig.ndim == 0 else sig

    @property
    def damping_relative_uncertainty(self) -> float:
        return self.damping_uncertainty_n_s_per_m / abs(self.damping_n_s_per_m)

    def to_summary(self, resonance_hz: float | None = None) -> dict:
        """The ``damping`` section of summary.json (keys carry their units)."""
        rows = np.column_stack([self.frequencies_hz, self.damping_spectrum_n_s_per_m,
                                self.film_stiffness_n_per_m])
        out = {
            "damping_n_s_per_m": self.damping_n_s_per_m,
            "damping_relative_uncertainty": self.damping_relative_uncertainty,
            "damping_vs_frequency": rows.tolist(),
            "damping_vs_frequency_columns": ["frequency_hz", "damping_n_s_per_m",
                                             "film_stiffness_n_per_m"],
            "cutoff_frequency_hz": self.cutoff_frequency_hz,
            "cutoff_relative_uncertainty": self.cutoff_uncertainty_hz / self.cutoff_frequency_hz,
            "gas_spring_stiffness_n_per_m": self.gas_spring_stiffness_n_per_m,
            "film_viscosity_pa_s": self.film_viscosity_pa_s,
            "knudsen_number": self.knudsen_number,
            "decay_length_m": None if math.isinf(self.decay_length_m) else self.decay_length_m,
            "squeeze_number_at_resonance": (None if resonance_hz is None
                                            else self.squeeze_number(resonance_hz)),
            # with holes the film stays incompressible far above σ ~ 1: judge by f / f_c
            "resonance_to_cutoff_ratio": (None if resonance_hz is None
                                          else resonance_hz / self.cutoff_frequency_hz),
        }
        if self.perforation is not None:
            out["perforation"] = self.perforation.to_summary()
        return out


# ------------------------------------------------------------------------------- drivers
