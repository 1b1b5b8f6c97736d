"""Noise by source plot: each source's A-weighted input-referred noise density against frequency.

For each source k the curve is √S_p,k(f)·|A(f)| (Pa/√Hz): its output-node PSD referred to the
acoustic input through |H(f)|² and weighted by the A curve of IEC 61672-1 (:mod:`diagap.lumped.
breakdown`). The curves are A-weighted so that the area under the square of each (on a linear
frequency axis) is that source's share of the A-weighted noise floor: where a curve is highest,
that source sets the floor. Drawn over the band of the integral, 20 Hz – 20 kHz, with each
source's level in the legend. Made for a packaged design (the capsule-only noise plot already
shows the capsule's own sources, unweighted).
"""
from __future__ import annotations

import numpy as np

from diagap.lumped.weighting import AUDIO_BAND_HZ, a_weighting_gain
from diagap.report.breakdown_table import source_label
from diagap.report.plots import GREYS, LINES, MARKERS, Plot, new_figure

__all__ = ["breakdown_plots", "draw_breakdown"]


def draw_breakdown(breakdown):
    """A-weighted input-referred density of every source and of the total, 20 Hz – 20 kHz."""
    f = np.asarray(breakdown.frequency_hz, float)
    band = (f >= AUDIO_BAND_HZ[0]) & (f <= AUDIO_BAND_HZ[1])
    fb = f[band]
    a = a_weighting_gain(fb)
    fig, ax = new_figure(7.6, 5.0, margins_in=(0.9, 0.25, 1.25, 0.2))
    total = np.sqrt(breakdown.total_input_psd[band]) * a
    ax.loglog(fb, total, color="black", lw=2.2,
              label=f"total: {breakdown.total_dba:.1f} dB(A) SPL")
    levels = breakdown.levels_dba
    order = sorted((k for k, v in levels.items() if v is not None), key=lambda k: -levels[k])
    for i, name in enumerate(order, start=1):
        dens = np.sqrt(breakdown.input_psd_pa2_per_hz[name][band]) * a
        ax.loglog(fb, dens, color=GREYS[i % len(GREYS)], ls=LINES[i % len(LINES)],
                  marker=MARKERS[i % len(MARKERS)], markevery=12, ms=4,
                  label=f"{source_label(name)}: {levels[name]:.1f} dB(A)")
    top = float(np.max(total))
    ax.set_ylim(top * 1e-3, top * 2.0)
    ax.set_xlim(fb[0], fb[-1])
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("A-weighted input-referred noise (Pa/√Hz)")
    ax.grid(True, which="major", color="0.85")
    ax.legend(fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncols=2)
    return fig


def breakdown_plots(resp) -> list[Plot]:
    """The noise-by-source plot of a packaged design's response section (else none)."""
    if resp is None or resp.data.get("scope") != "packaged" or \
            "noise_breakdown" not in resp.objects:
        return []
    bd = resp.objects["noise_breakdown"]
    loudest = max((k for k, v in bd.levels_dba.items() if v is not None),
                  key=lambda k: bd.levels_dba[k])
    return [Plot(
        "noise_breakdown", "response", "Noise by source (A-weighted)",
        f"A-weighted input-referred noise density of each source, √S_p(f)·|A(f)| (IEC 61672-1 "
        f"A weighting), over 20 Hz – 20 kHz; each source's output-node noise divided by the "
        f"response |V_out/p|². Total {bd.total_dba:.1f} dB(A) SPL, SNR re 94 dB SPL "
        f"{bd.snr_db:.1f} dB(A); the largest source is the {source_label(loudest)}.",
        lambda: draw_breakdown(bd))]
