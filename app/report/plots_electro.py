"""Electrostatic plots: the unit-cell field around a hole, C(x), and the bias branch to pull-in.

* Unit cell: potential u (filled map and equipotentials) and field magnitude |E| (log-scaled map)
  of the axisymmetric equal-area cell at the rest gap with 1 V across it
  (:mod:`diagap.report.fields`); the backplate cross-section is hatched.
* C(x): the device capacitance of :class:`diagap.fem.field.device.DeviceCapacitance` against the centre
  displacement x (positive towards the backplate), its tangent C0 + (dC/dx)·x at rest, and the
  relative departure of the tangent from C(x).
* Bias branch: centre deflection against bias voltage along the equilibrium branch of
  :mod:`diagap.fem.coupling.plate`, traced in displacement control through the pull-in fold; beyond
  the fold (dashed) the equilibria are unstable.
"""
from __future__ import annotations

import numpy as np

from diagap.names import display_text, lookup
from diagap.report.plots import GREYS, LINES, SEQUENTIAL_MAP, Plot, new_figure, prefixed

__all__ = ["electro_plots", "draw_cell_field", "draw_capacitance", "draw_bias_branch"]


def _unit(key: str) -> tuple[float, str]:
    """(factor, unit) of ``key`` in the names table, as the results tables show it."""
    n = lookup(key)
    return n.scale, n.unit


def _backplate_patch(ax, cell, f):
    from matplotlib.patches import Rectangle

    ax.add_patch(Rectangle((cell.hole_radius_m * f, cell.gap_m * f),
                           (cell.cell_radius_m - cell.hole_radius_m) * f,
                           cell.backplate_thickness_m * f, facecolor="0.8", edgecolor="black",
                           hatch="///", lw=0.8))
    ax.text(0.5 * (cell.hole_radius_m + cell.cell_radius_m) * f,
            (cell.gap_m + 0.5 * cell.backplate_thickness_m) * f, "backplate (1 V)",
            ha="center", va="center", fontsize=9, bbox={"fc": "white", "ec": "none", "pad": 1})


