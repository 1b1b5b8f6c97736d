"""Acoustic-response plots: squeeze-film spectrum, frequency response, noise and THD against SPL.

* Squeeze film: damping b(f) and film stiffness k(f) of :func:`diagap.fem.film.squeeze.squeeze_film` on the
  mode-1 shape, with the film's cut-off frequency (where the film turns from damper to spring).
* Frequency response: |V_out/p| in dB re 1 V/Pa and its phase from the lumped model
  (:mod:`diagap.lumped.response`), with the electrical high-pass corner 1/(2πRC), the acoustic (vent)
  corner and the resonance marked.
* Noise: the input-referred pressure noise density √S_p(f) (Pa/√Hz) and each source's share
  (mechanical-thermal film damping, bias resistor, vent), output PSDs divided by |V_out/p|²;
  the A-weighted floor over 20 Hz – 20 kHz (IEC 61672-1 weighting) is stated.
* THD against SPL at the distortion frequency (harmonic balance of :mod:`diagap.lumped.distortion`),
  with the 1 % and 10 % levels.
"""
from __future__ import annotations

import math

import numpy as np

from diagap.fem.constants import P_REF_PA
from diagap.names import display_text, lookup
from diagap.report.plots import GREYS, LINES, MARKERS, Plot, new_figure, prefixed
from diagap.scope import scope_words

__all__ = ["response_plots", "draw_squeeze", "draw_response", "draw_noise", "draw_thd",
           "reduction_words"]

_NOISE_LABELS = {"mechanical_thermal": "mechanical-thermal (film damping)",
                 "bias_resistor": "bias resistor", "vent": "vent (leak) resistance",
                 "readout": "readout input noise", "bias_supply": "bias supply (charge pump)",
                 "diaphragm_damping": "mechanical-thermal (film damping)",
                 "back_volume": "back volume (thermal loss)", "port": "sound port",
                 "front_chamber": "front chamber (thermal loss)", "radiation": "radiation"}


def _hz(f: float) -> str:
    k, unit = prefixed(f, "Hz")
    return f"{f * k:.3g} {unit}"


def _markers_line(ax, x: float | None, style, label: str):
    if x is not None and math.isfinite(x) and x > 0:
        ax.axvline(x, color="0.3", ls=style, lw=1.2, label=label)


def draw_squeeze(sq, resonance_hz: float | None):
    """Film damping and stiffness against frequency."""
    f = np.asarray(sq.frequencies_hz, float)
    b = np.asarray(sq.damping_spectrum_n_s_per_m, float)
    fig, (a1, a2) = new_figure(7.6, 4.8, nrows=2, sharex=True,
                               margins_in=(0.9, 0.25, 0.6, 0.2), hspace=0.08)
    name = lookup("damping.damping_n_s_per_m")  # the tables' unit
    fb = name.scale
    a1.semilogx(f, b * fb, color="black", marker="o", ms=3, lw=1.5,
                label=f"damping b(f); b(0) = {display_text(name.key, sq.damping_n_s_per_m, 5)}")
    lo, hi = float(np.min(b)) * fb, float(np.max(b)) * fb
    spread = (hi - lo) / hi if hi > 0 else 0.0
    if spread < 0.2:
        # nearly constant (far below the cut-off): centre the line in a ±25 % window so that
        # the panel shows the value, not a line along the top edge of a 0-based axis
        mid = 0.5 * (hi + lo)
        a1.set_ylim(0.75 * mid, 1.25 * mid)
        a1.text(0.98, 0.94, f"b varies by {100 * spread:.2g} % over the plotted range",
                transform=a1.transAxes, ha="right", va="top", fontsize=9,
                bbox={"fc": "white", "ec": "none", "pad": 1})
    else:
        a1.set_ylim(0.0, 1.1 * hi)
    a1.set_ylabel(f"damping b ({name.unit})")
    k = np.asarray(sq.film_stiffness_n_per_m, float)
    pos = k > 0
    a2.loglog(f[pos], k[pos], color="black", ls="--", marker="s", ms=3, lw=1.5)
    a2.set_ylabel("film stiffness (N/m)")
    a2.set_xlabel("frequency (Hz)")
    fc = sq.cutoff_frequency_hz
    beyond = " (beyond the plotted range)" if fc > f[-1] else ""
    for k, ax in enumerate((a1, a2)):
        _markers_line(ax, fc, "-.", None if k else
                      f"film cut-off {display_text('damping.cutoff_frequency_hz', fc)}{beyond}")
        _markers_line(ax, resonance_hz, ":", None if k or not resonance_hz else
                      f"resonance in air (lumped model) "
                      f"{display_text('response.resonance_hz', resonance_hz)}")
        ax.grid(True, which="major", color="0.85")
    a1.set_xlim(f[0], f[-1])
    a1.legend(fontsize=9, loc="lower left")
    return fig


