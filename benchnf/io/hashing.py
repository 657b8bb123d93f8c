"""The SHA-256 of a file, read in blocks (inputs' identity in calibrations, provenance and records)."""

from __future__ import annotations

import hashlib
from pathlib import Path

__all__ = ["sha256_of"]


def sha256_of(path: str | Path) -> str:
    """Hex SHA-256 of the file at `path` (read 1 MiB at a time)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()
