"""The station file: one small TOML file of our own that says which test station this is, who works at it,
where its checks are recorded and which calibration it uses, so scripts on that station need not repeat them.

    station = "bench-3"
    operator = "ann"
    records = "records.db"                 # a file path, sqlite:///FILE or postgresql://USER@HOST/DB
    calibration = "cal/today.json"        # written by 'benchnf calibrate'
    relative_to = "/srv/bench"             # inputs are named relative to this folder in the provenance

Every key is optional. A relative path (records given as a path, calibration, relative_to) is taken from the station
file's folder, so the file means the same wherever the command is started.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..errors import ParameterError
from .toml_file import check_keys, read_toml

__all__ = ["StationFile", "read_station_file"]

_KEYS = {"station", "operator", "records", "calibration", "relative_to"}


@dataclass(frozen=True)
class StationFile:
    """What a station file states; None where it is silent."""

    path: Path
    station: str | None = None
    operator: str | None = None
    records: str | None = None
    calibration: Path | None = None
    relative_to: Path | None = None


def _text(table: dict[str, object], key: str, where: str) -> str | None:
    value = table.get(key)
    if value is None:
        return None
    if not isinstance(value, str) or not value.strip():
        raise ParameterError(f"{where}: '{key}' must be a non-empty text in quotes, found {value!r}")
    return value.strip()


def read_station_file(path: str | Path) -> StationFile:
    """Read and check a station file (unknown keys and wrong types are refused, in one line)."""
    path = Path(path)
    table = read_toml(path, "station file")
    where = f"station file {path}"
    check_keys(table, _KEYS, where)
    records = _text(table, "records", where)
    if records is not None and "://" not in records:
        records = str(path.parent / Path(records).expanduser())
    calibration = _text(table, "calibration", where)
    relative_to = _text(table, "relative_to", where)
    return StationFile(path=path, station=_text(table, "station", where), operator=_text(table, "operator", where),
                       records=records,
                       calibration=path.parent / Path(calibration).expanduser() if calibration else None,
                       relative_to=path.parent / Path(relative_to).expanduser() if relative_to else None)
