"""Argument types: each validates one quantity at the boundary and names it when it refuses."""

from __future__ import annotations

import argparse
import math
from collections.abc import Callable
from pathlib import Path

__all__ = ["positive_ohm", "positive_volts", "positive_hz", "non_negative_hz", "kelvin", "non_negative_pct",
           "finite_db", "channel_index", "segment_samples", "positive_seconds", "channel_count", "resistor_kelvin",
           "celsius", "gain_db", "source_ohm", "update_rate", "finite_number", "positive_db", "fraction",
           "whole_count", "loss_db", "mains_hz", "existing_folder"]


def _number(text: str, what: str, ok: Callable[[float], bool], units: tuple[str, ...] = ()) -> float:
    """`text` in any form of :func:`benchnf.notation.parse_number`, checked against `ok`."""
    from ..notation import parse_number
    try:
        value = parse_number(text, units=units)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number ({what}; forms like 150, 2k2, 150R, 1m, "
                                         f"10u, 1.5e3 are accepted)") from None
    if not (math.isfinite(value) and ok(value)):
        raise argparse.ArgumentTypeError(f"{text!r} is not {what}")
    return value


_OHM = ("ohm", "ohms", "\u03a9")


def positive_ohm(text: str) -> float:
    return _number(text, "a resistance > 0 ohm and at most 1 Gohm", lambda v: 0 < v <= 1e9, _OHM)


def source_ohm(text: str) -> float:
    return _number(text, "a source resistance from 0 (shorted) to 1 Gohm", lambda v: 0 <= v <= 1e9, _OHM)


def update_rate(text: str) -> float:
    return _number(text, "a rate > 0 and at most 100 per second", lambda v: 0 < v <= 100)


def finite_number(text: str) -> float:
    return _number(text, "a finite number", lambda v: True)


def mains_hz(text: str) -> float:
    return _number(text, "a mains frequency from 16 to 440 Hz", lambda v: 16 <= v <= 440)


def positive_volts(text: str) -> float:
    return _number(text, "a voltage > 0 V and at most 1 kV", lambda v: 0 < v <= 1e3, ("V", "Vrms"))


def positive_hz(text: str) -> float:
    return _number(text, "a positive frequency in Hz", lambda v: v > 0, ("Hz",))


def non_negative_hz(text: str) -> float:
    return _number(text, "a frequency >= 0 Hz", lambda v: v >= 0, ("Hz",))


def kelvin(text: str) -> float:
    """A noise temperature: a hot load or a source's equivalent temperature may be far above room."""
    return _number(text, "a temperature above 0 K and at most 1e7 K", lambda v: 0 < v <= 1e7, ("K",))


def resistor_kelvin(text: str) -> float:
    """A resistor's physical temperature."""
    return _number(text, "a resistor temperature above 0 K and at most 1000 K", lambda v: 0 < v <= 1000, ("K",))


def celsius(text: str) -> float:
    return _number(text, "a temperature above -273.15 C and at most 1e7 C", lambda v: -273.15 < v <= 1e7)


def non_negative_pct(text: str) -> float:
    return _number(text, "a number >= 0", lambda v: v >= 0)


def finite_db(text: str) -> float:
    return _number(text, "a number of dB from -200 to 200", lambda v: -200 <= v <= 200)


def gain_db(text: str) -> float:
    return _number(text, "a voltage gain from -100 to 200 dB", lambda v: -100 <= v <= 200)


def positive_number(text: str) -> float:
    return _number(text, "a number > 0", lambda v: v > 0)


def positive_db(text: str) -> float:
    return _number(text, "a number of dB > 0 and at most 100", lambda v: 0 < v <= 100)


def fraction(text: str) -> float:
    return _number(text, "a fraction from 0 to 0.45", lambda v: 0 <= v <= 0.45)


def probability(text: str) -> float:
    return _number(text, "a probability from 0.5 up to (not including) 1, e.g. 0.95", lambda v: 0.5 <= v < 1)


def iso_time(text: str) -> str:
    """An ISO 8601 date or date and time (``2026-12-01``, ``2026-12-01T08:00``, ``...+01:00``), as the UTC text
    the records keep (a time without an offset is taken as UTC); anything else refused."""
    import datetime as dt
    import re
    s = text.strip()
    if not re.fullmatch(r"\d{4}-\d{2}-\d{2}([T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})?)?", s):
        raise argparse.ArgumentTypeError(f"{text!r} is not an ISO 8601 date or time: write e.g. 2026-12-01 or "
                                         f"2026-12-01T08:00 (UTC unless an offset such as +01:00 follows)")
    try:
        when = dt.datetime.fromisoformat(s.replace("Z", "+00:00"))
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a date that exists") from None
    if len(s) == 10:
        return s
    if when.tzinfo is None:
        when = when.replace(tzinfo=dt.timezone.utc)
    return when.astimezone(dt.timezone.utc).isoformat(timespec="seconds")


