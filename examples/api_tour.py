"""A tour of the Python API on an invented scenario of our own: the built-in demo capsule with a
wider gap and a higher bias, run without the command line.

Importable (computes at import, prints only under ``__main__``); tests/test_examples.py checks its
numbers. Steps: load a design, override values, run, read the results as objects (SI units,
each FE quantity with its relative error estimate), audit verdicts, write the output files.
"""
import tempfile
from pathlib import Path

from diagap import DesignError, demo_design, run_design, with_overrides, write_outputs

# 1. a design: load_design("my.toml") reads a file; the built-in demo is an invented scenario
BASE = demo_design().with_accuracy("draft")  # draft meshes: seconds instead of a minute

# 2. override values as in a design file (units in strings), validated together
DESIGN = with_overrides(BASE, {"backplate.gap": "5 um", "electrical.bias_voltage": "12 V"})

# a bad value is refused with one line naming the key, the value and what is allowed
try:
    with_overrides(BASE, {"backplate.gap": "-1 um"})
    REFUSAL = None
except DesignError as exc:
    REFUSAL = str(exc)

# 3. run every stage: mechanics, electrostatics, coupling, damping, lumped response, audit
RESULT = run_design(DESIGN)

# 4. results as objects (frozen dataclasses, SI units)
F1_HZ = RESULT.mechanics.natural_frequencies_hz[0]
F1_REL_ERROR = RESULT.mechanics.uncertainty["natural_frequencies_hz"]
C0_F = RESULT.capacitance.rest_capacitance_f
PARALLEL_PLATE_F = RESULT.capacitance.parallel_plate_capacitance_f
PULL_IN_V = RESULT.coupling.pull_in_voltage_v
DAMPING_N_S_PER_M = RESULT.squeeze_film.damping_n_s_per_m
SENSITIVITY_V_PER_PA = RESULT.response.sensitivity_v_per_pa
VERDICTS = {row.assumption: row.verdict for row in RESULT.audit.rows}
SUMMARY = RESULT.summary()  # the summary.json dictionary, the same numbers

# 5. the output files (summary.json, response.csv, model.cir, report.html, plots, VTK)
OUT = Path(tempfile.mkdtemp(prefix="diagap-api-tour-"))
WRITTEN = write_outputs(RESULT, OUT)

if __name__ == "__main__":
    print(f"gap {DESIGN.backplate.gap_m * 1e6:.1f} um, bias {DESIGN.electrical.bias_voltage_v:g} V")
    print(f"f1 = {F1_HZ:.0f} Hz (relative error estimate {F1_REL_ERROR:.1e})")
    print(f"C0 = {C0_F * 1e12:.3f} pF (parallel plates {PARALLEL_PLATE_F * 1e12:.3f} pF)")
    print(f"pull-in {PULL_IN_V:.1f} V, film damping {DAMPING_N_S_PER_M:.3e} N*s/m")
    print(f"sensitivity {SENSITIVITY_V_PER_PA * 1e3:.3f} mV/Pa")
    for name, verdict in VERDICTS.items():
        print(f"  {verdict:8s} {name}")
    print(f"refused: {REFUSAL}")
    print(f"{len(WRITTEN)} files in {OUT}")
