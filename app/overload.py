"""High sound pressure: large deflection, contact with the backplate and the overload point.

Runs the von Kármán diaphragm (:mod:`diagap.fem.plate.large_deflection`) twice:

- without bias, at the design's ``[analysis] static_pressures`` and at the audit pressure (the
  largest SPL of interest), traced to the clearance (gap, or gap minus ``[backplate]
  stopper_height``): ``pressures_pa``, ``center_deflection_m`` (None past contact),
  ``contact_pressure_pa`` (the trace always reaches the clearance, so it is None only if the
  section could not be computed);
- with the electrostatic force of the bias (capacitance density c(g) of the perforated gap, its
  table extended by the parallel-plate law outside its range): the curve up to contact (or the
  snap to the backplate) and away from it over the same travel, the capacitance C(p) of the
  deflected shape over the whole stroke, and from it the quasi-static THD and the 10 % THD point
  (:mod:`diagap.lumped.quasistatic`).

The capacitance of a deflected state is Σ_q W_q c(g − w(x_q)) over a Gauss rule on the electrode;
rim fringing, parasitic and preamplifier capacitances are a constant shunt. Results are design
estimates; bias voltages can be dangerous.
"""
from __future__ import annotations

import numpy as np

__all__ = ["large_deflection_section", "plain_part", "biased_part", "assemble_section",
           "audit_pressure_pa"]

#: SPL (dB) of the audit row when no acoustic overload point was computed
AUDIT_SPL_DB = 120.0


def audit_pressure_pa(resp: dict | None) -> tuple[float, float]:
    """(SPL dB, peak pressure Pa) of the largest SPL of interest: the overload point of the
    response section if computed, else 120 dB SPL."""
    from diagap.lumped.quasistatic import spl_to_pa

    spl = (resp or {}).get("aop_10pct_spl_db") or AUDIT_SPL_DB
    return float(spl), float(spl_to_pa(spl))


def _density_ext(density, g_lo: float, g_hi: float):
    """c(ĝ) with the parallel-plate extension c ∝ 1/(ĝ + t_e) outside [g_lo, g_hi] (t_e the
    electrical thickness of dielectric layers, 0 without)."""
    off = float(getattr(density, "electrical_offset_m", 0.0))

    def c(g):
        gc = np.clip(g, g_lo, g_hi)
        return density(gc) * (gc + off) / (g + off)
    return c


def _capacitance(res, i, xq, yq, wq, c, gap_m):
    w = res.curve_field_m(i, xq, yq)
    return float(np.sum(wq * c(np.maximum(gap_m - w, 1e-4 * gap_m))))


def large_deflection_section(design, problem, es, resp: dict | None = None,
                             with_bias: bool = True, reference: bool = False):
    """The ``large_deflection`` summary section (a :class:`diagap.stages.Section`);
    ``reference``: solved by full Newton from unextrapolated starts (for checks of the default
    chord iteration, see :func:`diagap.fem.plate.large_deflection.solve_large_deflection`).
    The two traces are independent: :mod:`diagap.overload_lanes` runs them on two processes."""
    biased = biased_part(design, problem, es, reference) if with_bias else None
    return assemble_section(plain_part(design, problem, audit_pressure_pa(resp), reference),
                            biased)


def plain_part(design, problem, audit, reference: bool = False):
    """(data, uncertainty, detached result) of the trace without bias and the deflections at
    the requested pressures and at the audit pressure. ``audit``: (SPL dB, pressure Pa), or a
    callable returning it, called once after the trace (when only the requested deflections
    are left)."""
    from diagap.fem.plate.large_deflection import solve_large_deflection

    b = design.backplate
    got = {}

    def pressures():
        got["spl"], got["pa"] = audit() if callable(audit) else audit
        return list(design.analysis.static_pressures_pa) + [got["pa"]]
    plain = solve_large_deflection(problem, pressures, design.analysis.accuracy,
                                   clearance_m=b.clearance_m, both_signs=False,
                                   reference=reference).detached()
    n = len(design.analysis.static_pressures_pa)
    data = plain.to_summary()
    data.update({
        "pressures_pa": data["pressures_pa"][:n],
        "center_deflection_m": data["center_deflection_m"][:n],
        "linear_center_deflection_m": data["linear_center_deflection_m"][:n],
        "stopper_height_m": b.stopper_height_m,
        "audit_spl_db": got["spl"],
        "audit_pressure_pa": got["pa"],
        "audit_center_deflection_m": plain.center_deflection_m[-1],
        "audit_linear_center_deflection_m": plain.linear_center_deflection_m[-1],
    })
    return data, dict(plain.uncertainty), plain


