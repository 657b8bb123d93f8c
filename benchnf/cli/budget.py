"""benchnf budget."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import (
    gain_for,
    load_calibration,
    open_input,
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
    p.add_argument("--tap", nargs=2, action="append", required=True, metavar=("NOISE", "TONE"),
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
    from ..dsp.weighting import Band
    from ..noise.cascade import load_chain
    from ..report.stages_text import format_budget
    from ..measure.stages import measured_budget
    chain = load_chain(args.chain) if args.chain else None
    cal = load_calibration(args)
    taps = []
    for i, (noise, tone) in enumerate(args.tap, 1):
        name = chain.stages[i - 1].name if chain is not None and i <= len(chain.stages) else f"tap {i}"
        taps.append((name, open_input(Path(noise), condition=None, args=args, cal=cal),
                     gain_for(args, cal, Path(tone))))
    rs = args.rs if args.rs is not None else taps[0][1].metadata.get("rs_ohm")
    if rs is None or not rs > 0:
        raise BenchError("give the source resistance the chain's input is terminated in: --rs OHM")
    temperature = args.temperature_k or taps[0][1].metadata.get("temperature_k", 290.0)
    result = measured_budget(taps=taps, rs_ohm=float(rs), temperature_k=float(temperature),
                             floor=open_input(args.floor, condition="floor", args=args, cal=cal), chain=chain,
                             band=Band(*args.band), segment_length=args.segment)
    print(format_budget(result), end="")
    from ..report.plots import budget_figures
    write_outputs(args, writer, result.to_dict(), lambda: budget_figures(result))
    return ExitStatus.OK

