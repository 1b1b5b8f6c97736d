"""Summary plots of a sweep: each output of interest against each varied input it depends on.

One PNG per informative (output, input) pair, ``OUT/plots/<output key>--<input path>.png``: an
output is plotted against an input only if it changes along that input (relative spread above
:data:`MIN_SPREAD` among points that differ in that input alone); diagnostics (error estimates,
mesh sizes) are never plotted, and a sweep with fewer than two finished points writes no plots
(:func:`no_plots_reason` says why). Drawn with
matplotlib's Agg canvas (no display, no global backend change). Black lines with distinct
markers and dash patterns keep the plots readable in greyscale. When other inputs are varied
too, each combination of their values is one line (up to six; beyond that all points are shown
as grey dots). Error bars are the estimated discretisation error (relative uncertainty x value);
collapsed points (bias at or above pull-in) are drawn with open markers; failed points are left out.

Labels and display units come from the names table (:mod:`diagap.names`), the same as in the
console table and report.html; a key missing there falls back to a label built from the key
(which carries its SI unit the way summary.json keys do). Figures are 150 dpi with text of 9 pt
or more.
"""
from __future__ import annotations

import math
import os
import re
import tempfile
from pathlib import Path
from typing import Sequence

from diagap.names import KEY_OUTPUTS, input_name, lookup
from diagap.sweep.spec import Variation

__all__ = ["write_plots", "outputs_of_interest", "key_label", "KEYWORDS", "no_plots_reason",
           "varies_along", "MIN_SPREAD", "DPI"]

#: smallest relative change of an output along an input that is worth a plot
MIN_SPREAD = 1e-6
DPI = 150

# Outputs worth a plot, matched as substrings of the key's last part, in this order.
KEYWORDS = ("sensitivity", "snr", "noise", "pull_in", "resonance", "natural_frequencies_hz_1",
            "quality_factor", "corner", "capacitance", "damping", "compliance")
# diagnostics that are not design outputs
_NOT_PLOTTED = ("error", "uncertainty", "mesh_dofs", "fit_", "timings")
_SPECIAL = (("db_v_per_pa", "dB re 1 V/Pa"), ("dba_spl", "dB(A) SPL"), ("db_spl", "dB SPL"),
            ("dba", "dB(A)"), ("db", "dB"))
_SYMBOL = {"m": "m", "m2": "m²", "m3": "m³", "pa": "Pa", "hz": "Hz", "f": "F", "v": "V",
           "kg": "kg", "n": "N", "s": "s", "ohm": "Ω", "k": "K", "j": "J", "w": "W", "a": "A"}
_PREFIXABLE = {"m", "Hz", "F", "V", "Pa", "N", "s", "Ω", "J", "W", "A"}
_PREFIX = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
_MARKERS = ("o", "s", "^", "D", "v", "x")
_LINES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1)), (0, (1, 3)))


def _unit_of_tokens(tokens: list[str]) -> str:
    """Consume unit tokens from the end of ``tokens`` (a key split at '_'); return the unit."""
    units: list[str] = []
    while len(tokens) > 1 and (tokens[-1] in _SYMBOL or (tokens[-1] == "per" and units)):
        units.insert(0, tokens.pop())
    text = ""
    for i, tok in enumerate(units):
        if tok == "per":
            text += "/"
        else:
            text += ("·" if i and units[i - 1] != "per" else "") + _SYMBOL[tok]
    return text


def key_label(key: str) -> tuple[str, str]:
    """(quantity name, unit) of an output key.

    ``"response.snr_db"`` → ``("response: snr", "dB")``.
    """
    section, _, last = key.rpartition(".")
    m = re.fullmatch(r"(.*?)(?:_(\d+))?", last)
    base, index = m.group(1), m.group(2)
    unit = ""
    for suffix, label in _SPECIAL:
        if base.endswith("_" + suffix):
            base, unit = base[: -len(suffix) - 1], label
            break
    tokens = base.split("_")
    if not unit:
        unit = _unit_of_tokens(tokens)
    name = " ".join(tokens) + (f" ({index})" if index else "")
    return (f"{section}: {name}" if section else name), unit


def _pretty(unit: str | None) -> str:
    if not unit:
        return ""
    return unit.replace("^3", "³").replace("^2", "²").replace("*", "·").replace("ohm", "Ω")


