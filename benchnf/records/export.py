"""The records as a table, one row per check and one column per limit's measured value: CSV text, or
Parquet bytes (through pyarrow, where it is installed) for analysis tools that read columns by type."""

from __future__ import annotations

import csv
import datetime as _dt
import io
from collections.abc import Sequence
from typing import Any

__all__ = ["TEXT_COLUMNS", "csv_text", "parquet_bytes"]

#: The columns that describe a check; every other column is a limit's measured value (a float).
TEXT_COLUMNS = ("serial", "checked_at", "verdict", "station", "operator", "profile_name", "profile_sha256",
                "software")


def csv_text(rows: Sequence[dict[str, Any]], columns: Sequence[str]) -> str:
    """CSV with a header; floats to 6 significant digits, an empty cell where a check lacks a limit."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(columns))
    w.writeheader()
    for r in rows:
        w.writerow({k: (format(v, ".6g") if isinstance(v, float) else v) for k, v in r.items()})
    return buf.getvalue()


def parquet_bytes(rows: Sequence[dict[str, Any]], columns: Sequence[str]) -> bytes:
    """A Parquet file: text columns as strings, checked_at as a UTC timestamp, each limit as float64 (null
    where a check lacks it), values at full precision."""
    from .._optional import require
    pa = require("pyarrow", extra="parquet", purpose="Parquet export")
    pq = require("pyarrow.parquet", extra="parquet", purpose="Parquet export")
    fields = [pa.field(c, pa.timestamp("us", tz="UTC") if c == "checked_at" else
                       pa.string() if c in TEXT_COLUMNS else pa.float64()) for c in columns]
    data = {c: [_cell(c, r.get(c)) for r in rows] for c in columns}
    table = pa.Table.from_pydict(data, schema=pa.schema(fields))
    sink = pa.BufferOutputStream()
    pq.write_table(table, sink)
    return bytes(sink.getvalue().to_pybytes())


def _cell(column: str, value: Any) -> Any:
    if value is None:
        return None
    if column == "checked_at":
        return _dt.datetime.fromisoformat(str(value))
    return str(value) if column in TEXT_COLUMNS else float(value)