def _field_ticks(lo: float, hi: float) -> list[float]:
    """1, 2, 5 × 10^k ticks inside [lo, hi] (at most ~7)."""
    out = []
    for k in range(int(np.floor(np.log10(lo))), int(np.ceil(np.log10(hi))) + 1):
        out += [m * 10.0**k for m in (1, 2, 5) if lo <= m * 10.0**k <= hi]
    return out[::max(1, len(out) // 7)]


def draw_cell_field(cell):
    """Potential and |E| maps of the unit cell (r-z plane), gap and hole region."""
    from matplotlib.colors import LogNorm
    from matplotlib.ticker import FuncFormatter
    from matplotlib.tri import Triangulation

    f, ul = prefixed(cell.cell_radius_m, "m")
    p = cell.points_m * f
    tri = Triangulation(p[:, 0], p[:, 1], cell.triangles)
    z_top = min(float(p[:, 1].max()),
                (cell.gap_m + cell.backplate_thickness_m + max(cell.gap_m, cell.hole_radius_m)) * f)
    fig, (a1, a2) = new_figure(7.6, 4.9, ncols=2, sharey=True, margins_in=(0.7, 0.2, 0.3, 0.35),
                               wspace=0.08)
    filled = a1.tricontourf(tri, cell.potential_v, levels=np.linspace(0, 1, 21),
                            cmap=SEQUENTIAL_MAP)
    lines = a1.tricontour(tri, cell.potential_v, levels=np.linspace(0.1, 0.9, 9), colors="black",
                          linewidths=0.7)
    a1.clabel(lines, levels=lines.levels[::2], fmt="%.1f", fontsize=9)
    fig.colorbar(filled, ax=a1, location="bottom", label="potential u (V) at 1 V",
                 ticks=np.linspace(0, 1, 6), shrink=0.9, pad=0.12)
    e = cell.field_v_per_m
    uniform = 1.0 / cell.gap_m
    lo, hi = 1e-2 * uniform, float(np.max(e))
    mapped = a2.tricontourf(tri, np.clip(e, lo, hi), levels=np.geomspace(lo, hi, 22),
                            cmap=SEQUENTIAL_MAP, norm=LogNorm(lo, hi))
    a2.tricontour(tri, e, levels=[0.5 * uniform, 1.5 * uniform, 3 * uniform], colors="black",
                  linewidths=0.8, linestyles=[":", "--", "-"])
    cb = fig.colorbar(mapped, ax=a2, location="bottom", label="|E| (V/m) at 1 V", shrink=0.9,
                      pad=0.12, ticks=_field_ticks(lo, hi))
    cb.ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:.0e}".replace("e+0", "e")))
    cb.ax.minorticks_off()
    for ax, title in ((a1, "potential u, equipotentials every 0.1 V"),
                      (a2, "|E|; lines at 0.5 (dotted), 1.5 (dashed), 3 × V/g")):
        _backplate_patch(ax, cell, f)
        ax.axhline(0.0, color="black", lw=2.5)
        ax.set_xlim(0.0, cell.cell_radius_m * f)
        ax.set_ylim(-0.02 * z_top, z_top)
        ax.set_aspect("equal")
        ax.set_xlabel(f"r from the hole axis ({ul})")
        ax.set_title(title, fontsize=9)
    a1.set_ylabel(f"z above the diaphragm ({ul})")
    return fig


def draw_capacitance(device, bias_deflection_m: float | None = None):
    """C(x), its tangent at rest, and the tangent's relative error."""
    g = device.rest_gap_m
    x = np.linspace(-0.4 * g, 0.7 * g, 221)
    c = np.asarray(device(x), float)
    c0, slope = device.rest_capacitance_f, device.capacitance_slope_f_per_m
    lin = c0 + slope * x
    # the tables' units (diagap.names): gap in µm, capacitance in pF, dC/dx in pF/µm
    fx, xl = _unit("electrostatics.rest_gap_m")
    fc, cl = _unit("electrostatics.rest_capacitance_f")
    fig, (a1, a2) = new_figure(7.6, 5.0, nrows=2, sharex=True, height_ratios=[2.2, 1],
                               margins_in=(0.9, 0.25, 0.6, 0.2), hspace=0.08)
    a1.plot(x * fx, c * fc, color="black", lw=1.8, label="C(x), FE (cell table + rim)")
    a1.plot(device.x_m * fx, device.capacitance_f * fc, ls="none", marker="o", ms=3.5,
            mfc="white", color="black", label="C(x) samples in summary.json")
    a1.plot(x * fx, lin * fc, color="0.4", ls="--", lw=1.4,
            label=f"linear: C0 + (dC/dx)·x, dC/dx = {slope * fc / fx:.4g} {cl}/{xl}")
    a2.plot(x * fx, 100.0 * (lin - c) / c, color="black", lw=1.4)
    for ax in (a1, a2):
        ax.axvline(0.0, color="0.6", lw=0.8)
        if bias_deflection_m is not None:
            ax.axvline(bias_deflection_m * fx, color="0.3", ls=":", lw=1.2)
        ax.grid(True, color="0.85")
    if bias_deflection_m is not None:
        a1.plot([], [], color="0.3", ls=":",
                label="bias point x = "
                f"{display_text('coupled.bias_center_deflection_m', bias_deflection_m)}")
    a1.set_ylabel(f"capacitance ({cl})")
    a1.legend(fontsize=9, loc="upper left")
    a2.set_ylabel("(linear − C)/C (%)")
    a2.set_xlabel(f"centre displacement x towards the backplate ({xl}); gap {g * fx:.3g} {xl}")
    return fig


def draw_bias_branch(coupled_data: dict, gap_m: float, bias_voltage_v: float | None):
    """Centre deflection against voltage along the equilibrium branch."""
    br = np.asarray(coupled_data["branch"], float)
    w, v = br[:, 0], br[:, 1]
    w_pi, v_pi = coupled_data["pull_in_center_deflection_m"], coupled_data["pull_in_voltage_v"]
    fw, wl = _unit("coupled.pull_in_center_deflection_m")  # the tables' unit
    stable = w <= w_pi * (1 + 1e-9)
    fig, ax = new_figure(7.6, 4.6, margins_in=(0.8, 0.8, 1.15, 0.2))
    ax.plot(v[stable] * 1.0, w[stable] * fw, color="black", ls=LINES[0], marker="o", ms=4,
            label="stable equilibria (FE)")
    if np.any(~stable):
        ws = np.concatenate([[w_pi], w[~stable]])
        vs = np.concatenate([[v_pi], v[~stable]])
        ax.plot(vs, ws * fw, color=GREYS[1], ls=LINES[1], marker="x", ms=5,
                label="unstable equilibria (beyond the fold)")
    ax.plot([v_pi], [w_pi * fw], ls="none", marker="D", ms=8, color="black",
            label=f"pull-in: {v_pi:.4g} V at {w_pi * fw:.4g} {wl}")
    w_b = coupled_data.get("bias_center_deflection_m")
    if bias_voltage_v is not None:  # None: a design without [electrical]
        ax.axvline(bias_voltage_v, color="0.3", ls=":", lw=1.3)
        if w_b is not None and not coupled_data.get("collapsed"):
            ax.plot([bias_voltage_v], [w_b * fw], ls="none", marker="s", ms=8, mfc="white",
                    color="black", label=f"bias: {bias_voltage_v:.4g} V, {w_b * fw:.4g} {wl}")
        else:
            ax.plot([], [], color="0.3", ls=":",
                    label=f"bias {bias_voltage_v:.4g} V ≥ pull-in: the diaphragm collapses")
    ax.set_xlim(0.0, 1.08 * max(v_pi, bias_voltage_v or 0.0))
    ax.set_ylim(0.0, 1.1 * float(np.max(w)) * fw)
    ax.set_xlabel("bias voltage (V)")
    ax.set_ylabel(f"centre deflection ({wl})")
    right = ax.secondary_yaxis("right", functions=(lambda y: y / (gap_m * fw),
                                                   lambda r: r * gap_m * fw))
    right.set_ylabel("centre deflection / gap")
    ax.grid(True, color="0.85")
    ax.legend(fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.14), ncols=2)
    return fig


