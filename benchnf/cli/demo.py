"""benchnf demo."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("demo", help="analyse the shipped demo captures",
                       description="Calibrate and analyse the demo captures (invented data) and "
                                   "write a results folder.")
    p.add_argument("-o", "--output", type=Path, default=Path("benchnf-results"), metavar="DIR",
                   help="results folder (default ./benchnf-results; a new numbered one if taken)")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..demo import run_demo as demo
    demo(output=args.output, quiet=args.quiet, writer=writer)
    return ExitStatus.OK

