"""Where a result came from, for the record: software, time, station, operator, and each input file with
its SHA-256, named relative to the folder of the results file (so a results folder moved together with
its captures still names them)."""

from __future__ import annotations

import datetime as _dt
import os
import socket
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from ..io.hashing import sha256_of

__all__ = ["provenance"]


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
    return {"software": f"benchnf {__version__}",
            "created_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
            "station": station or os.environ.get("BENCHNF_STATION") or socket.gethostname(),
            "operator": operator or os.environ.get("BENCHNF_OPERATOR"),
            "inputs": [{"file": _name(p, root), "sha256": sha256_of(p)} for p in seen]}
