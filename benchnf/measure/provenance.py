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
from pathlib import Path
from typing import Any

from ..io.hashing import sha256_of

__all__ = ["provenance", "station_name", "operator_name"]


def _name(path: Path, root: Path) -> str:
    try:
        return os.path.relpath(path.resolve(), root.resolve())
    except ValueError:  # another drive (Windows)
        return str(path.resolve())


def provenance(inputs: Iterable[Path], *, root: Path, station: str | None = None,
               operator: str | None = None) -> dict[str, Any]:
    """The provenance block of a results JSON written into `root`."""
    from .. import __version__
    seen: dict[Path, None] = {}
    for p in inputs:
        if Path(p).is_file():
            seen.setdefault(Path(p).resolve())
        for extra in (Path(p).with_suffix(".json"), Path(p).with_name(Path(p).name + ".json")):
            if Path(p).suffix.lower() not in (".json", ".toml") and extra.is_file():
                seen.setdefault(extra.resolve())  # a capture's sidecar is part of what was read
    named = [{"file": _name(p, root), "sha256": sha256_of(p)} for p in seen]
    block = {"software": f"benchnf {__version__}",
             "created_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
             "station": station_name(station), "operator": operator_name(operator), "inputs": named}
    calibrations = [{**item, **c} for p, item in zip(seen, named) if (c := _calibration(p))]
    return {**block, "calibrations": calibrations} if calibrations else block


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
    return {"made_at": data.get("made_at"), "volts_per_fs": data.get("volts_per_fs")}
