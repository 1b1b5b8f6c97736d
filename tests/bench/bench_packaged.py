"""Benchmark: the invented packaged example (examples/packaged.toml) end to end, and the package
part of the lumped model on its own.

Run on purpose: `python tests/bench/bench_packaged.py [accuracy]` (not collected by pytest).
Prints the median wall time of the whole run (mesh cache warm after the first) and of its
stages, the time of one package-circuit solve with every noise source on the default grid, and
the goal (10 s for the whole run at draft accuracy).
"""
import statistics
import sys
import time
from pathlib import Path

from diagap.design import load_design
from diagap.pipeline import run_design

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "packaged.toml"
GOAL_S = 10.0


def main(accuracy="draft", repeats=3):
    from diagap.lumped.circuit import solve_circuit
    from diagap.lumped.response import default_frequencies

    design = load_design(EXAMPLE).with_accuracy(accuracy)
    res = run_design(design)  # warm the mesh cache and imports
    totals, stages = [], {}
    for _ in range(repeats):
        t0 = time.perf_counter()
        res = run_design(design)
        totals.append(time.perf_counter() - t0)
        for k, v in res.timings_s.items():
            stages.setdefault(k, []).append(v)
    med = statistics.median(totals)
    print(f"packaged example at {accuracy}: median {med:.2f} s over {repeats} "
          f"(goal {GOAL_S:.0f} s: {'met' if med <= GOAL_S else 'NOT met'})")
    for k, v in stages.items():
        print(f"  {k:<16} {statistics.median(v):7.3f} s")
    model = res.sections["response"].objects["model"]
    f = default_frequencies()
    t = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        solve_circuit(model, f).thermal_noise_output_psds(model.temperature_k)
        t.append(time.perf_counter() - t0)
    print(f"package circuit + 7 noise sources on {f.size} frequencies: "
          f"median {1e3 * statistics.median(t):.1f} ms")
    r = res.summary()["response"]
    print(f"Helmholtz resonance {r['helmholtz_resonance_hz']:.0f} Hz (lossless, chamber alone "
          f"{r['helmholtz_lossless_hz']:.0f} Hz); lumped − FE peak frequency "
          f"{100 * r.get('reduction_error_peak_frequency', float('nan')):.3f} %")


if __name__ == "__main__":
    main(*(sys.argv[1:2] or ["draft"]))
