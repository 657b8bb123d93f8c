"""Writing results as JSON, atomically, never over an input file."""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from ..errors import ParameterError

__all__ = ["write_json", "check_output_path"]


def check_output_path(path: Path, inputs: Iterable[Path | None]) -> None:
    """Refuse an output path that is one of the inputs."""
    target = Path(path).resolve()
    for p in inputs:
        if p is not None and Path(p).resolve() == target:
            raise ParameterError(f"the output {path} is one of the input files: choose another name "
                                 f"(nothing was written)")


def write_json(data: dict[str, Any], path: str | Path) -> Path:
    """Write `data` to `path` through a temporary file, so a failure leaves no half file."""
    path = Path(path)
    if path.parent and not path.parent.exists():
        raise ParameterError(f"folder {path.parent} does not exist: create it first")
    fd, tmp = tempfile.mkstemp(prefix=".benchnf-", suffix=".json", dir=path.parent or ".")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(data, fh, indent=2, allow_nan=False)
            fh.write("\n")
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path
