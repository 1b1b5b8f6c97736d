"""High-pressure plot: centre deflection and capacitance versus static pressure, up to contact.

Data from the ``large_deflection`` section (:mod:`diagap.overload`): the von Kármán curve without
bias and with the bias, the linear prediction (compliance at the p = 0 equilibrium) for
comparison, the clearance (gap or stopper) and the contact pressures; below, the capacitance of
the deflected shape at bias with its linear prediction C0 + (dC/dp)·p.
"""
from __future__ import annotations

import numpy as np

from diagap.report.plots import GREYS, LINES, MARKERS, Plot, new_figure, prefixed

__all__ = ["overload_plots", "draw_overload"]


def draw_overload(section):
    """Two stacked axes: centre deflection (top) and capacitance at bias (bottom) vs pressure."""
    d = section.data
    plain = section.objects["plain"]
    p0 = np.asarray(plain.curve_pressures_pa)
    w0 = np.asarray(plain.curve_deflections_m)
    biased = np.asarray(d.get("curve_at_bias") or np.zeros((0, 3)))
    fig, axes = new_figure(7.6, 6.0, margins_in=(0.95, 0.25, 0.6, 0.25), hspace=0.12,
                           nrows=2 if biased.size else 1, sharex=True)
    ax = axes[0] if biased.size else axes
    fw, wl = prefixed(max(np.max(np.abs(w0)), d["clearance_m"]), "m")
    ax.plot(p0, w0 * fw, color=GREYS[0], ls=LINES[0], marker=MARKERS[0], ms=3,
            label="von Kármán, no bias")
    req = [(p, w) for p, w in zip(d["pressures_pa"], d["center_deflection_m"]) if w is not None]
    if req:
        pr, wr = np.array(req).T
        ax.plot(pr, wr * fw, ls="none", marker=MARKERS[3], ms=5, mfc="none", color=GREYS[0],
                label="requested pressures, no bias")
    span = np.concatenate([p0, biased[:, 0] if biased.size else [], [0.0]])
    pl = np.linspace(span.min(), span.max(), 2)
    ax.plot(pl, pl * plain.compliance_m_per_pa * fw, color=GREYS[1], ls=LINES[1],
            label="linear, no bias")
    if biased.size:
        ax.plot(biased[:, 0], biased[:, 1] * fw, color=GREYS[3], ls=LINES[2], marker=MARKERS[1],
                ms=3, label="von Kármán, at bias")
    ax.axhline(d["clearance_m"] * fw, color=GREYS[2], ls=LINES[3], lw=1,
               label="clearance (stopper)" if d.get("stopper_height_m") else "clearance (gap)")
    for key, mk in (("contact_pressure_pa", "o"), ("contact_pressure_at_bias_pa", "s")):
        if d.get(key):
            ax.axvline(d[key], color=GREYS[2], ls=":", lw=0.8)
    ax.set_ylabel(f"centre deflection ({wl})")
    ax.set_ylim(-1.15 * d["clearance_m"] * fw, 1.15 * d["clearance_m"] * fw)
    ax.legend(fontsize=9, loc="upper left")
    ax.grid(True, color="0.85")
    if biased.size:
        ax2 = axes[1]
        fc, cl = prefixed(np.max(biased[:, 2]), "F")
        ax2.plot(biased[:, 0], biased[:, 2] * fc, color=GREYS[0], ls=LINES[0],
                 marker=MARKERS[1], ms=3, label="deflected shape, at bias")
        k0 = int(np.argmin(np.abs(biased[:, 0])))
        slope = np.gradient(biased[:, 2], biased[:, 0])[k0]
        ax2.plot(biased[:, 0], (biased[k0, 2] + slope * (biased[:, 0] - biased[k0, 0])) * fc,
                 color=GREYS[1], ls=LINES[1], label="linear C0 + (dC/dp) p")
        ax2.set_ylabel(f"capacitance ({cl})")
        ax2.legend(fontsize=9, loc="upper left")
        ax2.grid(True, color="0.85")
        ax2.set_xlabel("static pressure (Pa), + toward the backplate")
    else:
        ax.set_xlabel("static pressure (Pa), + toward the backplate")
    return fig


def overload_plots(section) -> list[Plot]:
    """The overload plot when the ``large_deflection`` section was computed."""
    if section is None or "plain" not in getattr(section, "objects", {}):
        return []
    d = section.data
    contact = d.get("contact_pressure_at_bias_pa") or d.get("contact_pressure_pa")
    caption = ("Centre deflection and capacitance versus static pressure (von Kármán plate, "
               "anchored edge) with the linear prediction; vertical lines: contact pressures")
    if contact:
        caption += f" (first contact at {contact:.4g} Pa)"
    return [Plot("large_deflection", "large_deflection", "Deflection and capacitance at high "
                 "pressure", caption + ". Design estimate.", lambda: draw_overload(section))]