def reduction_words(d: dict) -> str:
    """The single-mode reduction error in words (empty without a distributed solve)."""
    if "reduction_error_db" not in d:
        return ""
    out = (f" The squares are the distributed finite-element solve (diaphragm, air film with "
           f"holes, back volume, radiation and electrical node solved together, no modal "
           f"reduction): at 1 kHz the lumped model differs from it by "
           f"{d['reduction_error_db']:+.3f} dB")
    if "reduction_error_peak_frequency" in d:
        out += (f"; its response peak lies {100 * d['reduction_error_peak_frequency']:+.1f} % "
                f"in frequency and {d['reduction_error_peak_db']:+.2f} dB in height from the "
                f"distributed one ({_hz(d['distributed_peak_frequency_hz'])})")
    return out + "."


def draw_response(resp, distributed=None, helmholtz_hz=None):
    """Magnitude and phase of V_out/p with the corners and the resonance; ``distributed``
    ([[f_hz, dB, phase_deg, rel_err], ...]) overlays the distributed FE solve; ``helmholtz_hz``
    marks the resonance of a sound port and front chamber."""
    r = resp.response
    f = np.asarray(r.frequency_hz, float)
    fig, (a1, a2) = new_figure(7.6, 5.4, nrows=2, sharex=True, height_ratios=[1.6, 1],
                               margins_in=(0.9, 0.25, 0.6, 0.2), hspace=0.08)
    a1.semilogx(f, r.magnitude_db_v_per_pa, color="black", lw=1.8,
                label="|V_out / p|, lumped" if distributed else "|V_out / p|")
    if distributed:
        d = np.asarray(distributed, float)
        ph = np.degrees(np.unwrap(np.radians(d[:, 2])))
        ref = np.interp(np.log(d[0, 0]), np.log(f), r.phase_deg)
        ph += 360.0 * np.round((ref - ph[0]) / 360.0)
        a1.semilogx(d[:, 0], d[:, 1], ls="none", marker="s", ms=4, mfc="none", color="tab:blue",
                    label="distributed FE (no modal reduction)")
        a2.semilogx(d[:, 0], ph, ls="none", marker="s", ms=4, mfc="none", color="tab:blue")
    a1.plot([1000.0], [resp.sensitivity_db_v_per_pa], ls="none", marker="o", ms=7, mfc="white",
            color="black", label=f"1 kHz: {resp.sensitivity_db_v_per_pa:.2f} dB re 1 V/Pa")
    a2.semilogx(f, r.phase_deg, color="black", lw=1.5)
    for ax, lab in ((a1, True), (a2, False)):
        hp, ac = resp.highpass_corner_hz, resp.acoustic_corner_hz
        _markers_line(ax, hp, "--", f"electrical high-pass "
                      f"{display_text('response.highpass_corner_hz', hp)}" if lab else None)
        _markers_line(ax, ac, "-.", f"acoustic (vent) corner "
                      f"{display_text('response.acoustic_corner_hz', ac)}" if lab else None)
        if resp.resonance_hz:
            q = f", Q = {resp.quality_factor:.3g}" if resp.quality_factor else ""
            _markers_line(ax, resp.resonance_hz, ":", f"resonance in air (lumped model"
                          f"{', capsule side' if helmholtz_hz else ''}) "
                          f"{display_text('response.resonance_hz', resp.resonance_hz)}{q}"
                          if lab else None)
        _markers_line(ax, helmholtz_hz, (0, (6, 2, 1, 2, 1, 2)), "port and front chamber "
                      "(Helmholtz) "
                      f"{display_text('response.helmholtz_resonance_hz', helmholtz_hz)}"
                      if lab and helmholtz_hz else None)
        ax.grid(True, which="major", color="0.85")
    top = float(np.max(r.magnitude_db_v_per_pa))
    a1.set_ylim(max(float(np.min(r.magnitude_db_v_per_pa)), top - 80.0) - 2.0, top + 6.0)
    a1.set_ylabel("sensitivity (dB re 1 V/Pa)")
    a1.legend(fontsize=9, loc="lower center")
    a2.set_ylabel("phase (°)")
    a2.set_xlabel("frequency (Hz)")
    a2.set_xlim(f[0], f[-1])
    return fig


