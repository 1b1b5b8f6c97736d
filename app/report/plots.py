"""The report's plots: which ones a run can make, and their rendering to PNG.

Each plot is a :class:`Plot` (file stem, title, caption, drawing function). :func:`report_plots`
lists only the plots whose data were computed: a collapsed design (bias at or above pull-in) has
no response, noise or distortion plots, an unperforated backplate no unit-cell plot.
:class:`RenderedPlots` draws each plot once on first use, so the PNG files and the images embedded
in report.html are the same bytes; the plots are drawn on two processes (a forked child takes
every other plot) where the platform allows it.

Figures are drawn on matplotlib's Agg canvas without pyplot (no global backend, nothing left
open). Lines are black or grey with distinct dash patterns and markers, so the plots stay
readable in greyscale; filled maps use a colour map of monotonic lightness with black contour
lines (negative values dashed).
"""
from __future__ import annotations

import io
from dataclasses import dataclass
from typing import Callable

__all__ = ["Plot", "RenderedPlots", "report_plots", "new_figure", "png_bytes", "prefixed",
           "print_style", "LINES", "MARKERS", "GREYS", "SEQUENTIAL_MAP", "DPI", "FONT_PT"]

LINES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1)), (0, (1, 3)))
MARKERS = ("o", "s", "^", "D", "v", "x")
GREYS = ("black", "0.35", "0.55", "0.2", "0.45", "0.65")
SEQUENTIAL_MAP = "cividis"
#: resolution of the PNG files (print quality: a 7.6 in wide figure is 1140 px)
DPI = 150
#: draw the plots on two processes where the platform can fork
PARALLEL = True
#: longest wait (s) for the plots drawn by the forked child before drawing them here
CHILD_TIMEOUT_S = 120.0
#: smallest font size of any text in a plot (legends, tick labels), in points
FONT_PT = 9
_STYLE = {"font.size": 10, "axes.titlesize": 10, "axes.labelsize": 10, "legend.fontsize": FONT_PT,
          "xtick.labelsize": FONT_PT, "ytick.labelsize": FONT_PT, "figure.titlesize": 11}
_PREFIXES = ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""),
             (1e3, "k"), (1e6, "M"), (1e9, "G"))


@dataclass(frozen=True)
class Plot:
    """One report plot: ``plots/<name>.png``."""

    name: str
    section: str  # the summary section it illustrates
    title: str
    caption: str
    draw: Callable[[], object]  # -> matplotlib.figure.Figure


def prefixed(largest: float, unit: str) -> tuple[float, str]:
    """(factor, unit label) of the SI prefix that shows ``largest`` (in ``unit``) as 1 … 1000.

    ``prefixed(4e-6, "m")`` → ``(1e6, "µm")``: multiply values by the factor to plot them.
    """
    import math

    x = abs(float(largest))
    if not math.isfinite(x) or x == 0.0:
        return 1.0, unit
    for scale, name in reversed(_PREFIXES):
        if x >= scale * (1 - 1e-9):
            return 1.0 / scale, name + unit
    return 1.0 / _PREFIXES[0][0], _PREFIXES[0][1] + unit


