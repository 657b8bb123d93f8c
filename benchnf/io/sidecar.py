"""Sidecar metadata: a JSON object stored next to a capture file.

For ``bench/floor.flac`` the sidecar is ``bench/floor.json`` (the name
without its extension) or ``bench/floor.flac.json``; having both is an error.
Known keys (all optional): ``condition``, ``volts_per_fs``, ``rs_ohm``,
``temperature_k``, ``channel``, ``device``, ``host_api``, ``recorded_at``,
``gain_setting`` (the interface's input gain as its control reads), ``input_gain_db`` (the same in dB),
``calibration``, ``channel_volts_per_fs`` (each input's volts per full scale by channel number, for a
recording of several calibrated inputs: where present it, not ``volts_per_fs``, says each channel's), ``notes``.
Other keys are kept and passed through. The captures of one measurement are
compared on their setting (:mod:`benchnf.measure.together`).
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

from ..capture import check_condition
from ..errors import CaptureError

__all__ = ["sidecar_candidates", "find_sidecar", "read_sidecar", "write_sidecar", "sidecar_volts_per_fs"]

# Known numeric keys and the range each must lie in (low, high, low included?).
_RANGES: dict[str, tuple[float, float, bool]] = {
    "volts_per_fs": (0.0, 1e4, False), "rs_ohm": (0.0, 1e9, True), "temperature_k": (0.0, 1000.0, False),
    "tone_input_vrms": (0.0, 1e3, False), "tone_hz": (0.0, 1e9, False), "meter_vrms": (0.0, 1e3, False),
    "sample_rate_hz": (0.0, 1e9, False), "input_gain_db": (-200.0, 200.0, True),
}


def _check_number(path: Path, key: str, value: Any) -> None:
    low, high, closed = _RANGES[key]
    ok = (isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
          and (value >= low if closed else value > low) and value <= high)
    if not ok:
        rule = f"{'>=' if closed else '>'} {low:g} and <= {high:g}"
        raise CaptureError(f"sidecar {path}: {key}={value!r} must be a number {rule}")


def sidecar_candidates(capture_path: Path) -> tuple[Path, Path]:
    """The two places a sidecar may stand for `capture_path`."""
    capture_path = Path(capture_path)
    return capture_path.with_suffix(".json"), capture_path.with_name(capture_path.name + ".json")


def find_sidecar(capture_path: Path) -> Path | None:
    """Return the sidecar of `capture_path`, None if there is none; refuse two."""
    found = [p for p in dict.fromkeys(sidecar_candidates(capture_path)) if p.is_file()]
    if len(found) > 1:
        raise CaptureError(f"{capture_path.name} has two sidecars ({found[0].name} and "
                           f"{found[1].name}): keep one")
    return found[0] if found else None


def read_sidecar(capture_path: Path) -> dict[str, Any]:
    """Read and validate the sidecar of `capture_path` ({} if there is none)."""
    path = find_sidecar(Path(capture_path))
    if path is None:
        return {}
    try:
        meta = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as err:
        raise CaptureError(f"sidecar {path} is not readable JSON ({err}): fix or remove it") from err
    if not isinstance(meta, dict):
        raise CaptureError(f"sidecar {path} must hold a JSON object, not {type(meta).__name__}")
    try:
        check_condition(meta.get("condition"))
    except ValueError as err:
        raise CaptureError(f"sidecar {path}: {err}") from err
    for key in _RANGES:
        if meta.get(key) is not None:
            _check_number(path, key, meta[key])
    per = meta.get("channel_volts_per_fs")
    if per is not None:
        if not isinstance(per, dict) or not all(isinstance(k, str) and k.isdigit() for k in per):
            raise CaptureError(f"sidecar {path}: channel_volts_per_fs must map channel numbers (\"0\", \"1\", ...) "
                               f"to volts per full scale")
        for k, v in per.items():
            _check_number(path, "volts_per_fs", v)
    channel = meta.get("channel")
    if channel is not None and not (isinstance(channel, int) and not isinstance(channel, bool) and channel >= 0):
        raise CaptureError(f"sidecar {path}: channel={channel!r} must be a whole number >= 0 (channels count "
                           f"from 0)")
    return meta


def write_sidecar(capture_path: Path, metadata: dict[str, Any]) -> Path:
    """Write `metadata` as the sidecar of `capture_path` through the one writer; never overwrite one."""
    from ..write import Writer
    return Writer().json(sidecar_candidates(Path(capture_path))[0], metadata)


def sidecar_volts_per_fs(meta: dict[str, Any], channel: int) -> float | None:
    """The volts per full scale a sidecar states for `channel`: its per-channel entry where it has them, else
    its one ``volts_per_fs``."""
    per = meta.get("channel_volts_per_fs")
    if per is not None:
        value = per.get(str(channel))
        return float(value) if value is not None else None
    value = meta.get("volts_per_fs")
    return float(value) if value is not None else None

