"""benchnf budget."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import (
    sweep_options,
    write_outputs,
)
from ._types import gain_db, positive_ohm, positive_volts, resistor_kelvin
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("budget", help="measured stage budget from tap captures, against the prediction",
                       description="Input-referred noise after each stage, from captures at each stage's "
                                   "output (the chain's input terminated) with a tone capture for each tap's "
                                   "gain, beside the prediction from the chain file.")
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
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..measure.stage_requests import BudgetRequest, CaptureOptions, run_budget
    from ..report.plots import budget_figures
    from ..report.stages_text import format_budget
    result = run_budget(BudgetRequest(
        taps=tuple((Path(n), Path(t)) for n, t in args.tap), chain=args.chain, tone_input_vrms=args.tone_input_vrms,
        gain_db=args.gain_db, rs_ohm=args.rs, temperature_k=args.temperature_k, floor=args.floor,
        band_hz=tuple(args.band), segment_length=args.segment,
        options=CaptureOptions(channel=args.channel, volts_per_fs=args.volts_per_fs, calibration=args.calibration)))
    print(format_budget(result), end="")
    write_outputs(args, writer, result.to_dict(), lambda: budget_figures(result))
    return ExitStatus.OK
