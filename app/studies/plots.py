"""Plots of studies (matplotlib, Agg): histograms with spec limits, the optimisation trade-off,
and the measured and fitted C–V curves with their residuals. Axes carry display units from
:mod:`diagap.names`."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["histogram", "tradeoff", "cv_fit", "response_fit"]


def _axis(key: str):
    from diagap.names import lookup

    n = lookup(key)
    if n is None:
        return key, 1.0
    return (f"{n.label} ({n.unit})" if n.unit else n.label), n.scale


def _figure(*args, **kw):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt, plt.subplots(*args, **kw)


def histogram(key: str, values, limits, path) -> None:
    """Histogram of one output over the samples, the spec limits as dashed lines."""
    plt, (fig, ax) = _figure(figsize=(6, 4))
    label, s = _axis(key)
    y = np.asarray(values, float)
    y = y[np.isfinite(y)]
    ax.hist(y * s, bins=max(5, min(50, int(np.sqrt(max(y.size, 1))))), color="0.6",
            edgecolor="0.2")
    for lim in limits:
        for b in (lim.low, lim.high):
            if math.isfinite(b):
                ax.axvline(b * s, color="k", ls="--", lw=1.2)
    ax.set_xlabel(label)
    ax.set_ylabel("samples")
    ax.set_title(f"{y.size} samples; dashed: spec limits", fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def tradeoff(objective: str, other: str, history, optimum_values: dict, path) -> None:
    """Every evaluated design: objective against ``other`` (a constrained quantity)."""
    plt, (fig, ax) = _figure(figsize=(6, 4))
    lx, sx = _axis(other)
    ly, sy = _axis(objective)
    pts = np.array([(v.get(other, np.nan), v.get(objective, np.nan)) for _, v in history])
    if pts.size:
        ax.plot(pts[:, 0] * sx, pts[:, 1] * sy, "o", ms=3, color="0.55", label="evaluated")
    ax.plot([optimum_values.get(other, np.nan) * sx], [optimum_values.get(objective, np.nan) * sy],
            "k*", ms=14, label="optimum (full FE)")
    ax.set_xlabel(lx)
    ax.set_ylabel(ly)
    ax.legend(fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def cv_fit(biases_v, measured_f, fitted_f, path) -> None:
    """Measured and fitted capacitance against bias, and the residuals."""
    plt, (fig, (ax, ar)) = _figure(2, 1, figsize=(6, 6), sharex=True,
                                   gridspec_kw={"height_ratios": [2, 1]})
    V = np.asarray(biases_v)
    order = np.argsort(V)
    ax.plot(V, np.asarray(measured_f) * 1e12, "o", ms=4, color="0.4", label="measured")
    ax.plot(V[order], np.asarray(fitted_f)[order] * 1e12, "k-", label="fitted FE model")
    ax.set_ylabel("capacitance at the terminals (pF)")
    ax.legend(fontsize=9)
    ar.plot(V, (np.asarray(measured_f) - np.asarray(fitted_f)) * 1e15, "ko", ms=4)
    ar.axhline(0.0, color="0.5", lw=0.8)
    ar.set_xlabel("bias (V)")
    ar.set_ylabel("residual (fF)")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def response_fit(freqs_hz, measured_db, fitted_db, path) -> None:
    """Measured and fitted sensitivity level against frequency (log axis)."""
    plt, (fig, ax) = _figure(figsize=(6, 4))
    f = np.asarray(freqs_hz)
    order = np.argsort(f)
    ax.semilogx(f, measured_db, "o", ms=4, color="0.4", label="measured")
    ax.semilogx(f[order], np.asarray(fitted_db)[order], "k-", label="fitted model")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("sensitivity (dB re 1 V/Pa)")
    ax.legend(fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)
