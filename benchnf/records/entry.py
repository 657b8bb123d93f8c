"""A check's outcome as a record: verdict, every limit with its bounds, the unit's full results, and who,
where and with which profile (by the hash of its file) it was checked."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from ..measure.provenance import operator_name, station_name
from .store import CheckRecord, LimitRow

__all__ = ["check_record", "measurement_record", "file_sha256", "serial_ok"]

_SERIAL = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")


def serial_ok(serial: str) -> str:
    """A serial as typed or scanned: letters, digits, ``.``, ``_``, ``-``; at most 64 characters."""
    from ..errors import BenchError
    serial = (serial or "").strip()
    if not _SERIAL.match(serial):
        raise BenchError(f"serial {serial!r}: use letters, digits, '.', '_' or '-' (at most 64), starting with a "
                         f"letter or digit")
    return serial


def file_sha256(path: str | Path) -> str | None:
    """The file's SHA-256, or None where it cannot be read (a profile given as data, not a file)."""
    from ..io.hashing import sha256_of
    try:
        return sha256_of(path)
    except OSError:
        return None


def _stable(name: str) -> str:
    """A limit's name without the frequency a mask was worst at (that goes with the limit text)."""
    return re.sub(r" \(worst at [^)]*\)$", "", name)


def _where(name: str, limit_text: str) -> str:
    m = re.search(r"\(worst at ([^)]*)\)$", name)
    return f"{limit_text} (worst at {m.group(1)})" if m else limit_text


def check_record(check: Any, *, serial: str, verdict: str, results: Any, profile: Any,
                 station: str | None = None, operator: str | None = None) -> CheckRecord:
    """The record of one unit's check (`check` a CheckResult, None for a unit that failed to analyse; `results`
    the unit's typed result, kept whole as its JSON)."""
    from .. import __version__
    rows = tuple(LimitRow(name=_stable(v.name), measured=v.measured, limit_text=_where(v.name, v.limit),
                          lower=v.lower, upper=v.upper, margin=v.margin, unit=v.unit, uncertainty=v.uncertainty,
                          verdict=v.verdict)
                 for v in (check.limits if check is not None else ()))
    return CheckRecord(serial=serial, verdict=verdict, profile_name=profile.name,
                       profile_sha256=file_sha256(profile.source) if profile.source else None,
                       station=station_name(station), operator=operator_name(operator),
                       software=f"benchnf {__version__}", limits=rows,
                       results=results.to_dict() if results is not None else None,
                       check=check.to_dict() if check is not None else None)


def measurement_record(result: Any, *, serial: str, station: str | None = None,
                       operator: str | None = None) -> CheckRecord:
    """The record of a measurement kept without a check (``--record SERIAL``): verdict MEASURED, no limits,
    the typed result (any registered kind) kept whole as its JSON."""
    from .. import __version__
    return CheckRecord(serial=serial_ok(serial), verdict="MEASURED", profile_name="", profile_sha256=None,
                       station=station_name(station), operator=operator_name(operator),
                       software=f"benchnf {__version__}", limits=(), results=result.to_dict(), check=None)