def _db_axis(ax):
    """Right axis in dB SPL per hertz, 20 log10(√S / 20 µPa), beside the log axis in Pa/√Hz.

    A twin axis with fixed limits: the log axis maps affinely onto dB, so matching limits align
    every tick (call after the left limits are final).
    """
    lo, hi = ax.get_ylim()
    right = ax.twinx()
    right.set_ylim(20 * np.log10(lo / P_REF_PA), 20 * np.log10(hi / P_REF_PA))
    right.set_ylabel("dB SPL in a 1 Hz band")


def draw_noise(resp_section):
    """Input-referred noise density and its contributions."""
    resp = resp_section.objects["response"].response
    f = np.asarray(resp.frequency_hz, float)
    h2 = np.abs(resp.voltage_per_pa) ** 2
    total = np.asarray(resp_section.objects["noise_input_psd"], float)
    data = resp_section.data
    levels = data.get("noise_breakdown_dba", data.get("noise_contributions_dba_spl", {}))
    # legend rows below the axes (two entries a row): room for more than the three sources
    extra = 0.22 * max(0, math.ceil((len(resp_section.objects["noise_parts"]) + 2) / 2) - 3)
    fig, ax = new_figure(7.6, 5.0 + extra, margins_in=(0.9, 0.8, 1.25 + extra, 0.2))
    ax.axvspan(20.0, 20e3, color="0.93", lw=0, label="audio band 20 Hz – 20 kHz")
    ax.loglog(f, np.sqrt(total), color="black", lw=2.2,
              label=f"total: {data['noise_dba_spl']:.1f} dB(A) SPL")
    for k, (name, psd) in enumerate(resp_section.objects["noise_parts"].items(), start=1):
        level = levels.get(name)
        extra = f": {level:.1f} dB(A)" if level is not None else ""
        i = k % len(GREYS)
        ax.loglog(f, np.sqrt(np.asarray(psd, float) / h2), color=GREYS[i], ls=LINES[i],
                  marker=MARKERS[i], markevery=25, ms=4,
                  label=f"{_NOISE_LABELS.get(name, name)}{extra}")
    ax.set_xlim(f[0], f[-1])
    floor = float(np.sqrt(np.min(total)))
    band = f >= 20.0
    top = float(np.sqrt(np.max(total[band]))) if np.any(band) else 1e3 * floor
    # the whole total over the audio band is visible (at least three decades)
    ax.set_ylim(0.3 * floor, max(2.0 * top, 1e3 * floor))
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("input-referred noise (Pa/√Hz)")
    _db_axis(ax)
    ax.grid(True, which="major", color="0.85")
    ax.legend(fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncols=2)
    return fig


