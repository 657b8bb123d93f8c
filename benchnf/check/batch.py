"""Checking a folder of units in parallel: one subfolder per unit, its name the serial number.

A unit folder holds either a ``results.json`` (from ``benchnf analyze --json``)
or captures: a terminated-input capture and a tone capture, found by their
sidecar's ``condition`` or by their names (``terminated.*`` or ``term.*``, ``tone.*``,
``floor.*``, ``shorted.*`` or ``short.*``).  A unit whose captures are missing or bad is reported as an
error; the others are still checked.
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from ..errors import BenchError
from ..measure.results import AnalysisResult
from .limits import CheckResult, check_results
from .profile import Profile, load_profile

__all__ = ["UnitOutcome", "UnitSettings", "find_units", "role_files", "unit_floor", "check_unit", "check_batch"]

#: File names (without extension) taken for a role when no sidecar states the condition.
_STEM_ROLES = {"term": "terminated", "terminated": "terminated", "tone": "tone", "floor": "floor",
               "short": "shorted", "shorted": "shorted"}


@dataclass(frozen=True)
class UnitOutcome:
    """What happened to one unit."""

    serial: str
    verdict: str  # PASS, MARGINAL, FAIL or ERROR
    error: str | None
    check: CheckResult | None
    results: AnalysisResult | None
    seconds: float = 0.0  # how long the unit took to analyse and check

    def figure(self, key: str) -> float | None:
        return self.results.figure(key) if self.results is not None else None


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
    from ..io.opener import is_audio, sidecar_condition
    roles: dict[str, Path] = {}
    for p in sorted(unit.iterdir()):
        if not (p.is_file() and is_audio(p)):
            continue
        role = sidecar_condition(p) or _STEM_ROLES.get(p.stem.lower(), p.stem.lower())
        if role in ("terminated", "tone", "floor", "shorted"):
            roles.setdefault(role, p)
    return roles


@dataclass(frozen=True)
class UnitSettings:
    """What a batch (or the desk's unit check) states for every unit: how the captures are calibrated, the
    floor to use where a unit has none of its own, the measurement conditions, and who checks where."""

    calibration: Path | None = None
    volts_per_fs: float | None = None
    floor: Path | None = None
    tone_input_vrms: float | None = None
    rs_ohm: float | None = None
    temperature_k: float | None = None
    band_hz: tuple[float, float] | None = None
    weighting: str | None = None
    station: str | None = None
    operator: str | None = None
    relative_to: Path | None = None
    decision_rule: str | None = None  # None: the profile's


def unit_floor(unit: Path, settings: UnitSettings, roles: dict[str, Path] | None = None) -> Path | None:
    """The floor capture a unit is analysed with: its own, else the one stated for all units, else one in
    the folder that holds the units; None where there is none (the floor is then not subtracted)."""
    roles = role_files(unit) if roles is None else roles
    if "floor" in roles:
        return roles["floor"]
    if settings.floor is not None:
        return Path(settings.floor)
    return role_files(unit.parent).get("floor") if unit.parent != unit else None


def check_unit(unit: Path, profile_path: str, settings: UnitSettings) -> UnitOutcome:
    """Analyse (if needed) and check one unit, timed; never raises for the unit's own problems."""
    import dataclasses
    import time
    start = time.perf_counter()
    outcome = _check_unit(unit, profile_path, settings)
    return dataclasses.replace(outcome, seconds=time.perf_counter() - start)


def _check_unit(unit: Path, profile_path: str, settings: UnitSettings) -> UnitOutcome:
    serial = unit.name
    try:
        profile = load_profile(profile_path)
        results_file = unit / "results.json"
        if results_file.is_file():
            from ..registry import read_result
            results = read_result(results_file, kinds=("analysis",))
        else:
            results = _analyse(unit, profile, settings)
        check = check_results(results, profile, unit=serial, decision_rule=settings.decision_rule)
        return UnitOutcome(serial, check.verdict, None, check, results)
    except BenchError as err:
        return UnitOutcome(serial, "ERROR", str(err), None, None)
    except (OSError, ValueError) as err:
        return UnitOutcome(serial, "ERROR", f"{type(err).__name__}: {err}", None, None)


def _analyse(unit: Path, profile: Profile, settings: UnitSettings) -> AnalysisResult:
    """The unit's captures analysed as the command line would, with the profile's conditions taking
    part in the agreement rule (a unit recorded under other conditions is refused, as check refuses it)."""
    from ..measure.requests import GainMethodRequest, run_gain_method
    roles = role_files(unit)
    missing = [r for r in ("terminated", "tone") if r not in roles]
    if missing:
        raise BenchError(f"unit {unit.name} lacks its {' and '.join(missing)} capture(s)")
    floor = unit_floor(unit, settings, roles)
    c = profile.conditions
    request = GainMethodRequest(
        terminated=(roles["terminated"],), floor=floor, shorted=roles.get("shorted"), tone=roles["tone"],
        tone_input_vrms=settings.tone_input_vrms, volts_per_fs=settings.volts_per_fs,
        calibration=settings.calibration, rs_ohm=settings.rs_ohm, temperature_k=settings.temperature_k,
        band_hz=settings.band_hz, weighting=settings.weighting,
        conditions={k: (tuple(v) if isinstance(v, list) else v) for k, v in c.items() if k != "floor_corrected"},
        condition_source=f"the profile's conditions (unit {unit.name})")
    from ..measure.provenance import provenance
    inputs = [p for p in (roles["terminated"], roles.get("shorted"), roles["tone"], floor, settings.calibration) if p]
    made = provenance([Path(p) for p in inputs], root=settings.relative_to or unit, station=settings.station,
                      operator=settings.operator)
    return run_gain_method(request).with_provenance(made)


def check_batch(folder: Path, profile_path: str, *, settings: UnitSettings | None = None,
                workers: int | None = None, progress: Callable[[int], None] | None = None) -> list[UnitOutcome]:
    """Check every unit of `folder` on the available cores; outcomes in unit order."""
    load_profile(profile_path)  # a bad profile is refused before any work
    units = find_units(folder)
    settings = settings or UnitSettings()
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
