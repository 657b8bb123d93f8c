"""Checking a folder of units in parallel: one subfolder per unit, its name the serial number.

A unit folder holds either a ``results.json`` (from ``benchnf analyze --json``)
or captures: a terminated-input capture and a tone capture, found by their
sidecar's ``condition`` or by their names (``terminated.*`` or ``term.*``, ``tone.*``,
``floor.*``, ``shorted.*`` or ``short.*``).  A unit whose captures are missing or bad is reported as an
error; the others are still checked.
"""

from __future__ import annotations

import csv
import datetime as _dt
import io
import json
import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable
from xml.sax.saxutils import escape, quoteattr

from ..errors import BenchError
from .limits import check_results
from .profile import Profile, load_profile

__all__ = ["UnitOutcome", "find_units", "check_unit", "check_batch", "summary_csv", "junit_xml",
           "HISTORY_HEADER", "history_lines"]

#: File names (without extension) taken for a role when no sidecar states the condition.
_STEM_ROLES = {"term": "terminated", "terminated": "terminated", "tone": "tone", "floor": "floor",
               "short": "shorted", "shorted": "shorted"}
_AUDIO = (".wav", ".flac", ".aif", ".aiff", ".w64", ".rf64", ".caf")


@dataclass(frozen=True)
class UnitOutcome:
    """What happened to one unit."""

    serial: str
    verdict: str  # PASS, MARGINAL, FAIL or ERROR
    error: str | None
    check: dict[str, Any] | None
    results: dict[str, Any] | None
    seconds: float = 0.0  # how long the unit took to analyse and check

    def figure(self, key: str) -> Any:
        return (self.results or {}).get(key)


def find_units(folder: Path) -> list[Path]:
    """Unit subfolders, sorted by name."""
    folder = Path(folder)
    if not folder.is_dir():
        raise BenchError(f"{folder} is not a folder of units")
    units = sorted(p for p in folder.iterdir() if p.is_dir() and not p.name.startswith("."))
    if not units:
        raise BenchError(f"{folder} holds no unit subfolders")
    return units


def role_files(unit: Path) -> dict[str, Path]:
    """A unit folder's captures by role (terminated, tone, floor, shorted): the sidecar's condition, else
    the file name (``term.*``, ``short.*`` too)."""
    roles: dict[str, Path] = {}
    for p in sorted(unit.iterdir()):
        if p.suffix.lower() not in _AUDIO:
            continue
        cond = None
        for side in (p.with_suffix(".json"), p.with_name(p.name + ".json")):
            if side.is_file():
                try:
                    cond = json.loads(side.read_text()).get("condition")
                except (OSError, ValueError):
                    cond = None
        role = cond or _STEM_ROLES.get(p.stem.lower(), p.stem.lower())
        if role in ("terminated", "tone", "floor", "shorted"):
            roles.setdefault(role, p)
    return roles


def check_unit(unit: Path, profile_path: str, settings: dict[str, Any]) -> UnitOutcome:
    """Analyse (if needed) and check one unit, timed; never raises for the unit's own problems."""
    import dataclasses
    import time
    start = time.perf_counter()
    outcome = _check_unit(unit, profile_path, settings)
    return dataclasses.replace(outcome, seconds=time.perf_counter() - start)


def _check_unit(unit: Path, profile_path: str, settings: dict[str, Any]) -> UnitOutcome:
    serial = unit.name
    try:
        profile = load_profile(profile_path)
        results_file = unit / "results.json"
        if results_file.is_file():
            from ..io.results_json import read_results
            results = read_results(results_file)
        else:
            results = _analyse(unit, profile, settings)
        check = check_results(results, profile, unit=serial)
        return UnitOutcome(serial, check.verdict, None, check.to_dict(), results)
    except BenchError as err:
        return UnitOutcome(serial, "ERROR", str(err), None, None)
    except (OSError, ValueError) as err:
        return UnitOutcome(serial, "ERROR", f"{type(err).__name__}: {err}", None, None)


def _analyse(unit: Path, profile: Profile, settings: dict[str, Any]) -> dict[str, Any]:
    """The unit's captures analysed as the command line would, with the profile's conditions taking
    part in the agreement rule (a unit recorded under other conditions is refused, as check refuses it)."""
    from ..measure.requests import GainMethodRequest, run_gain_method
    roles = role_files(unit)
    missing = [r for r in ("terminated", "tone") if r not in roles]
    if missing:
        raise BenchError(f"unit {unit.name} lacks its {' and '.join(missing)} capture(s)")
    floor = roles.get("floor") or settings.get("floor")
    c = profile.conditions
    request = GainMethodRequest(
        terminated=(roles["terminated"],), floor=Path(floor) if floor else None, tone=roles["tone"],
        tone_input_vrms=settings.get("tone_input_vrms"), volts_per_fs=settings.get("volts_per_fs"),
        calibration=settings.get("calibration"), rs_ohm=settings.get("rs_ohm"),
        temperature_k=settings.get("temperature_k"), band_hz=settings.get("band_hz"),
        weighting=settings.get("weighting"),
        conditions={k: (tuple(v) if isinstance(v, list) else v) for k, v in c.items()},
        condition_source=f"the profile's conditions (unit {unit.name})")
    from ..measure.provenance import provenance
    inputs = [p for p in (roles["terminated"], roles["tone"], floor, settings.get("calibration")) if p]
    root = Path(settings["relative_to"]) if settings.get("relative_to") else unit
    made = provenance([Path(p) for p in inputs], root=root, station=settings.get("station"),
                      operator=settings.get("operator"))
    return {**run_gain_method(request).to_dict(), "provenance": made}


def check_batch(folder: Path, profile_path: str, *, settings: dict[str, Any] | None = None,
                workers: int | None = None, progress: Callable[[int], None] | None = None) -> list[UnitOutcome]:
    """Check every unit of `folder` on the available cores; outcomes in unit order."""
    load_profile(profile_path)  # a bad profile is refused before any work
    units = find_units(folder)
    settings = settings or {}
    n = workers or min(len(units), os.cpu_count() or 1)
    if n <= 1:
        out = []
        for u in units:
            out.append(check_unit(u, profile_path, settings))
            if progress:
                progress(1)
        return out
    with ProcessPoolExecutor(max_workers=n) as pool:
        futures = [pool.submit(check_unit, u, profile_path, settings) for u in units]
        out = []
        for fut in futures:
            out.append(fut.result())
            if progress:
                progress(1)
    return out


_COLUMNS = ("serial", "verdict", "gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db", "flicker_corner_hz",
            "failed_limits", "error")


def _row(o: UnitOutcome) -> dict[str, Any]:
    failed = [v["name"] for v in (o.check or {}).get("limits", []) if v["verdict"] != "PASS"]
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


def _measured_text(v: dict[str, Any]) -> str:
    """A measured value with sensible precision and its unit (V in engineering notation, densities in nV/rtHz)."""
    from ..units import eng
    m = v.get("measured")
    if m is None:
        return "-"
    if v["name"].startswith("hum"):
        return eng(m, "V")
    if "v_per_rthz" in v["name"]:
        return f"{m * 1e9:.3g} nV/rtHz"
    unit = {"_dbu": " dBu", "_dbv": " dBV", "_db": " dB", "_hz": " Hz"}
    return f"{m:.4g}" + next((u for suffix, u in unit.items() if v["name"].endswith(suffix)), "")


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
            failed = [v for v in o.check["limits"] if v["verdict"] == "FAIL"]
            text = "; ".join(f"{v['name']}: {_measured_text(v)} vs {v['limit']}" for v in failed)
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