def electro_plots(design, es, cp, cell) -> list[Plot]:
    """The electrostatic plots that the computed sections allow."""
    out: list[Plot] = []
    if cell is not None:
        f, ul = prefixed(cell.cell_radius_m, "m")
        out.append(Plot(
            "cell_field", "electrostatics", "Unit cell: potential and field around a hole",
            f"Axisymmetric equal-area cell of the {cell.lattice} lattice at the rest gap "
            f"({cell.gap_m * f:.3g} {ul}), diaphragm at 0 V (thick line at z = 0), backplate at "
            f"1 V; hole radius {cell.hole_radius_m * f:.3g} {ul}. Both maps scale linearly with "
            f"the voltage. Cell capacitance / solid plate = {cell.perforation_factor:.4f} "
            f"(±{100 * cell.rel_error:.2g} %). The field peaks at the hole rim.",
            lambda: draw_cell_field(cell)))
    if es is not None and "device" in es.objects:
        dev = es.objects["device"]
        x_b = cp.data.get("bias_center_deflection_m") if cp is not None else None
        out.append(Plot(
            "capacitance", "electrostatics", "Capacitance against centre displacement",
            "Device capacitance C(x) with the diaphragm in its static deflection shape, and the "
            "linear (tangent) model used by the simple small-signal theory; the lower panel shows "
            "how far the linear model departs from C(x).",
            lambda: draw_capacitance(dev, bias_deflection_m=x_b)))
    if cp is not None and cp.data.get("branch"):
        out.append(Plot(
            "bias_branch", "coupled", "Bias branch and pull-in",
            "Equilibrium centre deflection of the FE diaphragm under the electrostatic pressure "
            "of the bias voltage (no sound pressure). The voltage peaks at pull-in; beyond it "
            "the equilibria are unstable.",
            lambda: draw_bias_branch(cp.data, design.backplate.gap_m,
                                     cp.data.get("bias_voltage_v")  # supply + electret
                                     if design.electrical is not None else None)))
    return out
