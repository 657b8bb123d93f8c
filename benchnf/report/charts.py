"""The control chart of a recorded figure as a figure (individuals and moving range), for records chart."""

from __future__ import annotations

from typing import Any

import numpy as np

from .render_png import new_figure

__all__ = ["control_chart_figures"]


def control_chart_figures(chart: Any, *, figure: str) -> list[tuple[str, Any]]:
    """Individuals and moving-range chart of `figure` (a ControlChart), points breaking a run rule in red."""
    fig, (a, b) = new_figure(2, 6.5, sharex=True)
    n = np.arange(1, len(chart.values) + 1)
    a.plot(n, chart.values, "o-", color="tab:blue", ms=4, lw=1)
    for y, style in ((chart.centre, "-"), (chart.lower, "--"), (chart.upper, "--")):
        a.axhline(y, color="0.4", ls=style, lw=1)
    flagged = sorted({i for i, _rule in chart.signals})
    if flagged:
        a.plot(n[flagged], np.array(chart.values)[flagged], "o", color="tab:red", ms=7, mfc="none",
               label="breaks a run rule: " + ", ".join(sorted({str(r) for _i, r in chart.signals})))
        a.legend(fontsize=8)
    a.set_ylabel(figure)
    a.set_title(f"Individuals: centre {chart.centre:.4g}, limits {chart.lower:.4g} to {chart.upper:.4g}", fontsize=10)
    a.grid(True, alpha=0.3)
    b.plot(n[1:], chart.moving_ranges, "s-", color="tab:green", ms=3, lw=1)
    b.axhline(chart.mr_centre, color="0.4", lw=1)
    b.axhline(chart.mr_upper, color="0.4", ls="--", lw=1)
    b.set_ylabel("moving range")
    b.set_xlabel("unit, in time order")
    from matplotlib.ticker import MaxNLocator
    b.xaxis.set_major_locator(MaxNLocator(integer=True))
    b.set_title(f"Moving range: centre {chart.mr_centre:.3g}, upper limit {chart.mr_upper:.3g}", fontsize=10)
    b.grid(True, alpha=0.3)
    return [(f"control_{figure}.png", fig)]
