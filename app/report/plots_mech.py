"""Diaphragm plots: static deflection profile, mode-shape profiles and mode-shape maps.

Profiles are sampled from the FE solution (:meth:`diagap.fem.plate.solver.PlateResult.static_deflection_m_per_pa`
and :meth:`~diagap.fem.plate.solver.PlateResult.mode_shape`) along a line through the centre; maps are filled
contours of the same FE shapes sampled on a fine grid over the diaphragm. Degenerate mode pairs (equal frequencies, e.g. the two (1,0)
modes of a disk) are shown once: their orientation is arbitrary, so a mode's profile is taken
along the diameter through its largest |φ|.
"""
from __future__ import annotations

import math

import numpy as np

from diagap.names import display_text, lookup
from diagap.report.plots import GREYS, LINES, MARKERS, SEQUENTIAL_MAP, Plot, new_figure, prefixed

__all__ = ["mech_plots", "distinct_modes", "draw_deflection", "draw_mode_profiles",
           "draw_mode_maps", "N_MODES_SHOWN"]

N_MODES_SHOWN = 4
_N_SAMPLES = 201


def distinct_modes(mech, n: int = N_MODES_SHOWN) -> list[tuple[int, float]]:
    """(1-based mode index, frequency in Hz) of the first ``n`` distinct natural frequencies."""
    out: list[tuple[int, float]] = []
    for i, f in enumerate(mech.natural_frequencies_hz, start=1):
        if not out or f > out[-1][1] * (1 + 1e-4):
            out.append((i, float(f)))
    return out[:n]


def _degenerate(mech, i: int) -> bool:
    """Whether FE mode ``i`` (1-based) has a partner of (nearly) the same frequency."""
    f = mech.natural_frequencies_hz
    return any(abs(f[j] - f[i - 1]) <= 1e-4 * f[i - 1] for j in range(len(f)) if j != i - 1)


def mode_title(mech, k: int, i: int, f_hz: float) -> str:
    """Title of the k-th distinct mode (1-based, numbered consecutively like the table's list of
    distinct frequencies), FE mode ``i``: ``"mode 2 (pair): 89.87 kHz"``."""
    pair = " (pair)" if _degenerate(mech, i) else ""
    return f"mode {k}{pair}: {f_hz * 1e-3:.4g} kHz"


def _axisymmetric(mech, i: int) -> bool:
    """A non-degenerate mode of a circular diaphragm is axisymmetric (no orientation)."""
    return mech.problem.shape == "circle" and not _degenerate(mech, i)


def _half_extent_m(mech) -> float:
    """Largest distance from the centre to the edge (radius, or half the diagonal)."""
    p = mech.problem
    return p.size_m if p.shape == "circle" else 0.5 * math.sqrt(2.0) * p.size_m


def _profile(mech, values, angle: float):
    """(s_m, values along the line at ``angle`` through the centre; NaN off the diaphragm)."""
    s = np.linspace(-1.0, 1.0, _N_SAMPLES) * _half_extent_m(mech)
    x, y = s * math.cos(angle), s * math.sin(angle)
    v = np.asarray(values(x, y), float)
    return s, np.where(mech.problem.inside(x, y), v, np.nan)


def _max_angle(mech, i: int) -> float:
    """Direction (rad) of the vertex with the largest |φ_i| (0 for the centre)."""
    points, _, data = mech.nodal_fields()
    k = int(np.argmax(np.abs(data[f"mode_{i}"])))
    x, y = points[k]
    return math.atan2(y, x) if math.hypot(x, y) > 1e-9 * mech.problem.size_m else 0.0


def draw_deflection(mech):
    """Static deflection per pascal along the x-axis."""
    s, w = _profile(mech, mech.static_deflection_m_per_pa, 0.0)
    fx, xl = prefixed(np.nanmax(np.abs(s)), "m")
    n = lookup("mechanics.center_compliance_m_per_pa")  # the tables' unit
    fw, wl = n.scale, n.unit.removesuffix("/Pa")
    fig, ax = new_figure(7.6, 3.6, margins_in=(0.9, 0.25, 0.6, 0.2))
    ax.plot(s * fx, w * fw, color="black", lw=1.8, label="FE, uniform pressure 1 Pa")
    ax.plot([0.0], [mech.center_compliance_m_per_pa * fw], ls="none", marker="o", mfc="white",
            color="black", label=f"centre: {mech.center_compliance_m_per_pa * fw:.4g} {wl}/Pa")
    ax.set_xlabel(f"x, along the x-axis through the centre ({xl})")
    ax.set_ylabel(f"deflection per pascal ({wl}/Pa)")
    ax.axhline(0.0, color="0.6", lw=0.8)
    ax.grid(True, color="0.85")
    ax.legend(loc="lower center")
    return fig


