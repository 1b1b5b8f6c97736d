"""Speed and accuracy of the fast ``coupled`` section (diagap.fastpath.coupled) against the
full pipeline on random clamped circles (uses the cell and rim tables of DIAGAP_CACHE_DIR; builds
them if missing). Run: python tests/bench/bench_fastpath_coupled.py [accuracy] [designs]."""
from __future__ import annotations

import sys
import time
import warnings

import numpy as np


def main(accuracy: str = "draft", count: int = 5) -> None:
    sys.path.insert(0, "tests")
    from test_fastpath_field import random_design

    from diagap import demo_design
    from diagap.fastpath import fast_summary, mapper_for
    from diagap.fastpath.coupled import coupled_outputs
    from diagap.fastpath.field import electrostatics_outputs
    from diagap.pipeline import run_design
    from diagap.sweep.point import flatten_summary

    warnings.simplefilter("ignore")
    base = demo_design().with_accuracy(accuracy)
    electrostatics_outputs(base, mapper_for(1))  # the cell and rim tables
    rng = np.random.default_rng(7)
    designs = [base] + [random_design(rng, base) for _ in range(count - 1)]
    worst: dict[str, float] = {}
    for d in designs:
        out = fast_summary(d)
        fast = {k: v for k, v in out.items() if k.startswith("coupled.")}
        t = time.perf_counter()
        for _ in range(10):
            coupled_outputs(d, out)
        dt = (time.perf_counter() - t) / 10
        full, _ = flatten_summary(run_design(d).summary())
        rows = []
        for k, v in fast.items():
            ref = full[k]
            err = abs(v / ref - 1) if ref else abs(v)
            worst[k] = max(worst.get(k, 0.0), err)
            rows.append(f"{k.split('.', 1)[1]} {err:.1e}")
        print(f"tau-design gap {d.backplate.gap_m:.3g} m: {dt * 1e3:.1f} ms;", ", ".join(rows),
              flush=True)
    print("worst:", {k: f"{v:.1e}" for k, v in worst.items()})


if __name__ == "__main__":
    main(*(sys.argv[1:2] or ["draft"]), *(int(a) for a in sys.argv[2:3]))
