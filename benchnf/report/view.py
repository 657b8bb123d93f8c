"""The one neutral view of a result: what every front end shows of it, before any of them draws it.

A :class:`View` holds the headline figures (label, value, unit, expanded uncertainty, the digits to show,
what qualifies them), the conditions in words, tables, plot specifications (traces in display units, log
axes, the band, reference lines, error bars, category axes), notes and warnings. The terminal
(:mod:`.render_text`), the PNG plots (:mod:`.render_png`), the HTML report (:mod:`.render_html`) and the desk
(:func:`View.to_data`) render the same view, so a figure reads the same everywhere: the same unit, the same
notation, the same U. Numbers become text in one place only, :mod:`.quantity`.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any, Literal

from ..quantity import Quantity

__all__ = ["Headline", "Table", "Trace", "Plot", "View", "Cell", "values"]

Cell = Quantity | str


@dataclass(frozen=True)
class Headline:
    """One headline figure: label, its quantity (value, unit, U), what qualifies it, and the result's field."""

    label: str
    quantity: Quantity
    note: str = ""
    key: str = ""

    def to_data(self) -> dict[str, Any]:
        q = self.quantity
        return {"label": self.label, "key": self.key, "value": q.value_text(), "unit": q.unit_text(),
                "u": q.u_text(), "text": q.text(), "note": self.note}


@dataclass(frozen=True)
class Table:
    """A table: column titles with their units, rows of cells (quantities or words)."""

    title: str
    columns: tuple[str, ...]
    rows: tuple[tuple[Cell, ...], ...]
    note: str = ""

    @staticmethod
    def cell(column: str, cell: Cell) -> str:
        """A cell's text: the number alone where the column title carries its unit (``input (nV/√Hz)``),
        else the number with its unit."""
        if isinstance(cell, str):
            return cell
        unit = cell.unit_text()
        return cell.number_text() if unit and f"({unit})" in column else cell.text()

    def to_data(self) -> dict[str, Any]:
        return {"title": self.title, "columns": list(self.columns), "note": self.note,
                "rows": [[self.cell(c, v) for c, v in zip(self.columns, row)] for row in self.rows]}


Style = Literal["line", "markers", "line+markers", "bar", "reference", "band"]


@dataclass(frozen=True)
class Trace:
    """One trace of a plot, in the plot's display units. `u`: expanded uncertainties (k = 2) drawn as error
    bars; `labels`: a text per point (markers) or the categories (bars); `style` ``reference`` is a
    horizontal reference line (``y`` holds its one level), ``band`` a shaded interval ``y +/- u``."""

    name: str
    x: tuple[float | None, ...]
    y: tuple[float | None, ...]
    style: Style = "line"
    u: tuple[float | None, ...] | None = None
    labels: tuple[str, ...] | None = None

    def to_data(self) -> dict[str, Any]:
        return {"name": self.name, "x": list(self.x), "y": list(self.y), "style": self.style,
                "u": None if self.u is None else list(self.u),
                "labels": None if self.labels is None else list(self.labels)}


@dataclass(frozen=True)
class Plot:
    """A plot: its file name (PNG), title, axis labels with units, traces, scales and the band shaded."""

    id: str
    file: str
    title: str
    x_label: str
    y_label: str
    traces: tuple[Trace, ...]
    log_x: bool = True
    log_y: bool = False
    band: tuple[float, float] | None = None
    categories: bool = False
    y_from_zero: bool = False

    def to_data(self) -> dict[str, Any]:
        return {"id": self.id, "file": self.file, "title": self.title, "x_label": self.x_label,
                "y_label": self.y_label, "traces": [t.to_data() for t in self.traces], "log_x": self.log_x,
                "log_y": self.log_y, "band": None if self.band is None else list(self.band),
                "categories": self.categories, "y_from_zero": self.y_from_zero}


@dataclass(frozen=True)
class View:
    """Everything a front end shows of one result."""

    kind: str
    title: str
    conditions: tuple[tuple[str, str], ...]
    headline: tuple[Headline, ...]
    tables: tuple[Table, ...] = ()
    plots: tuple[Plot, ...] = ()
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    details: tuple[str, ...] = field(default=(), repr=False)  # the uncertainty budgets, line by line
    summary: str = ""  # one line: the figures that matter most, for lists and the demo

    def figure(self, key: str) -> Headline:
        """The headline figure of a result field (KeyError when the view has none)."""
        for h in self.headline:
            if h.key == key:
                return h
        raise KeyError(key)

    def to_data(self) -> dict[str, Any]:
        """The JSON the desk draws: every number already in its display text beside the plot data."""
        return {"kind": self.kind, "title": self.title, "summary": self.summary,
                "conditions": [list(c) for c in self.conditions],
                "headline": [h.to_data() for h in self.headline], "tables": [t.to_data() for t in self.tables],
                "plots": [p.to_data() for p in self.plots], "notes": list(self.notes),
                "warnings": list(self.warnings)}


def values(seq: Iterable[Any], scale: float = 1.0) -> tuple[float | None, ...]:
    """Plot values: scaled, and None where there is no finite number (a gap in the trace)."""
    import numpy as np
    items = seq if hasattr(seq, "dtype") else [np.nan if v is None else v for v in seq]
    arr = np.asarray(items, dtype=np.float64) * scale
    out: list[float | None] = arr.tolist()
    for i in np.flatnonzero(~np.isfinite(arr)).tolist():
        out[i] = None
    return tuple(out)
