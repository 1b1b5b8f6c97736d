"""Drift plot: stress, sensitivity, resonance, pull-in and noise versus operating temperature.

Data from the ``temperature_sweep`` section (:mod:`diagap.thermal`). Five stacked panels share the
temperature axis (°C). The stress panel shows the buckling limit −σ_cr as a dashed line; a buckled
temperature is marked on every panel by a grey vertical band and an ``x`` on the stress curve, a
collapsed one (bias at or above pull-in) by a dotted vertical line. Values that were not computed
are gaps in the curves, never interpolated.
"""
from __future__ import annotations

import numpy as np

from diagap.names import lookup
from diagap.report.plots import GREYS, LINES, MARKERS, Plot, new_figure

__all__ = ["temperature_plots", "draw_temperature"]

_PANELS = ("residual_stress_pa", "sensitivity_db_v_per_pa", "resonance_hz", "pull_in_voltage_v",
           "noise_dba_spl")
_SHORT = {"residual_stress_pa": "stress", "sensitivity_db_v_per_pa": "sensitivity",
          "resonance_hz": "resonance", "pull_in_voltage_v": "pull-in", "noise_dba_spl": "noise"}


def _values(points, key: str, scale: float) -> np.ndarray:
    return np.array([np.nan if p.get(key) is None else p[key] * scale for p in points], float)


def draw_temperature(section):
    """Five stacked axes of the drift quantities against temperature (°C)."""
    points = section.to_summary()
    t_c = np.array([p["temperature_k"] - 273.15 for p in points])
    fig, axes = new_figure(7.6, 8.6, margins_in=(1.05, 0.25, 0.6, 0.25), hspace=0.12,
                           nrows=len(_PANELS), sharex=True)
    span = max(float(np.ptp(t_c)), 1.0)
    for ax, key in zip(axes, _PANELS):
        n = lookup(f"temperature_sweep.{key}")
        y = _values(points, key, n.scale)
        ax.plot(t_c, y, color=GREYS[0], ls=LINES[0], marker=MARKERS[0], ms=4)
        for t, p in zip(t_c, points):
            if p["buckled"]:
                ax.axvspan(t - 0.02 * span, t + 0.02 * span, color="0.8", lw=0)
            elif p.get("collapsed"):
                ax.axvline(t, color=GREYS[1], ls=":", lw=1.2)
        ax.set_ylabel(f"{_SHORT[key]}\n({n.unit})")
        ax.grid(True, color="0.85")
    ax0 = axes[0]
    stress_scale = lookup("temperature_sweep.residual_stress_pa").scale
    ax0.axhline(-section.critical_stress_pa * stress_scale, color=GREYS[1], ls=LINES[1],
                label="buckling limit −σ_cr")
    buck = np.array([p["buckled"] for p in points])
    if buck.any():
        s = _values(points, "residual_stress_pa", stress_scale)
        ax0.plot(t_c[buck], s[buck], ls="none", marker="x", ms=9, mew=2, color=GREYS[0],
                 label="buckled")
    ax0.legend(fontsize=9, loc="best")
    axes[-1].set_xlabel("temperature (°C)")
    return fig


def temperature_plots(section) -> list[Plot]:
    """The drift plot when the ``temperature_sweep`` section was computed."""
    if section is None or not getattr(section, "points", ()):
        return []
    n_buckled = sum(p.buckled for p in section.points)
    caption = ("Residual stress from the thermal-expansion mismatch with the substrate, and the "
               "sensitivity at 1 kHz, resonance in air, pull-in voltage and A-weighted noise "
               "floor at each temperature; gaps: not computed")
    if n_buckled:
        caption += f"; grey bands and x: {n_buckled} buckled temperature(s)"
    return [Plot("temperature_drift", "temperature_sweep", "Drift over the operating "
                 "temperatures", caption + ". Design estimate.",
                 lambda: draw_temperature(section))]