#: The formats a records export is written in, by the output file's suffix.
EXPORT_SUFFIXES = (".csv", ".parquet")


def export_file(text: str) -> Path:
    """An export file whose suffix names its format (.csv or .parquet); any other refused."""
    path = Path(text)
    if path.suffix.lower() not in EXPORT_SUFFIXES:
        raise argparse.ArgumentTypeError(f"{text}: the suffix names the format, one of {', '.join(EXPORT_SUFFIXES)} "
                                         f"(a spreadsheet opens the .csv)")
    return path


def existing_folder(text: str) -> Path:
    path = Path(text)
    if not path.is_dir():
        raise argparse.ArgumentTypeError(f"{text!r} is not an existing folder")
    return path


def _integer(text: str, what: str, ok: Callable[[int], bool], refusal: str) -> int:
    """`text` as an int: "is not {what}" if it is not one, `refusal` (after the text) if `ok` says no."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not {what}") from None
    if not ok(value):
        raise argparse.ArgumentTypeError(f"{text!r}{refusal}")
    return value


def whole_count(text: str) -> int:
    return _integer(text, "a whole number (1, 2, ...)", lambda v: 1 <= v <= 10_000,
                    " is not a whole number from 1 to 10000")


def loss_db(text: str) -> float:
    return _number(text, "a loss from 0 to 60 dB", lambda v: 0 <= v <= 60)


def channel_index(text: str) -> int:
    return _integer(text, "a channel number (0, 1, ...)", lambda v: v >= 0,
                    " is not a channel number: channels count from 0")


def channel_pair(text: str) -> tuple[int, int]:
    parts = text.split(",")
    if len(parts) != 2:
        raise argparse.ArgumentTypeError(f"{text!r} is not two channels A,B (for example 0,1)")
    a, b = (channel_index(x.strip()) for x in parts)
    if a == b:
        raise argparse.ArgumentTypeError(f"{text!r} names one channel twice: the cross-spectrum needs two inputs")
    return a, b


def reference_channel(text: str) -> tuple[int, str]:
    """``N`` or ``N=NAME``: a channel carrying a reference, and the name the results give it."""
    from ..errors import ParameterError
    from ..measure.attribution import parse_reference
    try:
        return parse_reference(text)
    except ParameterError as err:
        raise argparse.ArgumentTypeError(str(err)) from None


def segment_samples(text: str) -> int:
    return _integer(text, "a whole number of samples", lambda v: v >= 64, ": a segment needs at least 64 samples")



def positive_seconds(text: str) -> float:
    return _number(text, "a duration > 0 s", lambda v: v > 0, ("s",))


def non_negative_seconds(text: str) -> float:
    return _number(text, "a duration >= 0 s", lambda v: v >= 0, ("s",))


def channel_count(text: str) -> int:
    return _integer(text, "a number of channels (1, 2, ...)", lambda v: 1 <= v <= 64,
                    " is not a number of channels from 1 to 64")


def port_number(text: str) -> int:
    """A TCP port: 0 (any free one) to 65535."""
    return _integer(text, "a TCP port number", lambda n: 0 <= n <= 65535, " is not a TCP port (0 to 65535)")


def device_amps(text: str) -> float:
    """A transistor's quiescent current or leakage: above 0 A and at most 1 A."""
    return _number(text, "a current above 0 A and at most 1 A", lambda v: 0 < v <= 1.0, ("A",))


def non_negative_amps(text: str) -> float:
    return _number(text, "a current from 0 A to 1 A", lambda v: 0 <= v <= 1.0, ("A",))


def non_negative_ohm(text: str) -> float:
    return _number(text, "a resistance from 0 ohm to 1 Gohm", lambda v: 0 <= v <= 1e9, _OHM)


def finite_volts(text: str) -> float:
    return _number(text, "a voltage from -1 kV to 1 kV", lambda v: -1e3 <= v <= 1e3, ("V",))


def siemens(text: str) -> float:
    return _number(text, "a transconductance above 0 S and at most 100 S", lambda v: 0 < v <= 100, ("S",))


def non_negative_number(text: str) -> float:
    return _number(text, "a number >= 0", lambda v: v >= 0)
