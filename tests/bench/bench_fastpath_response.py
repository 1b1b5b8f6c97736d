"""The response section from fast pieces against the full pipeline: accuracy and time per design.

Run: ``python tests/bench/bench_fastpath_response.py [--accuracy draft] [--tables]
[--workers 1] [--repeat 20]``.

For each design (the demo, examples/packaged.toml, a solid backplate with the film's cut-off in
the band; with ``--random N`` also N random clamped circles of tests/test_fastpath_response.py):

1. the full pipeline (:func:`diagap.pipeline.run_design`) as the reference;
2. the fast lumped model from the pipeline's flat mechanics/electrostatics/coupled/damping
   outputs, its device C(x) (or, with ``--tables``, the device of the scaled cell and rim tables
   and the shape table's correction: :func:`diagap.fastpath.response.response_outputs`), and
   the radial film;
3. the worst deviation per output (dB for levels, relative otherwise) and the time of one
   evaluation split into its parts: the model (device curve, k_e, radial film table), then the
   stage's own lumped code (frequency response, noise, distortion by harmonic balance) and the
   packaged levels. Wall and CPU times (the machine may be shared: CPU time is the steadier).
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np


def _timed(func, repeat):
    wall, cpu = [], []
    for _ in range(repeat):
        t, c = time.perf_counter(), time.process_time()
        out = func()
        wall.append(time.perf_counter() - t)
        cpu.append(time.process_time() - c)
    return out, 1e3 * float(np.median(wall)), 1e3 * float(np.median(cpu))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--accuracy", default="draft")
    ap.add_argument("--tables", action="store_true",
                    help="device and shape from the fast tables (built with --workers)")
    ap.add_argument("--workers", type=int, default=1)
    ap.add_argument("--build", action="store_true", help="build missing tables (else read)")
    ap.add_argument("--repeat", type=int, default=20)
    ap.add_argument("--random", type=int, default=0)
    args = ap.parse_args()

    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    import test_fastpath_response as T

    from diagap.fastpath.filmspectrum import film_spectrum
    from diagap.fastpath.film import SPECTRUM_HZ
    from diagap.fastpath.response import fast_lumped_model, model_outputs, response_outputs
    from diagap.lumped.breakdown import noise_breakdown, output_noise_psds
    from diagap.lumped.circuit import solve_circuit
    from diagap.lumped.distortion import distortion_vs_spl
    from diagap.lumped.response import analyse_response

    T.ACCURACY = args.accuracy
    designs = [(n, T._design(n)) for n in T.DESIGNS]
    rng = np.random.default_rng(3)
    designs += [(f"random_{i}", T._random_design(rng).with_accuracy(args.accuracy))
                for i in range(args.random)]
    mapper = None
    if args.tables:
        from diagap.fastpath import read_only
        from diagap.fastpath.refine import mapper_for

        mapper = mapper_for(args.workers) if args.build else read_only
    worst: dict = {}
    for name, design in designs:
        t0 = time.perf_counter()
        res, ref = T._pipeline(design)
        t_pipe = time.perf_counter() - t0
        if res.collapsed:
            print(f"{name}: collapsed, skipped")
            continue
        inputs = {k: v for k, v in ref.items()
                  if k.split(".", 1)[0] in ("mechanics", "electrostatics", "coupled", "damping")}
        device = res.sections["electrostatics"].objects["device"]
        shape = T._stage_shape(design, res.mechanics)
        zh = T._stage_hole_resistance(design)
        (model, _), t_model, c_model = _timed(
            lambda: fast_lumped_model(design, inputs, device, shape, zh), args.repeat)
        d, b = design.diaphragm, design.backplate
        coef_args = (design, b.electrode_size_m / d.size_m)
        from diagap.extract import film_coefficients
        from diagap.fem.air import air_properties

        coef = film_coefficients(design, air_properties(*design.air_conditions), zh)
        _, t_film, c_film = _timed(lambda: film_spectrum(
            coef, b.electrode_size_m, shape, coef_args[1], SPECTRUM_HZ, T._tau(design)),
            args.repeat)
        rep = max(3, args.repeat // 4)
        resp, t_resp, c_resp = _timed(lambda: analyse_response(model), rep)
        f = resp.response.frequency_hz
        _, t_noise, c_noise = _timed(lambda: noise_breakdown(
            f, resp.response.voltage_per_pa,
            output_noise_psds(solve_circuit(model, f), design.readout)), rep)
        _, t_dist, c_dist = _timed(lambda: distortion_vs_spl(model), rep)
        fast, t_all, c_all = _timed(lambda: model_outputs(design, model), rep)
        line = (f"{name}: pipeline {t_pipe:.1f} s; fast model {t_model:.1f} ms (cpu "
                f"{c_model:.1f}; of it the radial film {t_film:.1f}/{c_film:.1f}), stage lumped "
                f"code {t_all:.1f} ms (cpu {c_all:.1f}: response {c_resp:.1f}, noise "
                f"{c_noise:.1f}, distortion {c_dist:.1f})")
        if args.tables:
            from diagap.fastpath import FastPathUnavailable
            from diagap.fastpath.field import field_objects

            try:
                full, t_tab, c_tab = _timed(lambda: response_outputs(design, inputs, mapper), 3)
                line += f"; response_outputs with tables {t_tab:.1f} ms (cpu {c_tab:.1f})"
            except FastPathUnavailable as exc:  # the film tables not built: the device only
                (_, dev, _), dev_t, _ = _timed(lambda: field_objects(design, mapper), 3)
                model_t, _ = fast_lumped_model(design, inputs, dev, shape, zh)
                full = model_outputs(design, model_t)
                line += (f"; device from the cell and rim tables only ({exc}), "
                         f"{dev_t:.1f} ms")
            fast = full
        print(line)
        for k, v in fast.items():
            r = ref[k]
            dev = abs(v - r) if T.is_level(k) else abs(v - r) / abs(r) if r else abs(v)
            if dev >= worst.get(k, (-1.0,))[0]:
                worst[k] = (dev, name, v, r)
    print("\nworst deviation per output (dB for levels, relative otherwise), limit "
          f"{T.LEVEL_DB} dB / {T.REL:g}:")
    for k in sorted(worst):
        dev, name, v, r = worst[k]
        limit = T.LEVEL_DB if T.is_level(k) else T.REL
        flag = "  <-- above the limit" if dev > limit else ""
        print(f"  {k:60s} {dev:.3g} ({name}: {v:.8g} vs {r:.8g}){flag}")


if __name__ == "__main__":
    main()
