"""benchnf budget: the options of the measured stage budget (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ._common import sweep_options
from ._types import gain_db, positive_ohm, positive_volts, resistor_kelvin


def add_options(p: argparse.ArgumentParser) -> None:
    """The options of ``benchnf budget``."""
    p.add_argument("chain", type=Path, nargs="?", metavar="CHAIN.toml", help="stated part data (optional)")
    p.add_argument("--tap", nargs=2, action="append", required=True, type=Path, metavar=("NOISE", "TONE"),
                   help="noise at one stage's output and a tone capture there; repeat in chain order")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="tone RMS at the source (default: each tone sidecar's tone_input_vrms)")
    p.add_argument("--gain-db", type=gain_db, help=argparse.SUPPRESS)
    p.add_argument("--rs", type=positive_ohm, metavar="OHM", help="source resistance (default: sidecar)")
    p.add_argument("--temperature-k", type=resistor_kelvin, metavar="K",
                   help="resistor temperature (default: sidecar, 290)")
    sweep_options(p, band_default=(400.0, 20_000.0),
                   band_help="band of the band-mean densities (default 400 20000 Hz)")


def request_from_args(args: argparse.Namespace) -> Any:
    from ..measure.stage_requests import BudgetRequest, CaptureOptions
    return BudgetRequest(
        taps=tuple((Path(n), Path(t)) for n, t in args.tap), chain=args.chain, tone_input_vrms=args.tone_input_vrms,
        gain_db=args.gain_db, rs_ohm=args.rs, temperature_k=args.temperature_k, floor=args.floor,
        band_hz=tuple(args.band), segment_length=args.segment,
        options=CaptureOptions(channel=args.channel, volts_per_fs=args.volts_per_fs, calibration=args.calibration))
