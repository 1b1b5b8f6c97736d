"""Design files, lumped model, response, noise, distortion, audit, reports, sweeps and the CLI.

Typical use::

    from lumped import load_design, run_design
    result = run_design(load_design("my.toml"))
    summary = result.summary()
"""
from importlib import import_module

_EXPORTS = {
    "load_design": "design", "parse_design": "design", "demo_design": "design",
    "with_override": "design", "with_overrides": "design", "Design": "design",
    "DesignError": "design",
    "run_design": "pipeline", "RunResult": "pipeline",
    "write_outputs": "writer",
    "LumpedModel": "model", "analyse_response": "response", "frequency_response": "response",
    "distortion_vs_spl": "distortion", "harmonic_balance": "distortion",
    "a_weighting_db": "weighting", "a_weighted_level_db": "noise",
    "mechanical_thermal_noise": "noise", "audit_design": "audit",
    "run_sweep": "sweep", "evaluate_holes": "holes",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'lumped' has no attribute {name!r}")