def _scale(values: Sequence[float], unit: str) -> tuple[float, str]:
    """(factor, unit label) putting the largest |value| in [1, 1000) for simple units."""
    finite = [abs(v) for v in values if v is not None and math.isfinite(v) and v != 0]
    num, sep, rest = unit.partition("/")  # m/Pa → nm/Pa: the prefix goes on the numerator
    if num not in _PREFIXABLE or not finite:
        return 1.0, unit
    e = int(math.floor(math.log10(max(finite)) / 3) * 3)
    e = min(max(e, -15), 12)
    return 10.0 ** -e, _PREFIX[e] + num + sep + rest


def _axis_label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit else name


def _plottable(records, key) -> bool:
    vals = [r["outputs"].get(key) for r in records if key in r.get("outputs", {})]
    nums = [v for v in vals if v is not None]
    return bool(nums) and not any(isinstance(v, bool) or not isinstance(v, (int, float))
                                  for v in nums)


def outputs_of_interest(records: Sequence[dict]) -> list[str]:
    """The output keys to plot: the key results of :data:`diagap.names.KEY_OUTPUTS`, then
    numeric keys outside the names table matching :data:`KEYWORDS` (outputs of a custom
    evaluate function), in that order."""
    keys: dict[str, None] = {}
    for r in records:
        keys.update(dict.fromkeys(r.get("outputs", {})))
    chosen = [k for k in KEY_OUTPUTS if k in keys and _plottable(records, k)]
    for word in KEYWORDS:
        chosen += [k for k in keys if word in k.rsplit(".", 1)[-1] and k not in chosen
                   and not any(w in k for w in _NOT_PLOTTED) and lookup(k) is None
                   and _plottable(records, k)]
    return chosen


def varies_along(records: Sequence[dict], key: str, var: Variation,
                 others: Sequence[Variation]) -> bool:
    """Whether ``key`` changes (relative spread > :data:`MIN_SPREAD`) between points that differ
    in ``var`` alone."""
    for recs in _groups(records, others).values():
        vals = [float(r["outputs"][key]) for r in recs]
        finite = [v for v in vals if math.isfinite(v)]
        if len({r["overrides"].get(var.path) for r in recs}) < 2 or len(finite) < 2:
            continue
        scale = max(abs(v) for v in finite)
        if max(finite) - min(finite) > MIN_SPREAD * scale:
            return True
    return False


def no_plots_reason(records: Sequence[dict]) -> str:
    """Why a sweep has no plots ("" if it has enough finished points to plot)."""
    good = [r for r in records if r.get("status") in ("ok", "collapsed")]
    if len(good) < 2:
        return (f"{len(good)} finished point{'s' if len(good) != 1 else ''}: a plot needs at "
                "least two")
    return ""


def _uncertainty(rec: dict, key: str):
    unc = rec.get("uncertainty", {})
    rel = unc.get(key, unc.get(re.sub(r"_\d+$", "", key)))
    return rel if isinstance(rel, (int, float)) and not isinstance(rel, bool) else None


def _x(var: Variation, value) -> float:
    return float(value) if var.numeric else float(var.values.index(value))


def _groups(records, others: Sequence[Variation]) -> dict[tuple, list[dict]]:
    out: dict[tuple, list[dict]] = {}
    for r in records:
        out.setdefault(tuple(r["overrides"].get(v.path) for v in others), []).append(r)
    return out


def _group_label(others: Sequence[Variation], values: tuple) -> str:
    parts = []
    for var, val in zip(others, values):
        name = var.path.rsplit(".", 1)[-1].replace("_", " ")
        if var.numeric:
            f, u = _scale([val], _pretty(var.unit))
            parts.append(f"{name} = {val * f:.4g} {u}".strip())
        else:
            parts.append(f"{name} = {val}")
    return ", ".join(parts)


