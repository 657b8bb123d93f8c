"""A view as terminal text (ASCII: ``nV/rtHz``, ``ohm``, ``+/-``): conditions, figures with their U, tables,
notes and warnings; with ``explain`` the uncertainty budgets too."""

from __future__ import annotations

from ..quantity import Quantity, ascii_text
from .view import Table, View

__all__ = ["render_text", "table_lines"]

_LABEL_WIDTH = 42


def _figure_line(label: str, q: Quantity, note: str) -> str:
    line = f"  {label:<{_LABEL_WIDTH}} {q.number_text():>10} {q.unit_text():<7} {q.u_text():<16}"
    return (line + (f" ({note})" if note else "")).rstrip()


def table_lines(table: Table, *, limit: int | None = None) -> list[str]:
    """A table with aligned columns (numbers right, words left)."""
    rows = list(table.rows)
    shown = rows if limit is None or len(rows) <= limit else rows[:limit]
    cells = [[ascii_text(table.cell(c, v)) for c, v in zip(table.columns, row)] for row in shown]
    widths = [max([len(ascii_text(c))] + [len(r[i]) for r in cells]) for i, c in enumerate(table.columns)]
    numeric = [all(isinstance(row[i], Quantity) for row in shown) for i in range(len(table.columns))]

    def line(values: list[str]) -> str:
        return "  " + "  ".join(v.rjust(w) if num else v.ljust(w) for v, w, num in zip(values, widths, numeric)).rstrip()
    out = ["", table.title, line([ascii_text(c) for c in table.columns])] + [line(r) for r in cells]
    if len(shown) < len(rows):
        out.append(f"  ... {len(rows) - len(shown)} more in the JSON")
    if table.note:
        out.append(f"  {table.note}")
    return out


def render_text(view: View, *, explain: bool = False, table_limit: int | None = None) -> str:
    """The whole view as plain ASCII text for a terminal or a .txt file."""
    lines = [f"benchnf - {view.title}", "", "Conditions"]
    width = max((len(k) for k, _ in view.conditions), default=0)
    lines += [f"  {k:<{width}}  {v}" for k, v in view.conditions]
    if view.headline:
        lines += ["", "Results (U: expanded uncertainty, k=2)"]
        lines += [_figure_line(h.label, h.quantity, h.note) for h in view.headline]
    for table in view.tables:
        if table.rows:
            lines += table_lines(table, limit=table_limit)
    if explain and view.details:
        lines += list(view.details)
    elif view.details:
        lines += ["", "--explain lists every contribution to each uncertainty (GUM budgets)."]
    if view.warnings:
        lines += ["", "Warnings"] + [f"  ! {w}" for w in view.warnings]
    if view.notes:
        lines += ["", "Notes"] + [f"  * {n}" for n in view.notes]
    return ascii_text("\n".join(lines)) + "\n"
