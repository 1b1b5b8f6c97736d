"""Drift plot: stress, sensitivity, resonance, pull-in and noise versus operating temperature.

Data from the ``temperature_sweep`` section (:mod:`diagap.thermal`). Up to five stacked panels
share the temperature axis (°C), one per quantity computed at some temperature (the caption names
the others); the resonance panel adds the natural frequency in vacuum. The stress panel shows the buckling limit −σ_cr as a dashed line; a buckled
temperature is marked on every panel by a grey vertical band and an ``x`` on the stress curve, a
collapsed one (bias at or above pull-in) by a dotted vertical line. Values that were not computed
are gaps in the curves, never interpolated.
"""
from __future__ import annotations

import numpy as np

from diagap.names import lookup
from diagap.report.plots import GREYS, LINES, MARKERS, Plot, new_figure

__all__ = ["temperature_plots", "draw_temperature", "panels"]

_PANELS = ("residual_stress_pa", "sensitivity_db_v_per_pa", "resonance_hz", "pull_in_voltage_v",
           "noise_dba_spl")
_SHORT = {"residual_stress_pa": "stress", "sensitivity_db_v_per_pa": "sensitivity",
          "resonance_hz": "resonance", "pull_in_voltage_v": "pull-in", "noise_dba_spl": "noise"}


def _values(points, key: str, scale: float) -> np.ndarray:
    return np.array([np.nan if p.get(key) is None else p[key] * scale for p in points], float)


def _has(points, key: str) -> bool:
    return any(p.get(key) is not None for p in points)


def panels(points) -> list[str]:
    """The quantities with at least one computed value (the stress always; the resonance panel
    also when only the natural frequency in vacuum is known)."""
    return [k for k in _PANELS if k == "residual_stress_pa" or _has(points, k)
            or (k == "resonance_hz" and _has(points, "natural_frequency_hz"))]


def draw_temperature(section):
    """Stacked axes of the drift quantities against temperature (°C), one per computed
    quantity."""
    points = section.to_summary()
    t_c = np.array([p["temperature_k"] - 273.15 for p in points])
    keys = panels(points)
    fig, axes = new_figure(7.6, 1.0 + 1.55 * len(keys), margins_in=(1.05, 0.25, 0.6, 0.25),
                           hspace=0.12, nrows=len(keys), sharex=True, squeeze=False)
    axes = axes[:, 0]
    span = max(float(np.ptp(t_c)), 1.0)
    for ax, key in zip(axes, keys):
        n = lookup(f"temperature_sweep.{key}")
        y = _values(points, key, n.scale)
        ax.plot(t_c, y, color=GREYS[0], ls=LINES[0], marker=MARKERS[0], ms=4,
                label=n.label if key == "resonance_hz" else None)
        if key == "resonance_hz" and _has(points, "natural_frequency_hz"):
            ax.plot(t_c, _values(points, "natural_frequency_hz", n.scale), color=GREYS[1],
                    ls=LINES[1], marker=MARKERS[1], ms=4, mfc="none",
                    label=lookup("temperature_sweep.natural_frequency_hz").label)
            ax.legend(fontsize=9, loc="best")
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
    missing = [_SHORT[k] for k in _PANELS if k not in panels(section.to_summary())]
    caption = ("Residual stress from the thermal-expansion mismatch with the substrate, and the "
               "sensitivity at 1 kHz, resonance in air, pull-in voltage and A-weighted noise "
               "floor at each temperature; gaps: not computed")
    if missing:
        caption += f"; not computed at any temperature: {', '.join(missing)}"
    if n_buckled:
        caption += f"; grey bands and x: {n_buckled} buckled temperature(s)"
    return [Plot("temperature_drift", "temperature_sweep", "Drift over the operating "
                 "temperatures", caption + ". Design estimate.",
                 lambda: draw_temperature(section))]
