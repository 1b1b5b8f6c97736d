"""Wall time of the drift analysis over temperatures: the points one after another (as diagap runs
them) against a two-worker process pool, on the invented example examples/temperature_drift.toml.

    python tests/bench/bench_temperature.py [N_TEMPERATURES]   (default 4)

Both variants reuse the mesh cache (warmed first). The pool's workers are fresh processes that
import the FE stack and rebuild the c(g) table from the disk cache, as a pool inside a run would.
"""
import sys
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from pathlib import Path

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "temperature_drift.toml"


def _one(temperature_k: float) -> list:
    from diagap.design import load_design
    from diagap.thermal import temperature_sweep

    d = load_design(EXAMPLE)
    d = replace(d, analysis=replace(d.analysis, temperatures_k=(temperature_k,)))
    return temperature_sweep(d).to_summary()


def main(n: int) -> None:
    import numpy as np

    from diagap.design import load_design
    from diagap.thermal import temperature_sweep

    temps = tuple(np.linspace(233.15, 358.15, n))
    d = load_design(EXAMPLE)
    d = replace(d, analysis=replace(d.analysis, temperatures_k=temps))
    _one(temps[0])  # warm the mesh and table cache
    t0 = time.perf_counter()
    serial = temperature_sweep(d).to_summary()
    t_serial = time.perf_counter() - t0
    t0 = time.perf_counter()
    with ProcessPoolExecutor(2) as pool:
        pooled = [p for pts in pool.map(_one, temps) for p in pts]
    t_pool = time.perf_counter() - t0
    same = all(a["sensitivity_db_v_per_pa"] == b["sensitivity_db_v_per_pa"]
               for a, b in zip(serial, pooled))
    print(f"{n} temperatures: serial {t_serial:.1f} s ({t_serial / n:.1f} s per point), "
          f"2-worker pool {t_pool:.1f} s; same results: {same}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 4)
