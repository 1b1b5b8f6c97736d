"""The response stage: the lumped model's frequency response, noise by source and distortion,
checked against the distributed FE reference (:mod:`diagap.fem.response`).

The FE error estimates are propagated to first order into the lumped figures, and the
single-mode reduction error measured against the distributed solve is added to the reported
uncertainty of the sensitivity, the resonance and the noise (relative, on the pressure
amplitude).
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["response_stage", "distributed_section", "READOUT_SOURCES",
           "DISTRIBUTED_FREQUENCIES_HZ", "DISTRIBUTED_OUTPUTS", "is_distributed_output"]


def _response_uncertainty(unc: dict) -> dict:
    """First-order propagation of the FE error estimates into the lumped figures (relative, on
    the linear quantities): the mid-band sensitivity (V/Pa) ∝ (dC/dx / C)·A_eff / k and the
    resonance ∝ √(k/m); errors add linearly (a bound, no cancellation assumed)."""
    def u(key):
        return abs(float(unc.get(key, 0.0)))

    sens = (u("electrostatics.capacitance_slope_f_per_m") + u("electrostatics.rest_capacitance_f")
            + u("mechanics.static_shape_area_m2") + u("coupled.softened_stiffness_n_per_m"))
    res = 0.5 * (u("coupled.softened_stiffness_n_per_m") + u("mechanics.static_shape_mass_kg"))
    return {"sensitivity_v_per_pa": sens, "resonance_hz": res}


#: noise sources of the readout and its bias supply (the others are the capsule's own)
READOUT_SOURCES = ("readout", "bias_supply")

#: frequencies of the distributed reference solve (Hz): 30 log-spaced from 10 Hz to 100 kHz and
#: the 1 kHz reference
DISTRIBUTED_FREQUENCIES_HZ = np.sort(np.append(np.logspace(1.0, 5.0, 30), 1000.0))

#: the ``response`` keys that only the distributed reference gives (:func:`distributed_section`)
DISTRIBUTED_OUTPUTS = (
    "distributed_sensitivity_db_v_per_pa", "reduction_error_db", "distributed_dofs",
    "distributed_response", "distributed_peak_frequency_hz", "distributed_peak_db_v_per_pa",
    "lumped_peak_frequency_hz", "lumped_peak_db_v_per_pa", "reduction_error_peak_frequency",
    "reduction_error_peak_db")


def is_distributed_output(path: str) -> bool:
    """True for a summary path (``response.KEY``, list entries ``KEY_1`` …) that only the
    distributed reference gives."""
    section, _, key = path.partition(".")
    return section == "response" and any(key == k or key.startswith(k + "_")
                                         for k in DISTRIBUTED_OUTPUTS)


def _voltage_peak(freqs, evaluate):
    """(f, |H|) of the maximum of |H(f)| sampled at ``freqs``, refined by a parabola in
    (log f, dB) through a local grid; None when the maximum is at the end of the range."""
    h = np.abs(evaluate(freqs))
    i = int(np.argmax(h))
    if i == 0 or i == len(freqs) - 1:
        return None
    for _ in range(2):
        fl = np.geomspace(freqs[max(i - 1, 0)], freqs[min(i + 1, len(freqs) - 1)], 9)
        hl = np.abs(evaluate(fl))
        j = int(np.clip(np.argmax(hl), 1, 7))
        freqs, i = fl, j
    x, y = np.log(freqs[i - 1:i + 2]), 20 * np.log10(np.abs(evaluate(freqs[i - 1:i + 2])))
    a, b, c = np.polyfit(x, y, 2)
    xv = -b / (2 * a) if a < 0 else x[1]
    return float(np.exp(xv)), float(10 ** (np.polyval([a, b, c], xv) / 20))


def distributed_section(model, resp, inputs, accuracy: str) -> tuple[dict, dict, object]:
    """Lumped vs distributed: the distributed solve (:mod:`fem.response`) at
    ``DISTRIBUTED_FREQUENCIES_HZ``, its 1 kHz sensitivity and voltage peak, and the reduction
    error of the lumped model (lumped − distributed, dB). Returns (data, uncertainty, result)."""
    from diagap.fem.response.coupled import distributed_response
    from diagap.lumped.response import REFERENCE_FREQUENCY_HZ, frequency_response

    f = DISTRIBUTED_FREQUENCIES_HZ
    res = distributed_response(inputs, f, accuracy)
    i1 = int(np.argmin(np.abs(f - REFERENCE_FREQUENCY_HZ)))
    s_d = abs(res.voltage_per_pa[i1])
    err = res.voltage_rel_error
    red_db = float(resp.sensitivity_db_v_per_pa - 20 * math.log10(s_d))
    data = {
        "distributed_sensitivity_db_v_per_pa": 20 * math.log10(s_d),
        "reduction_error_db": red_db,
        "distributed_dofs": list(res.dofs),
        "distributed_response": [[float(a), float(20 * math.log10(abs(b))),
                                  float(np.degrees(np.angle(b))), float(e)]
                                 for a, b, e in zip(f, res.voltage_per_pa, err)],
    }
    unc = {"distributed_sensitivity_v_per_pa": float(err[i1])}
    pk_d = _voltage_peak(f, res.evaluate)
    pk_l = _voltage_peak(resp.response.frequency_hz,
                         lambda x: frequency_response(model, np.atleast_1d(x)).voltage_per_pa)
    if pk_d and pk_l:
        data.update({"distributed_peak_frequency_hz": pk_d[0],
                     "distributed_peak_db_v_per_pa": 20 * math.log10(pk_d[1]),
                     "lumped_peak_frequency_hz": pk_l[0],
                     "lumped_peak_db_v_per_pa": 20 * math.log10(pk_l[1]),
                     "reduction_error_peak_frequency": pk_l[0] / pk_d[0] - 1.0,
                     "reduction_error_peak_db": 20 * math.log10(pk_l[1] / pk_d[1])})
        unc["distributed_peak_frequency_hz"] = float(np.max(err))
    return data, unc, res


def response_stage(model, fe_uncertainty: dict | None = None, distributed=None,
                   accuracy: str = "normal", readout=None, scope: str = "capsule",
                   curves: bool = True) -> Section:
    """Frequency response, noise (every source of :func:`diagap.lumped.breakdown.output_noise_psds`,
    with ``readout`` (a :class:`diagap.lumped.readout.Readout`) its own noise and the bias
    supply's) and distortion; with ``distributed`` (a :class:`fem.response.coupled.ResponseInputs`)
    also the distributed reference and the reduction error, which is added to the reported
    uncertainty of the sensitivity, the resonance and the noise (relative, on the pressure
    amplitude). ``noise_contributions_dba_spl`` keeps the capsule's own sources,
    ``noise_breakdown_dba`` every source; the noise floor and SNR count them all. With package
    elements (``model.package``) the thermal sources are every dissipative element of the
    circuit. ``scope`` ("capsule" | "packaged", :func:`diagap.scope.response_scope`) is
    reported as given. ``curves=False`` (flat figures only, the fast path): the distortion scan
    solves only the levels its crossings and stopping level need (``thd_vs_spl`` then holds
    those few levels; :func:`diagap.lumped.distortion.distortion_vs_spl`)."""
    from diagap.lumped.breakdown import noise_breakdown, output_noise_psds
    from diagap.lumped.circuit import solve_circuit
    from diagap.lumped.distortion import distortion_vs_spl
    from diagap.lumped.response import analyse_response
    from diagap.package_design import package_response_data
    from diagap.stages import Section

    resp = analyse_response(model)
    f = resp.response.frequency_hz
    parts = output_noise_psds(solve_circuit(model, f), readout)
    breakdown = noise_breakdown(f, resp.response.voltage_per_pa, parts)
    p_in = breakdown.total_input_psd
    noise = breakdown.total_dba
    contributions = {k: v for k, v in breakdown.levels_dba.items()
                     if k not in READOUT_SOURCES}
    dist = distortion_vs_spl(model, curve=curves)
    data = resp.to_summary()
    data.update({
        "noise_dba_spl": noise, "snr_db": breakdown.snr_db,
        "noise_contributions_dba_spl": contributions,
        "noise_breakdown_dba": dict(breakdown.levels_dba),
        "input_noise_density_pa_per_rthz": [[float(a), float(math.sqrt(b))]
                                            for a, b in zip(f, p_in)],
    })
    data.update(dist.to_summary())
    data["thd_vs_spl"] = [[float(a), float(b)] for a, b in zip(dist.spl_db, dist.thd)]
    data.update(package_response_data(model))
    data["scope"] = scope
    unc = _response_uncertainty(fe_uncertainty or {})
    objects = {"response": resp, "distortion": dist, "model": model,
               "noise_parts": {k: v for k, v in parts.items() if np.any(v > 0)},
               "noise_input_psd": p_in, "noise_breakdown": breakdown}
    if distributed is not None:
        d_data, d_unc, d_res = distributed_section(model, resp, distributed, accuracy)
        data.update(d_data)
        unc.update(d_unc)
        model_err = abs(10 ** (d_data["reduction_error_db"] / 20) - 1.0)
        unc["sensitivity_v_per_pa"] += model_err + d_unc["distributed_sensitivity_v_per_pa"]
        unc["noise_dba_spl"] = unc["sensitivity_v_per_pa"]
        if "reduction_error_peak_frequency" in d_data:
            unc["resonance_hz"] += abs(d_data["reduction_error_peak_frequency"])
        objects["distributed"] = d_res
    return Section(data, unc, objects)
