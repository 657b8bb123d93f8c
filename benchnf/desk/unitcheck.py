"""A unit checked from the desk: its results (or its captures) against a profile, kept in the records store.

The analysis, the check, the report page and the record are the command line's
(:func:`benchnf.check.batch.check_unit`, :func:`benchnf.check.limits.check_results`,
:func:`benchnf.report.html.unit_report_html`, :func:`benchnf.records.entry.check_record`).
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path
from typing import Any

from ..errors import BenchError

__all__ = ["check_unit_from_desk", "earlier_checks", "serial_ok"]

from ..records.entry import serial_ok


def _outcome(serial: str, source: Path, profile_path: Path, settings: Any) -> tuple[Any, Any, Any]:
    """(CheckResult, AnalysisResult, Profile) of the unit: a results JSON checked, or a folder of captures
    analysed and checked exactly as ``benchnf batch`` does (:func:`benchnf.check.batch.check_unit`)."""
    from ..check.limits import check_results
    from ..check.profile import load_profile
    profile = load_profile(profile_path)
    if source.is_dir():
        from ..check.batch import check_unit
        out = check_unit(source, str(profile_path), settings)
        if out.error:
            raise BenchError(out.error)
        return out.check, out.results, profile
    from ..registry import read_result
    results = read_result(source, kinds=("analysis",))
    return check_results(results, profile, unit=serial), results, profile


def check_unit_from_desk(*, serial: str, source: Path, profile_path: Path, folder: Path, writer: Any,
                         records_url: str | None, station: str | None, operator: str | None,
                         calibration: Path | None = None, floor: Path | None = None) -> dict[str, Any]:
    """Check one unit; write its report page into ``folder/checks``; record it. The page's payload.

    A folder of captures uses its own floor capture, else `floor` (picked in the page), else a floor capture
    in the folder holding the unit folders, as batch does; the payload says when no floor was subtracted.
    """
    from ..check.batch import UnitSettings
    from ..report.html import unit_report_html
    from ..report.present_check import present
    serial = serial_ok(serial)
    store = None
    if records_url:
        from ..records import connect
        store = connect(records_url)  # refused before the check when it cannot be written
    settings = UnitSettings(calibration=calibration, floor=floor, station=station, operator=operator)
    check, results, profile = _outcome(serial, source, profile_path, settings)
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y%m%dT%H%M%SZ")
    reports = writer.folder(folder / "checks")
    page = writer.child(reports, f"{serial}-{stamp}.html")
    n = 1
    while page.exists():  # the same unit checked twice within a second: a new page, never the old one replaced
        n += 1
        page = writer.child(reports, f"{serial}-{stamp}-{n}.html")
    writer.text(page, unit_report_html(serial=serial, verdict=check.verdict, check=check, results=results,
                                       profile=profile))
    recorded = False
    if store is not None:
        from ..records.entry import check_record
        try:
            recorded = store.add(check_record(check, serial=serial, verdict=check.verdict, results=results,
                                              profile=profile, station=station, operator=operator))
        finally:
            store.close()
    view = present(check).to_data()
    return {"serial": serial, "verdict": check.verdict, "limits": view["tables"][0], "notes": view["notes"],
            "findings": list(check.diagnosis), "decision_rule": check.decision_rule,
            "conditions": view["conditions"], "floor_corrected": results.floor_corrected, "profile": profile.name,
            "report": page, "recorded": recorded}


def earlier_checks(records_url: str | None, serial: str) -> list[dict[str, Any]]:
    """The unit's checks in the store, newest first (empty without a store)."""
    if not records_url:
        return []
    from ..records import connect
    store = connect(records_url, create=False)
    try:
        rows = store.checks(serial=serial_ok(serial))
    finally:
        store.close()
    return [{"checked_at": r["checked_at"], "verdict": r["verdict"], "station": r["station"],
             "operator": r["operator"], "profile": r["profile_name"]} for r in reversed(rows)]

