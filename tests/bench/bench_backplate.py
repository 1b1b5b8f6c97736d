"""Benchmark: the demo with a compliant backplate, end to end (pipeline and every output file).

Run on purpose (not collected by pytest)::

    python tests/bench/bench_backplate.py [--repeats 3] [--accuracy draft]

The design is examples/compliant_backplate.toml (an invented 2 um polysilicon backplate on the
demo capsule). Prints the median wall time over ``repeats`` warm runs (caches filled by one run
first) of ``run_design`` + ``write_outputs``, the stage breakdown, and the same for the rigid
backplate (the backplate material keys removed). Goal: at most 15 s.
"""
from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "compliant_backplate.toml"
RIGID = {f"backplate.{k}": None for k in ("material", "residual_stress", "edge")}


def timed(design, repeats: int):
    from diagap.pipeline import run_design
    from diagap.writer import write_outputs

    times, stages = [], None
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(repeats + 1):
            t0 = time.perf_counter()
            res = run_design(design)
            write_outputs(res, Path(tmp) / f"out{i}")
            if i:
                times.append(time.perf_counter() - t0)
            stages = res.timings_s
    return statistics.median(times), stages, res.summary()


def main() -> None:
    from diagap.design import load_design, with_overrides

    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--accuracy", default="draft")
    a = ap.parse_args()
    design = load_design(EXAMPLE).with_accuracy(a.accuracy)
    for label, d in (("compliant", design), ("rigid", with_overrides(design, RIGID))):
        t, stages, s = timed(d, a.repeats)
        cp = s["coupled"]
        print(f"{label:9s} end to end {t:6.2f} s   stages: "
              + ", ".join(f"{k} {v:.2f}" for k, v in stages.items()))
        print(f"          pull-in {cp['pull_in_voltage_v']:.4g} V, bias deflection "
              f"{cp['bias_center_deflection_m'] * 1e9:.2f} nm, backplate "
              f"{cp.get('backplate_center_deflection_m', 0.0) * 1e9:.2f} nm, sensitivity "
              f"{s['response']['sensitivity_db_v_per_pa']:.3f} dB re 1 V/Pa")


if __name__ == "__main__":
    main()
