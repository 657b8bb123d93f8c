"""benchnf eni: the options of the en/in sweep (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ._common import sweep_options
from ._types import gain_db, positive_ohm, positive_volts, resistor_kelvin, source_ohm


def add_options(p: argparse.ArgumentParser) -> None:
    """The options of ``benchnf eni``."""
    p.add_argument("captures", type=_sweep_item, nargs="+", metavar="FILE@RS_OHM",
                   help="captures with the input terminated in RS (0 = shorted); FILE@RS@TONE gives each its "
                        "own tone capture for the gain through that Rs")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--tone", type=Path, metavar="FILE", help="tone capture for the gain (all captures)")
    g.add_argument("--gain-db", type=gain_db, metavar="G", help="stated voltage gain, dB")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V", help="tone RMS at the source")
    p.add_argument("--zin-ohm", type=positive_ohm, metavar="OHM",
                   help="DUT input impedance, when tone levels were taken at the DUT terminals")
    p.add_argument("--temperature-k", type=resistor_kelvin, metavar="K", help="resistor temperature for every capture")
    sweep_options(p, band_default=(20.0, 20_000.0),
                   band_help="band of the one-third-octave rows (default 20 20000 Hz)")


def _sweep_item(text: str) -> tuple[Path, float, Path | None]:
    parts = text.split("@")
    if len(parts) not in (2, 3):
        raise argparse.ArgumentTypeError(f"{text!r} is not FILE@RS_OHM (or FILE@RS_OHM@TONE_FILE)")
    try:
        rs = source_ohm(parts[1])
    except argparse.ArgumentTypeError as err:
        raise argparse.ArgumentTypeError(f"{text!r}: {err}") from None
    return Path(parts[0]), rs, Path(parts[2]) if len(parts) == 3 else None


def request_from_args(args: argparse.Namespace) -> Any:
    from ..measure.stage_requests import CaptureOptions, SweepRequest
    return SweepRequest(
        captures=tuple(args.captures), tone=args.tone, gain_db=args.gain_db, tone_input_vrms=args.tone_input_vrms,
        zin_ohm=args.zin_ohm, temperature_k=args.temperature_k, floor=args.floor, band_hz=tuple(args.band),
        segment_length=args.segment,
        options=CaptureOptions(channel=args.channel, volts_per_fs=args.volts_per_fs, calibration=args.calibration))