def _draw(ax, var, key, records, others, xf, yf) -> None:
    groups = _groups(records, others)
    if len(groups) > len(_MARKERS):
        for status, face in (("ok", "0.35"), ("collapsed", "white")):
            pts = [r for r in records if r["status"] == status]
            if pts:
                ax.plot([_x(var, r["overrides"][var.path]) * xf for r in pts],
                        [r["outputs"][key] * yf for r in pts], "o", color="0.35", mfc=face, ms=4,
                        label=f"{status}, all {len(groups)} combinations of the other inputs")
        return
    for i, (gvals, recs) in enumerate(sorted(groups.items(), key=lambda kv: str(kv[0]))):
        recs = sorted(recs, key=lambda r: _x(var, r["overrides"][var.path]))
        x = [_x(var, r["overrides"][var.path]) * xf for r in recs]
        y = [r["outputs"][key] * yf for r in recs]
        err = [abs(v) * (_uncertainty(r, key) or 0.0) for v, r in zip(y, recs)]
        ax.errorbar(x, y, yerr=err if any(err) else None, color="black", marker=_MARKERS[i],
                    ls=_LINES[i], ms=5, capsize=2, lw=1.2,
                    label=_group_label(others, gvals) if others else None)
        hollow = [(a, b) for a, b, r in zip(x, y, recs) if r["status"] == "collapsed"]
        if hollow:
            ax.plot(*zip(*hollow), ls="none", marker=_MARKERS[i], ms=5, mfc="white", mec="black",
                    label="collapsed (bias >= pull-in)" if i == 0 else None)


def _labels(var: Variation, key: str, records: list[dict]):
    """((x factor, x label), (y factor, y label), title) from the names table."""
    out = lookup(key)
    if out is not None:
        yf, ylabel, title = out.scale, _axis_label(out.label, out.unit), out.label
    else:
        name, yunit = key_label(key)
        yf, yunit = _scale([r["outputs"][key] for r in records], yunit)
        ylabel, title = _axis_label(name.split(": ", 1)[-1], yunit), name
    inp = input_name(var.path)
    if not var.numeric:
        xf, xlabel = 1.0, inp.label if inp else var.path.replace(".", " ").replace("_", " ")
    elif inp is not None:
        xf, xlabel = inp.scale, _axis_label(inp.label, inp.unit)
    else:
        xf, xunit = _scale([float(v) for v in var.values], _pretty(var.unit))
        xlabel = _axis_label(var.path.replace(".", " ").replace("_", " "), xunit)
    return (xf, xlabel), (yf, ylabel), title


def _figure(var: Variation, key: str, records: list[dict], others: Sequence[Variation]):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(6.0, 4.2), dpi=DPI, layout="constrained")
    ax = fig.subplots()
    (xf, xlabel), (yf, ylabel), title = _labels(var, key, records)
    _draw(ax, var, key, records, others, xf, yf)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(title, fontsize=10)
    if var.spacing == "log":
        ax.set_xscale("log")
    if not var.numeric:
        ax.set_xticks(range(len(var.values)), list(var.values))
        ax.set_xlim(-0.5, len(var.values) - 0.5)
    if yf == 1.0 and abs(ax.get_ylim()[1]) > 1e4:
        ax.ticklabel_format(axis="y", style="sci", scilimits=(-3, 4), useMathText=True)
    ax.grid(True, color="0.85", lw=0.6)
    if ax.get_legend_handles_labels()[1]:
        ax.legend(fontsize=9, frameon=False)
    return fig


def _save(fig, path: Path) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.stem}.", suffix=".png")
    os.close(fd)
    try:
        fig.savefig(tmp, format="png", dpi=DPI)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_plots(records: Sequence[dict], variations: Sequence[Variation], plot_dir: str | Path,
                outputs: Sequence[str] | None = None) -> list[Path]:
    """Write one PNG per (output, varied input) into ``plot_dir``; return the paths.

    ``records`` are sweep records (see :mod:`diagap.sweep.point`); only ok and collapsed points
    are drawn. ``outputs`` defaults to :func:`outputs_of_interest`.
    """
    from diagap.report.plots import print_style

    good = [r for r in records if r.get("status") in ("ok", "collapsed")]
    if no_plots_reason(good):
        return []
    keys = list(outputs) if outputs is not None else outputs_of_interest(good)
    written: list[Path] = []
    plot_dir = Path(plot_dir)
    for key in keys:
        for var in variations:
            pts = [r for r in good if isinstance(r["outputs"].get(key), (int, float))
                   and not isinstance(r["outputs"].get(key), bool) and var.path in r["overrides"]]
            others = [v for v in variations if v is not var]
            if len(pts) < 2 or not varies_along(pts, key, var, others):
                continue
            plot_dir.mkdir(parents=True, exist_ok=True)
            path = plot_dir / f"{key}--{var.path}.png"
            with print_style():
                _save(_figure(var, key, pts, others), path)
            written.append(path)
    return written
