"""A view's plots as matplotlib figures (PNG files), drawn from the same plot specifications the desk draws.

matplotlib is imported only here and only when a plot is asked for; figures are made through its object
API (no pyplot state, no backend switched). Colours and layout are benchnf's own.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from .._optional import require
from .view import Plot, Trace, View

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["figures", "plot_figure", "draw_plot", "plain_log_ticks", "new_figure", "COLOURS"]

#: Trace colours in order (ink, teal, brick, ochre, slate, blue), shared with the desk.
COLOURS = ("#1f2a30", "#11646b", "#b3402a", "#a8740f", "#55606a", "#1c5d99")
_BAND = "#d7e9e8"


def new_figure(rows: int = 1, height: float = 5.0, *, cols: int = 1, width: float = 8.0,
               **subplots_kw: Any) -> tuple["Figure", Any]:
    """A new Figure and its Axes through matplotlib's object API."""
    require("matplotlib", extra=None, purpose="plotting")
    from matplotlib.figure import Figure
    fig = Figure(figsize=(width, height), layout="constrained")
    return fig, fig.subplots(rows, cols, **subplots_kw)


def plain_log_ticks(ax: "Axes") -> None:
    """Plain numbers (0.9, 2, 300) instead of 9x10^-1 on whichever of the axes is logarithmic."""
    from matplotlib.ticker import FuncFormatter

    def minor_for(axis: Any) -> Any:
        def minor(v: float, _pos: int) -> str:
            lo, hi = sorted(axis.get_view_interval())
            if lo > 0 and hi / lo < 15:  # about a decade or less: every minor tick may carry its number
                return f"{v:.2g}"
            mantissa = round(v / 10 ** math.floor(math.log10(v)), 6) if v > 0 else 0
            return f"{v:g}" if mantissa in (2.0, 5.0) else ""  # wide: 2 and 5 only, so labels never collide
        return minor
    for axis, scale in ((ax.xaxis, ax.get_xscale()), (ax.yaxis, ax.get_yscale())):
        if scale == "log":
            axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
            axis.set_minor_formatter(FuncFormatter(minor_for(axis)))


def _xy(t: Trace) -> tuple[list[float], list[float], list[float] | None]:
    pts = [(x, y, (t.u[i] if t.u is not None else None)) for i, (x, y) in enumerate(zip(t.x, t.y))]
    keep = [(x, y, u) for x, y, u in pts if x is not None and y is not None]
    u = [u if u is not None else 0.0 for _x, _y, u in keep] if t.u is not None else None
    return [x for x, _y, _u in keep], [y for _x, y, _u in keep], u


def _draw_trace(ax: "Axes", t: Trace, colour: str, plot: Plot, index: int, count: int) -> None:
    if t.style == "reference":
        if t.y and t.y[0] is not None:
            ax.axhline(t.y[0], color=colour, ls="--", lw=1.0, label=t.name)
        return
    if t.style == "bar":
        width = 0.8 / max(count, 1)
        xs = [i + (index - (count - 1) / 2) * width for i in range(len(t.y))]
        ax.bar(xs, [y if y is not None else 0.0 for y in t.y], width, label=t.name, color=colour)
        return
    x, y, u = _xy(t)
    if not x:
        return
    if t.style == "band" and u is not None:
        ax.fill_between(x, [a - b for a, b in zip(y, u)], [a + b for a, b in zip(y, u)], color=colour, alpha=0.18,
                        lw=0, label=t.name)
        return
    fmt = {"line": "-", "markers": "o", "line+markers": "o-"}[t.style]
    ax.plot(x, y, fmt, color=colour, lw=0.8 if t.style == "line" else 1.1, ms=4, label=t.name)
    if u is not None:
        ax.errorbar(x, y, yerr=u, fmt="none", ecolor=colour, elinewidth=0.8, capsize=2, alpha=0.7)
    if t.labels and not plot.categories:  # on a category axis the labels are the ticks
        for xi, yi, text in zip(x, y, t.labels):
            ax.annotate(text, (xi, yi), textcoords="offset points", xytext=(0, 5), fontsize=7, ha="center",
                        color=colour)


def draw_plot(ax: "Axes", plot: Plot) -> "Axes":
    """Draw one plot specification on `ax`."""
    if plot.band is not None and not plot.categories:
        lo, hi = plot.band
        ax.axvspan(max(lo, 1e-12) if plot.log_x else lo, hi, color=_BAND, alpha=0.5, zorder=0,
                   label=f"band {lo:g}-{hi:g} Hz")
    bars = [t for t in plot.traces if t.style == "bar"]
    for i, t in enumerate(plot.traces):
        _draw_trace(ax, t, COLOURS[i % len(COLOURS)], plot, bars.index(t) if t in bars else 0, len(bars))
    labelled = [t for t in plot.traces if t.labels]
    if plot.categories and labelled:
        ax.set_xticks(range(len(labelled[0].labels or ())), list(labelled[0].labels or ()))
    if plot.log_x and not plot.categories:
        ax.set_xscale("log")
    if plot.log_y:
        ax.set_yscale("log")
    if plot.y_from_zero:
        ax.set_ylim(bottom=0.0)
    ax.set_xlabel(plot.x_label)
    ax.set_ylabel(plot.y_label)
    ax.set_title(plot.title, fontsize=11)
    ax.grid(True, which="both", alpha=0.3)
    plain_log_ticks(ax)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=8, loc="best")
    return ax


def plot_figure(plot: Plot) -> "Figure":
    """One plot specification as a matplotlib Figure."""
    fig, ax = new_figure()
    draw_plot(ax, plot)
    return fig


def figures(view: View) -> list[tuple[str, "Figure"]]:
    """Every plot of a view as (file name, Figure)."""
    return [(p.file, plot_figure(p)) for p in view.plots]