def assemble_section(plain, biased=None):
    """The section from :func:`plain_part` and :func:`biased_part` (None: without bias)."""
    from diagap.stages import Section

    data, unc, result = plain
    data, unc = dict(data), dict(unc)
    if biased is None:
        return Section(data, unc, {"plain": result})
    bdata, bunc, objects = biased
    data.update(bdata)
    unc.update(bunc)
    return Section(data, unc, {"plain": result} | objects)


def biased_part(design, problem, es, reference: bool = False):
    """(data, uncertainty, detached objects) of the trace at bias: contact, C(p), quasi-static
    THD."""
    from diagap.dielectrics import effective_bias_v
    from diagap.fem.coupling.plate import load_from_density
    from diagap.fem.plate.large_deflection import ElectrostaticBias, solve_large_deflection
    from diagap.lumped.quasistatic import QuasiStaticTransfer, pa_to_spl
    from diagap.stages import electrode_quadrature

    b, e, acc = design.backplate, design.electrical, design.analysis.accuracy
    density = es.objects["density"]
    rng = (density.gap_min_m, density.gap_max_m)
    bias = ElectrostaticBias(b.electrode_size_m, b.gap_m, effective_bias_v(design),
                             load_from_density(density, b.gap_m), rng)
    biased = solve_large_deflection(problem, [0.0], acc, clearance_m=b.clearance_m, bias=bias,
                                    reference=reference)
    xq, yq, wq = electrode_quadrature(design)
    c = _density_ext(density, *rng)
    caps = [_capacitance(biased, i, xq, yq, wq, c, b.gap_m)
            for i in range(len(biased.curve_pressures_pa))]
    p_b = np.array(biased.curve_pressures_pa)
    stable = _stable_branch(p_b)
    shunt = es.data.get("rim_fringing_capacitance_f", 0.0) + e.parasitic_capacitance_f + \
        e.preamp_input_capacitance_f
    transfer = QuasiStaticTransfer(tuple(p_b[stable]), tuple(np.array(caps)[stable]),
                                   effective_bias_v(design), shunt, None,
                                   biased.contact_pressure_pa)
    data = {
        "contact_pressure_at_bias_pa": biased.contact_pressure_pa,
        "contact_spl_db_at_bias": None if not biased.contact_pressure_pa
        else float(pa_to_spl(biased.contact_pressure_pa)),
        "curve_at_bias": [[float(p), float(w), float(cc)] for p, w, cc in
                          zip(p_b, biased.curve_deflections_m, caps)],
        "thd_10pct_spl_db_quasistatic": transfer.thd_point_spl_db(0.10),
        "thd_vs_spl_quasistatic": transfer.thd_vs_spl(np.arange(80.0, 161.0, 5.0)),
    }
    unc = {}
    if "contact_pressure_pa" in biased.uncertainty:
        unc["contact_pressure_at_bias_pa"] = biased.uncertainty["contact_pressure_pa"]
    return data, unc, {"biased": biased.detached(), "transfer": transfer}


def _stable_branch(p: np.ndarray) -> np.ndarray:
    """Indices of the traced states up to the pressure maximum (the stable branch, p ascending)."""
    k = int(np.argmax(p))
    idx = np.arange(k + 1)
    keep = [idx[0]]
    for i in idx[1:]:
        if p[i] > p[keep[-1]]:
            keep.append(i)
    return np.array(keep)