def new_figure(width_in: float = 7.6, height_in: float = 4.2, *, margins_in=(0.8, 0.3, 0.6, 0.3),
               wspace: float | None = None, hspace: float | None = None, **subplots):
    """(Figure on an Agg canvas, axes) — ``subplots`` go to ``Figure.subplots``.

    ``margins_in`` = (left, right, bottom, top) in inches. Fixed margins rather than a layout
    engine: a layout engine draws every figure twice, which doubled the plotting time.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in))
    FigureCanvasAgg(fig)
    left, right, bottom, top = margins_in
    fig.subplots_adjust(left=left / width_in, right=1 - right / width_in,
                        bottom=bottom / height_in, top=1 - top / height_in,
                        wspace=wspace, hspace=hspace)
    return fig, fig.subplots(**subplots)


def print_style():
    """Context manager with the plots' font sizes (no text below :data:`FONT_PT` points).

    Text takes its size from matplotlib's rc parameters when it is created, so the figure must be
    drawn inside this context; the global parameters are restored on exit.
    """
    import matplotlib

    return matplotlib.rc_context(_STYLE)


def png_bytes(fig, dpi: int = DPI) -> bytes:
    """The figure as PNG bytes; the figure is cleared afterwards."""
    buf = io.BytesIO()
    # light compression: about a fifth faster than the default level for ~10 % larger files
    fig.savefig(buf, format="png", dpi=dpi, pil_kwargs={"compress_level": 1})
    fig.clear()
    return buf.getvalue()


def _take(plots, counter) -> dict[str, bytes]:
    """Draw plots from the shared queue ``counter`` (the index of the next plot not yet taken by
    either process) until it runs out."""
    out = {}
    with print_style():
        while True:
            with counter.get_lock():
                i = counter.value
                counter.value = i + 1
            if i >= len(plots):
                return out
            out[plots[i].name] = png_bytes(plots[i].draw())


def _take_child(plots, counter, receive=None) -> dict[str, bytes]:
    return _take(plots, counter)


class RenderedPlots:
    """The PNG bytes of each plot, drawn once: all of them on the first request, on two
    processes where the platform can fork (:class:`diagap.forked.ForkedCall`).

    Both processes take the next plot not yet drawn from one shared queue (so the two cores stay
    busy to the end whatever each plot costs). :meth:`start` lets the child begin while this
    process writes other files; a plot the child did not deliver is drawn here."""

    def __init__(self, plots: list[Plot], parallel: bool | None = None,
                 drawn: dict[str, bytes] | None = None):
        self.plots = list(plots)
        self.parallel = PARALLEL if parallel is None else parallel
        names = {p.name for p in self.plots}
        self._png: dict[str, bytes] = {k: v for k, v in (drawn or {}).items() if k in names}
        self._call = self._counter = None
        self._queue: list[Plot] = []

    def _todo(self) -> list[Plot]:
        return [p for p in self.plots if p.name not in self._png]

    def start(self) -> None:
        """Start the forked child drawing (no-op when not parallel or already started)."""
        if not self.parallel or self._call is not None or len(self._todo()) < 2:
            return
        import multiprocessing as mp

        from diagap.forked import ForkedCall, can_fork

        if not can_fork():
            return
        self._counter = mp.get_context("fork").Value("i", 0)
        self._queue = self._todo()
        self._call = ForkedCall(_take_child, self._queue, self._counter)
        if not self._call.forked:
            self._call = self._counter = None

    def _finish(self) -> None:
        self.start()
        if self._call is not None:
            try:
                self._png.update(_take(self._queue, self._counter))
            except BaseException:
                self._call.cancel()
                raise
            self._png.update(self._call.result(CHILD_TIMEOUT_S))
            self._call = None
        missing = [p for p in self.plots if p.name not in self._png]
        with print_style():
            for plot in missing:  # no child, or it failed: drawn here
                self._png[plot.name] = png_bytes(plot.draw())

    def close(self) -> None:
        """Stop a child that is still drawing (when the plots are no longer wanted)."""
        if self._call is not None:
            self._call.cancel()
            self._call = None

    def png(self, name: str) -> bytes:
        if name not in self._png:
            if self.parallel:
                self._finish()
            else:
                with print_style():
                    plot = next(p for p in self.plots if p.name == name)
                    self._png[name] = png_bytes(plot.draw())
        return self._png[name]

    def items(self):
        """(Plot, PNG bytes) of every plot, in report order."""
        return [(p, self.png(p.name)) for p in self.plots]


def report_plots(result, cell=None) -> list[Plot]:
    """The plots ``result`` (a :class:`diagap.pipeline.RunResult`) can make, in report order.

    ``cell`` is the unit-cell field (:func:`diagap.report.fields.cell_field`), or None.
    """
    from diagap.report.plots_breakdown import breakdown_plots
    from diagap.report.plots_electro import electro_plots
    from diagap.report.plots_mech import mech_plots
    from diagap.report.plots_overload import overload_plots
    from diagap.report.plots_response import response_plots
    from diagap.report.plots_temperature import temperature_plots

    s = result.sections
    plots: list[Plot] = []
    if "mechanics" in s:
        plots += mech_plots(s["mechanics"])
    plots += electro_plots(result.design, s.get("electrostatics"), s.get("coupled"), cell)
    plots += response_plots(result.design, s.get("damping"), s.get("response"))
    plots += overload_plots(s.get("large_deflection"))
    plots += breakdown_plots(s.get("response"))
    plots += temperature_plots(s.get("temperature_sweep"))
    return plots