def draw_thd(dist):
    """THD against SPL with the 1 % and 10 % levels."""
    spl = np.asarray(dist.spl_db, float)
    thd = np.maximum(np.asarray(dist.thd, float), 1e-9)
    fig, ax = new_figure(7.6, 4.0, margins_in=(0.8, 0.25, 0.6, 0.2))
    ax.semilogy(spl, 100.0 * thd, color="black", marker="o", ms=4, lw=1.5,
                label=f"THD at {_hz(dist.frequency_hz)} (harmonic balance)")
    ax.axhline(1.0, color="0.35", ls="--", lw=1.2, label="1 %")
    ax.axhline(10.0, color="0.35", ls="-.", lw=1.2, label="10 % (acoustic overload)")
    for value, marker, text in ((dist.thd_1pct_spl_db, "s", "1 %"),
                                (dist.aop_10pct_spl_db, "D", "10 %")):
        if value is not None:
            y = 1.0 if text == "1 %" else 10.0
            ax.plot([value], [y], ls="none", marker=marker, ms=8, mfc="white", color="black",
                    label=f"{text} THD at {value:.1f} dB SPL")
    ax.set_xlabel("sound pressure level (dB SPL re 20 µPa)")
    ax.set_ylabel("total harmonic distortion (%)")
    ax.grid(True, which="major", color="0.85")
    ax.legend(fontsize=9, loc="upper left")
    return fig


def response_plots(design, damp, resp) -> list[Plot]:
    """The acoustic-response plots that the computed sections allow."""
    out: list[Plot] = []
    if damp is not None and "squeeze" in damp.objects:
        sq = damp.objects["squeeze"]
        f_res = resp.data.get("resonance_hz") if resp is not None else None
        out.append(Plot(
            "squeeze_film", "damping", "Squeeze-film damping and stiffness",
            f"Force per centre velocity (damping) and per centre displacement (stiffness) of the "
            f"air film on the static deflection shape; below the cut-off "
            f"({display_text('damping.cutoff_frequency_hz', sq.cutoff_frequency_hz)}) the "
            f"film acts as a damper, above it as a spring. Low-frequency damping "
            f"{display_text('damping.damping_n_s_per_m', sq.damping_n_s_per_m, 5)}.",
            lambda: draw_squeeze(sq, f_res)))
    if resp is None:
        return out
    r = resp.objects["response"]
    d = resp.data
    out.append(Plot(
        "response", "response", "Frequency response",
        f"Output voltage per pascal of the lumped model at the bias point (bias resistor, "
        f"parasitic and preamp input capacitance, back volume and vent, front radiation mass "
        f"included). Sensitivity at 1 kHz: {r.sensitivity_db_v_per_pa:.2f} dB re 1 V/Pa."
        + reduction_words(d) + scope_words(d),
        lambda: draw_response(r, d.get("distributed_response"),
                              d.get("helmholtz_resonance_hz"))))
    out.append(Plot(
        "noise", "response", "Noise",
        f"Input-referred noise density and its sources. A-weighted noise floor over 20 Hz – "
        f"20 kHz: {d['noise_dba_spl']:.1f} dB(A) SPL; SNR re 94 dB SPL: {d['snr_db']:.1f} dB(A).",
        lambda: draw_noise(resp)))
    dist = resp.objects.get("distortion")
    if dist is not None and len(dist.spl_db):
        note = f" The scan stopped: {dist.limit_reason}." if dist.limit_reason else ""
        out.append(Plot(
            "thd", "response", "Distortion against sound pressure level",
            f"Total harmonic distortion of the output at {_hz(dist.frequency_hz)} from the "
            f"one-degree-of-freedom model with the FE C(x) (nonlinear readout and electrostatic "
            f"force; linear mechanics).{note}", lambda: draw_thd(dist)))
    return out
