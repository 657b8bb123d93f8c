"""benchnf live."""

from __future__ import annotations

import argparse
from typing import Any

from ..write import Writer
from ._common import calibration_options, common_options, device_options
from ._types import non_negative_hz, positive_seconds, update_rate
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("live", help="live spectrum and integrated noise while adjusting the bench")
    device_options(p)
    p.add_argument("--band", type=non_negative_hz, nargs=2, default=[20.0, 20_000.0], metavar=("LO", "HI"))
    p.add_argument("--updates-per-s", type=update_rate, default=5.0, metavar="N")
    p.add_argument("--seconds", type=positive_seconds, metavar="S", help="stop after S seconds (default: Ctrl-C)")
    p.add_argument("--window", action="store_true", help="also show a matplotlib window")
    calibration_options(p)
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..acquire.live import run_live
    from ..dsp.weighting import Band
    vpfs = args.volts_per_fs
    if args.calibration:
        from ..calibration import Calibration
        vpfs = Calibration.load(args.calibration).volts_per_fs
    run_live(device=args.device, host_api=args.host_api, sample_rate_hz=args.rate, volts_per_fs=vpfs,
             band=Band(*args.band), update_hz=args.updates_per_s, seconds=args.seconds, window=args.window)
    return ExitStatus.OK

