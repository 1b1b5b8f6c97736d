"""Design files, lumped model, response, noise, distortion, audit, reports, sweeps and the CLI.

Typical use::

    from diagap import load_design, run_design
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
    "audit_design": "audit", "run_sweep": "sweep.run", "evaluate_holes": "holes",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'diagap' has no attribute {name!r}")
