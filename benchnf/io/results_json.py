"""Reading a results JSON of our own (from ``benchnf analyze --json``), checked for types and ranges."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

from ..errors import ParameterError

__all__ = ["read_results", "check_results_data"]

_NUMBERS = ("gain_db", "ein_dbu", "ein_dbv", "noise_figure_db", "nf_at_1khz_db", "input_density_at_1khz_v_per_rthz",
            "output_noise_vrms", "floor_margin_db", "flicker_corner_hz", "sample_rate_hz")
_POSITIVE = ("rs_ohm", "temperature_k")
_LISTS_OF_OBJECTS = ("spot", "spurs")


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def check_results_data(data: Any, where: str) -> dict[str, Any]:
    """Raise a ParameterError naming `where`, the key, what was found and what is expected."""
    if not isinstance(data, dict) or "schema_version" not in data:
        raise ParameterError(f"{where} is not a benchnf results JSON (no schema_version)")
    if str(data["schema_version"]) != "1":
        raise ParameterError(f"{where} has schema_version {data['schema_version']!r}; this benchnf reads results schema 1: "
                             f"use the benchnf version that wrote it, or analyse the captures again")
    for key in _NUMBERS:
        if data.get(key) is not None and not _is_number(data[key]):
            raise ParameterError(f"{where}: {key}={data[key]!r} must be a number or null")
    for key in _POSITIVE:
        if data.get(key) is not None and not (_is_number(data[key]) and data[key] > 0):
            raise ParameterError(f"{where}: {key}={data[key]!r} must be a number > 0")
    band = data.get("band_hz")
    if band is not None and not (isinstance(band, list) and len(band) == 2 and all(map(_is_number, band))):
        raise ParameterError(f"{where}: band_hz={band!r} must be [low, high] in Hz")
    for key in _LISTS_OF_OBJECTS:
        rows = data.get(key)
        if rows is not None and not (isinstance(rows, list) and all(isinstance(r, dict) for r in rows)):
            raise ParameterError(f"{where}: {key} must be a list of objects, not {type(rows).__name__}")
    if data.get("weighting") is not None and not isinstance(data["weighting"], str):
        raise ParameterError(f"{where}: weighting={data['weighting']!r} must be text")
    return data


def read_results(path: str | Path) -> dict[str, Any]:
    """Read and check a results JSON file."""
    path = Path(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ParameterError(f"{path}: no such results file") from None
    except (OSError, UnicodeDecodeError, ValueError) as err:
        raise ParameterError(f"{path} is not a readable results JSON ({err})") from err
    return check_results_data(data, str(path))