def draw_mode_profiles(mech):
    """Profiles of the first distinct modes along the line through the centre and each maximum."""
    fig, ax = new_figure(7.6, 4.6, margins_in=(0.8, 0.25, 1.15, 0.2))
    ext = _half_extent_m(mech)
    fx, xl = prefixed(ext, "m")
    for k, (i, f) in enumerate(distinct_modes(mech)):
        angle = 0.0 if _axisymmetric(mech, i) else _max_angle(mech, i)
        s, v = _profile(mech, lambda x, y, i=i: mech.mode_shape(i, x, y), angle)
        # an orientation means something only for a square; a circle's modes are axisymmetric
        # or come in pairs of arbitrary orientation
        where = "" if mech.problem.shape == "circle" else f" (at {math.degrees(angle):.0f}°)"
        ax.plot(s * fx, v, color=GREYS[k], ls=LINES[k], marker=MARKERS[k], markevery=20, ms=5,
                label=mode_title(mech, k + 1, i, f) + where)
    ax.axhline(0.0, color="0.6", lw=0.8)
    ax.set_xlabel(f"position along a line through the centre ({xl})")
    ax.set_ylabel("mode shape φ")
    ax.grid(True, color="0.85")
    ax.legend(fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.16), ncols=2)
    return fig


def _map_points(mech, n: int = 81):
    """(x_m, y_m) of a regular grid over the diaphragm plus points on its edge."""
    p = mech.problem
    half = p.size_m if p.shape == "circle" else 0.5 * p.size_m
    g = np.linspace(-half, half, n)
    x, y = (a.ravel() for a in np.meshgrid(g, g))
    if p.shape != "circle":
        return x, y
    keep = np.hypot(x, y) < half * (1 - 0.5 / n)
    th = np.linspace(0.0, 2 * np.pi, 4 * n, endpoint=False)
    return (np.concatenate([x[keep], half * np.cos(th)]),
            np.concatenate([y[keep], half * np.sin(th)]))


def draw_mode_maps(mech):
    """Filled contour maps of the first distinct modes (one shared scale).

    The FE mode shapes are sampled on a fine grid (the plate elements are quintic, so their
    vertex values alone would draw coarse, faceted contours).
    """
    from matplotlib.tri import Triangulation

    modes = distinct_modes(mech)
    ncols = 2 if len(modes) > 1 else 1
    nrows = math.ceil(len(modes) / ncols)
    fig, axes = new_figure(7.6, 3.2 * nrows + 0.3, nrows=nrows, ncols=ncols, squeeze=False,
                           margins_in=(0.8, 1.3, 0.5, 0.35), wspace=0.35, hspace=0.35)
    fx, xl = prefixed(_half_extent_m(mech), "m")
    x, y = _map_points(mech)
    tri = Triangulation(x * fx, y * fx)
    values = {i: mech.mode_shape(i, x, y) for i, _ in modes}
    vmax = max([1.0] + [float(np.max(np.abs(v))) for v in values.values()])
    levels = np.linspace(-vmax, vmax, 17)
    filled = None
    for k, (ax, (i, f)) in enumerate(zip(axes.flat, modes), start=1):
        filled = ax.tricontourf(tri, values[i], levels=levels, cmap=SEQUENTIAL_MAP)
        ax.tricontour(tri, values[i], levels=levels[2:-2:2], colors="black", linewidths=0.6)
        ax.set_title(mode_title(mech, k, i, f), fontsize=10)
        ax.set_aspect("equal")
        ax.set_xlabel(f"x ({xl})")
        ax.set_ylabel(f"y ({xl})")
    for ax in list(axes.flat)[len(modes):]:
        ax.set_visible(False)
    cax = fig.add_axes((1 - 1.0 / 7.6, 0.15, 0.2 / 7.6, 0.7))
    ticks = np.linspace(-1, 1, 9) * (1.0 if vmax < 1.2 else vmax)
    fig.colorbar(filled, cax=cax, label="mode shape φ", ticks=ticks)
    return fig


def mech_plots(mech) -> list[Plot]:
    """The diaphragm plots of a :class:`diagap.fem.plate.solver.PlateResult`."""
    compliance = display_text("mechanics.center_compliance_m_per_pa",
                              mech.center_compliance_m_per_pa, 5)
    modes = distinct_modes(mech)
    return [
        Plot("deflection", "mechanics", "Static deflection",
             f"Deflection under a uniform pressure of 1 Pa along the x-axis (vacuum, no bias); "
             f"centre compliance {compliance}, {mech.model} model.",
             lambda: draw_deflection(mech)),
        Plot("mode_profiles", "mechanics", "Mode shapes: profiles",
             f"First {len(modes)} distinct natural modes in vacuum (no bias), numbered as the "
             "distinct natural frequencies of the results table; a pair of modes with equal "
             "frequency (\"pair\") is shown once, along the line through its largest deflection "
             "(its orientation is arbitrary). Mode 1 is normalised to φ(centre) = 1, the others "
             "to max |φ| = 1.",
             lambda: draw_mode_profiles(mech)),
        Plot("mode_maps", "mechanics", "Mode shapes: maps",
             "The same modes over the diaphragm (FE shapes sampled on a fine grid); black contour "
             "lines at multiples of 1/4 of the largest |φ|, including the nodal line φ = 0; "
             "negative levels dashed.",
             lambda: draw_mode_maps(mech)),
    ]
