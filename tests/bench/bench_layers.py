"""Timing of the electrostatics with dielectric layers (not collected by pytest).

Run on purpose, once:  python tests/bench/bench_layers.py

1. Layered axisymmetric cell at normal accuracy, cache off: wall time against the plain cell.
2. c(g) table of the demo lattice with layers, normal accuracy, cache off.
3. Rim fringing of the demo electrode pair with and without layers (draft and normal).
4. The invented electret example end to end at draft (cache off).
Demo geometry (an invented scenario): gap 4 µm, backplate 2 µm, hex holes r = 4 µm, pitch
20 µm, electrode radius 0.45 mm, diaphragm radius 0.5 mm; layers 0.5 µm (ε_r 7) on the
backplate and 0.2 µm (ε_r 4) on the diaphragm.
"""
from __future__ import annotations

import time

from diagap.fem.field.cell import cell_capacitance
from diagap.fem.field.cell_table import capacitance_density_table
from diagap.fem.field.layers import GapLayers
from diagap.fem.field.rim import rim_fringing
from diagap.meshes.cache import set_enabled

G, T, A, P = 4e-6, 2e-6, 4e-6, 20e-6
LAYERS = GapLayers(0.5e-6, 7.0, 0.2e-6, 4.0)


def _time(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main() -> None:
    set_enabled(False)
    for name, layers in (("plain", None), ("layers", LAYERS)):
        t, r = _time(lambda: cell_capacitance(G, A, P, "hex", T, layers=layers))
        print(f"1. cell {name:7s} normal: {t:.2f} s  P = {r.perforation_factor:.6f} "
              f"± {r.rel_error:.1e}  dofs {r.dofs}")
    t, tab = _time(lambda: capacitance_density_table(G / 4, 1.45 * G, A, P, "hex", T,
                                                     layers=LAYERS))
    print(f"2. c(g) table with layers, normal: {t:.2f} s, fit error {tab.fit_error:.1e}, "
          f"sample error {tab.rel_error:.1e}")
    for acc in ("draft", "normal"):
        for name, layers in (("plain", None), ("layers", LAYERS)):
            t, r = _time(lambda: rim_fringing(0.45e-3, 0.5e-3, G, T - 0.5e-6 * (layers is not None),
                                              accuracy=acc, gap_span=0.5, layers=layers))
            print(f"3. rim {name:7s} {acc:6s}: {t:.1f} s  C_rim = {r.capacitance_f:.5e} F "
                  f"± {r.rel_error:.1e}")
    from diagap import load_design, run_design

    t, res = _time(lambda: run_design(load_design("examples/electret_capsule.toml")))
    cp = res.summary()["coupled"]
    print(f"4. electret example, draft, cache off: {t:.1f} s  V_eq = "
          f"{cp['electret_equivalent_bias_v']:.2f} V, pull-in {cp['pull_in_voltage_v']:.1f} V; "
          f"stages {res.timings_s}")
    set_enabled(True)


if __name__ == "__main__":
    main()
