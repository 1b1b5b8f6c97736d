"""Speed and accuracy of the fast ``coupled`` section (diagap.fastpath.coupled).

``python tests/bench/bench_fastpath_coupled.py [accuracy] [designs]``: against the full pipeline
on random clamped circles (uses the cell and rim tables of DIAGAP_CACHE_DIR; builds them if
missing), with the CPU time of ``coupled_outputs`` per design.
``python tests/bench/bench_fastpath_coupled.py kappa``: the edge factor κ of
:data:`diagap.fastpath.coupled.EDGE_KAPPA` that makes the radial solve's compliance, mode-1
frequency and pull-in voltage equal the stage's FE (full electrode, solid parallel plates).
"""
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
        t = time.process_time()  # CPU time: the machine may be shared
        for _ in range(10):
            coupled_outputs(d, out)
        dt = (time.process_time() - t) / 10
        full, _ = flatten_summary(run_design(d).summary())
        rows = []
        for k, v in fast.items():
            ref = full[k]
            err = abs(v / ref - 1) if ref else abs(v)
            worst[k] = max(worst.get(k, 0.0), err)
            rows.append(f"{k.split('.', 1)[1]} {err:.1e}")
        print(f"gap {d.backplate.gap_m:.3g} m: {dt * 1e3:.1f} ms CPU;", ", ".join(rows),
              flush=True)
    print("worst:", {k: f"{v:.1e}" for k, v in worst.items()})


def fit_kappa() -> None:
    import math
    from dataclasses import replace

    from diagap import demo_design
    from diagap.extract import plate_problem
    from diagap.fastpath.coupled import disk_coupled
    from diagap.fem.coupling.plate import COUPLING_MESHES, solve_coupled
    from diagap.fem.levels import mesh_sizes
    from diagap.fem.plate.solver import _layer_width

    warnings.simplefilter("ignore")
    p0 = plate_problem(demo_design())
    D, a, h = p0.bending_stiffness, p0.size_m, p0.thickness_m
    for acc in ("draft", "normal"):
        for tau in (-13.2, -8.8, 0.0, 30.0, 178.4, 1000.0, 4000.0, 1e4):
            p = replace(p0, residual_stress_pa=tau * D / (h * a * a))
            fe = solve_coupled(p, acc, a, 4e-6, 0.0, None)
            s = mesh_sizes("circle", COUPLING_MESHES[acc], _layer_width(p))[-1]
            n = math.floor(2 * math.pi / s.h_edge) + 1
            eps = math.pi**2 / (3 * n**2)
            row = []
            for f in ("center_compliance_no_bias_m_per_pa", "resonance_no_bias_hz",
                      "pull_in_voltage_v"):
                c1 = getattr(disk_coupled(p, a, 4e-6, 0.0, None), f)
                c2 = getattr(disk_coupled(replace(p, size_m=a * (1 - eps)), a, 4e-6, 0.0), f)
                row.append(f"{f.split('_')[0]} {(getattr(fe, f) - c1) / (c2 - c1):.3f}")
            print(acc, f"tau {tau:8.4g} N {n}: kappa", ", ".join(row), flush=True)


if __name__ == "__main__":
    if sys.argv[1:2] == ["kappa"]:
        fit_kappa()
    else:
        main(*(sys.argv[1:2] or ["draft"]), *(int(a) for a in sys.argv[2:3]))
