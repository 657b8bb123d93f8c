"""benchnf eni."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import (
    sweep_options,
    write_outputs,
)
from ._types import gain_db, positive_ohm, positive_volts, resistor_kelvin, source_ohm
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("eni", help="amplifier en and in from a source-resistance sweep, NF against Rs",
                       description="Voltage noise en and current noise in (and their correlation with three "
                                   "or more resistances) per one-third-octave band, Ropt and NFmin.")
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
    p.set_defaults(run=run)


def _sweep_item(text: str) -> tuple[Path, float, Path | None]:
    parts = text.split("@")
    if len(parts) not in (2, 3):
        raise argparse.ArgumentTypeError(f"{text!r} is not FILE@RS_OHM (or FILE@RS_OHM@TONE_FILE)")
    try:
        rs = source_ohm(parts[1])
    except argparse.ArgumentTypeError as err:
        raise argparse.ArgumentTypeError(f"{text!r}: {err}") from None
    return Path(parts[0]), rs, Path(parts[2]) if len(parts) == 3 else None


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..measure.stage_requests import CaptureOptions, SweepRequest, run_en_in
    from ..report.plots import eni_figures
    from ..report.stages_text import format_eni
    result = run_en_in(SweepRequest(
        captures=tuple(args.captures), tone=args.tone, gain_db=args.gain_db, tone_input_vrms=args.tone_input_vrms,
        zin_ohm=args.zin_ohm, temperature_k=args.temperature_k, floor=args.floor, band_hz=tuple(args.band),
        segment_length=args.segment,
        options=CaptureOptions(channel=args.channel, volts_per_fs=args.volts_per_fs, calibration=args.calibration)))
    print(format_eni(result), end="")
    write_outputs(args, writer, result.to_dict(), lambda: eni_figures(result))
    return ExitStatus.OK
