"""Where a result came from, for the record: software, time, station, operator, each input file with its
SHA-256 and the identity of each calibration used, files named relative to a root: the folder of the
results file unless the user states another (so a results folder moved together with its captures still
names them)."""

from __future__ import annotations

import datetime as _dt
import json
import os
import socket
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar

from ..codec import figure
from ..io.hashing import sha256_of
from ..io.opener import input_kind
from ..io.sidecar import sidecar_candidates

__all__ = ["Provenance", "InputFile", "CalibrationUsed", "provenance", "station_name", "operator_name"]

_SHA256 = "^[0-9a-f]{64}$"


@dataclass(frozen=True)
class InputFile:
    """A file the result was made from, named relative to the results file's folder (or a stated root)."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"sha256": dict(pattern=_SHA256)}

    file: str
    sha256: str


@dataclass(frozen=True)
class CalibrationUsed:
    """A calibration file the result used: its name and hash, when it was made, its volts per full scale."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"sha256": dict(pattern=_SHA256)}

    file: str
    sha256: str
    made_at: str | None = None
    volts_per_fs: float | None = None


@dataclass(frozen=True)
class Provenance:
    """Where a result came from: software, time, station, operator, each input with its SHA-256."""

    RANGES: ClassVar[dict[str, dict[str, Any]]] = {"software": dict(pattern="^benchnf ")}

    software: str
    created_utc: str
    station: str
    operator: str | None
    inputs: tuple[InputFile, ...]
    calibrations: tuple[CalibrationUsed, ...] | None = figure(default=None, omit_if_none=True)


def _name(path: Path, root: Path) -> str:
    try:
        return os.path.relpath(path.resolve(), root.resolve())
    except ValueError:  # another drive (Windows)
        return str(path.resolve())


def provenance(inputs: Iterable[Path], *, root: Path, station: str | None = None,
               operator: str | None = None) -> Provenance:
    """The provenance of a result written into `root`."""
    from .. import __version__
    seen: dict[Path, None] = {}
    for p in inputs:
        if Path(p).is_file():
            seen.setdefault(Path(p).resolve())
        if input_kind(p) == "audio":
            for extra in sidecar_candidates(Path(p)):
                if extra.is_file():
                    seen.setdefault(extra.resolve())  # a capture's sidecar is part of what was read
    named = [InputFile(_name(p, root), sha256_of(p)) for p in seen]
    calibrations = tuple(CalibrationUsed(item.file, item.sha256, **c) for p, item in zip(seen, named)
                         if (c := _calibration(p)))
    return Provenance(f"benchnf {__version__}", _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
                      station_name(station), operator_name(operator), tuple(named), calibrations or None)


def station_name(stated: str | None = None) -> str:
    """The station: as stated, else BENCHNF_STATION, else the host name."""
    return stated or os.environ.get("BENCHNF_STATION") or socket.gethostname()


def operator_name(stated: str | None = None) -> str | None:
    """The operator: as stated, else BENCHNF_OPERATOR, else unknown (None)."""
    return stated or os.environ.get("BENCHNF_OPERATOR") or None


def _calibration(path: Path) -> dict[str, Any] | None:
    """What identifies a calibration file besides its name and hash (when it was made, its volts per full
    scale), or None for any other input."""
    from ..calibration import CALIBRATION_SCHEMA
    if path.suffix.lower() != ".json":
        return None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError):
        return None
    if not isinstance(data, dict) or data.get("schema") != CALIBRATION_SCHEMA:
        return None
    made, vpfs = data.get("made_at"), data.get("volts_per_fs")
    return {"made_at": made if isinstance(made, str) else None,
            "volts_per_fs": float(vpfs) if isinstance(vpfs, (int, float)) and not isinstance(vpfs, bool) else None}
