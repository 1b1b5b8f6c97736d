"""The lumped model of a capsule: equivalent circuit, response, noise, distortion, weighting and
the closed forms of the simple model. It knows no files and no design format: it takes SI numbers.
"""
from importlib import import_module

_EXPORTS = {
    "LumpedModel": "model", "FilmTable": "model", "CapacitanceCurve": "model",
    "solve_circuit": "circuit", "analyse_response": "response", "frequency_response": "response",
    "distortion_vs_spl": "distortion", "harmonic_balance": "distortion",
    "a_weighting_db": "weighting", "a_weighted_level_db": "noise",
    "mechanical_thermal_noise": "noise", "critical_tension_n_per_m": "buckling",
    "Channel": "tubes", "Gas": "tubes", "Cavity": "cavity", "PackageAcoustics": "package",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'diagap.lumped' has no attribute {name!r}")
