"""Calibration of the run-size estimate (diagap.budget): measured peak memory (ru_maxrss) and wall
time of whole runs against the estimate, for diaphragm thicknesses and gaps that grow the meshes.

    python tests/bench/bench_budget.py [overrides ...]   e.g. diaphragm.thickness="30 nm"

Each case runs in its own process with the mesh cache off (meshing included).
"""
import json
import subprocess
import sys
import time

CHILD = r"""
import json, resource, sys, time, warnings
warnings.simplefilter("ignore")
from diagap.meshes import set_enabled
set_enabled(False)
from diagap.design import demo_design, with_overrides
from diagap.budget import estimate_run
from diagap.pipeline import run_design
d = with_overrides(demo_design(), json.loads(sys.argv[1]))
est = estimate_run(d)
t0 = time.perf_counter()
run_design(d)
print(json.dumps({"estimate_mb": est.memory_b / 1e6, "stage": est.stage, "dofs": est.unknowns,
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  "wall_s": time.perf_counter() - t0}))
"""

CASES = [{}, {"diaphragm.thickness": "0.1 um"}, {"diaphragm.thickness": "50 nm"},
         {"diaphragm.thickness": "30 nm"}, {"diaphragm.thickness": "20 nm"},
         {"analysis.accuracy": "fine"}, {"backplate.gap": "1 um", "backplate.hole_pitch": "60 um"}]

if __name__ == "__main__":
    cases = [dict(a.split("=", 1) for a in sys.argv[1:])] if len(sys.argv) > 1 else CASES
    for case in cases:
        t0 = time.time()
        proc = subprocess.run([sys.executable, "-c", CHILD, json.dumps(case)],
                              capture_output=True, text=True)
        out = proc.stdout.strip().splitlines()[-1] if proc.returncode == 0 else proc.stderr[-300:]
        print(json.dumps(case), out, flush=True)
