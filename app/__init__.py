"""diagap: finite-element design of capacitive microphone capsules, as a Python library.

The application package: design files and units, the analysis pipeline, the assumption audit,
reports, sweeps and the command line. The physics lives in :mod:`diagap.fem` (finite elements),
:mod:`diagap.lumped` (the lumped model) and :mod:`diagap.meshes` (geometry).

Typical use (see the README's "Python API" section and ``examples/api_tour.py``)::

    from diagap import load_design, with_overrides, run_design, write_outputs
    design = with_overrides(load_design("my.toml"), {"backplate.gap": "5 um"})
    result = run_design(design)
    result.mechanics.natural_frequencies_hz   # results as objects (SI units)
    result.summary()                          # the summary.json dictionary
    write_outputs(result, "out")              # summary.json, response.csv, report.html, ...

Public names (imported lazily, so that ``import diagap`` stays cheap):

- designs: :func:`load_design`, :func:`parse_design`, :func:`demo_design`,
  :func:`with_override`, :func:`with_overrides`, :class:`Design`, :class:`DesignError`;
- running: :func:`run_design` → :class:`RunResult`; :func:`write_outputs`;
- studies: :func:`run_sweep` → :class:`SweepResult`, :func:`evaluate_holes` (a hole pattern
  alone), :func:`audit_design` → :class:`Audit`, :func:`run_checks` (published checks).

CAUTION: bias (polarization) voltages can be hazardous. diagap's results are design estimates;
they do not replace prototypes, measurement, the applicable safety codes or qualified review.
"""
from importlib import import_module

_EXPORTS = {
    "load_design": "design", "parse_design": "design", "demo_design": "design",
    "with_override": "design", "with_overrides": "design", "Design": "design",
    "DesignError": "design",
    "run_design": "pipeline", "RunResult": "pipeline",
    "write_outputs": "writer",
    "audit_design": "audit", "Audit": "audit", "AuditRow": "audit",
    "run_sweep": "sweep.run", "SweepResult": "sweep.run",
    "evaluate_holes": "holes", "run_checks": "verify",
}
__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'diagap' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
