"""Reading the small TOML files of our own formats (chains, profiles, plans, ENR tables) with tomllib."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..errors import ParameterError

__all__ = ["read_toml", "parse_toml", "check_keys", "number"]


def read_toml(path: str | Path, what: str) -> dict[str, Any]:
    """Parse `path` as TOML, or raise a ParameterError naming `what` it was meant to be."""
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib  # type: ignore[no-redef]
    path = Path(path)
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ParameterError(f"{what} {path}: no such file") from None
    except UnicodeDecodeError as err:
        raise ParameterError(f"{what} {path} is not UTF-8 text (byte {err.object[err.start]:#04x} at {err.start}): "
                             f"save it as UTF-8") from err
    except (OSError, tomllib.TOMLDecodeError) as err:
        raise ParameterError(f"{what} {path} is not valid TOML ({err})") from err


def check_keys(table: dict[str, Any], allowed: set[str], where: str) -> None:
    """Refuse keys outside `allowed` (a typo must not become a silent no-op)."""
    unknown = set(table) - allowed
    if unknown:
        raise ParameterError(f"{where}: unknown keys {sorted(unknown)} (allowed: {sorted(allowed)})")


def parse_toml(text: str, what: str) -> dict[str, Any]:
    """Parse TOML text held in memory, or raise a ParameterError naming `what` it was meant to be."""
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib  # type: ignore[no-redef]
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise ParameterError(f"{what} is not valid TOML ({err})") from err


def number(value: Any, *, where: str, key: str, low: float = -math.inf, high: float = math.inf,
           low_open: bool = False) -> float:
    """`value` as a float if it is a number in range, else a ParameterError naming where, key, found and rule."""
    ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
    if ok:
        ok = (value > low if low_open else value >= low) and value <= high
    if not ok:
        rule = f"{'>' if low_open else '>='} {low:g}" if math.isfinite(low) else ""
        rule += (" and " if rule and math.isfinite(high) else "") + (f"<= {high:g}" if math.isfinite(high) else "")
        shown = format(value, "g") if isinstance(value, (int, float)) and not isinstance(value, bool) else repr(value)
        raise ParameterError(f"{where}: {key}={shown} must be a number{' ' + rule if rule else ''}")
    return float(value)
