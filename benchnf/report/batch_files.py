"""The files a batch of unit checks leaves for the line: a summary CSV, a JUnit-style XML for a test
runner, and history lines to append (one per unit)."""

from __future__ import annotations

import csv
import datetime as _dt
import io
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from ..check.batch import UnitOutcome

__all__ = ["summary_csv", "junit_xml", "HISTORY_HEADER", "history_lines"]


_COLUMNS = ("serial", "verdict", "gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db", "flicker_corner_hz",
            "failed_limits", "error")


def _row(o: UnitOutcome) -> dict[str, Any]:
    failed = [v.name for v in (o.check.limits if o.check else ()) if v.verdict != "PASS"]
    def num(x: Any) -> Any:
        return float(format(x, ".6g")) if isinstance(x, float) else x
    return {"serial": o.serial, "verdict": o.verdict, **{k: num(o.figure(k)) for k in _COLUMNS[2:7]},
            "failed_limits": "; ".join(failed), "error": o.error or ""}


def _csv_line(values: list[Any]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="").writerow(values)
    return buf.getvalue()


def summary_csv(outcomes: list[UnitOutcome]) -> str:
    """One row per unit: verdict, key figures, the limits not passed, any error."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=_COLUMNS, lineterminator="\r\n")
    w.writeheader()
    for o in outcomes:
        w.writerow(_row(o))
    return buf.getvalue()


def junit_xml(outcomes: list[UnitOutcome], *, profile: str) -> str:
    """A JUnit-style XML: one test suite, one test case per unit (failures and errors marked)."""
    failures = sum(o.verdict == "FAIL" for o in outcomes)
    errors = sum(o.verdict == "ERROR" for o in outcomes)
    import socket
    stamp = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
    lines = ['<?xml version="1.0" encoding="UTF-8"?>',
             f'<testsuite name={quoteattr("benchnf check " + profile)} tests="{len(outcomes)}" '
             f'failures="{failures}" errors="{errors}" time="{sum(o.seconds for o in outcomes):.3f}" '
             f'timestamp="{stamp}" hostname={quoteattr(socket.gethostname())}>']
    for o in outcomes:
        lines.append(f'  <testcase classname="benchnf.check" name={quoteattr(o.serial)} time="{o.seconds:.3f}">')
        if o.verdict == "FAIL" and o.check is not None:
            failed = [v for v in o.check.limits if v.verdict == "FAIL"]
            text = "; ".join(f"{v.name}: {v.measured_text()} vs {v.limit}" for v in failed)
            lines.append(f'    <failure message={quoteattr(text)}>{escape(text)}</failure>')
        elif o.verdict == "ERROR":
            lines.append(f'    <error message={quoteattr(o.error or "")}>{escape(o.error or "")}</error>')
        elif o.verdict == "MARGINAL":
            lines.append("    <system-out>MARGINAL: inside the limits by less than the uncertainty</system-out>")
        lines.append("  </testcase>")
    lines.append("</testsuite>")
    return "\n".join(lines) + "\n"


HISTORY_HEADER = _csv_line(["checked_at", "profile", *_COLUMNS[:7]])


def history_lines(outcomes: list[UnitOutcome], *, profile: str) -> list[str]:
    """One history line per unit (time, profile, serial, verdict, key figures), to append."""
    stamp = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")
    return [_csv_line([stamp, profile, *[_row(o)[k] for k in _COLUMNS[:7]]]) for o in outcomes]
