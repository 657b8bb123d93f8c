"""benchnf recover."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("recover", help="rescue the samples of a WAV left with a stale header by a crash")
    p.add_argument("damaged", type=Path, metavar="DAMAGED.wav")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="NEW.wav")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..acquire.record import recover_wav
    frames = recover_wav(args.damaged, args.output, writer=writer)
    print(f"{frames} frames rescued from {args.damaged} into {args.output}; the damaged file was not changed")
    return ExitStatus.OK

