"""benchnf cascade: the options of the cascade prediction (the command itself is cli/measurement.py)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ._types import positive_db


def add_options(p: argparse.ArgumentParser) -> None:
    """The options of ``benchnf cascade``."""
    p.add_argument("chain", type=Path, metavar="CHAIN.toml")
    p.add_argument("--improve-db", type=positive_db, default=1.0, metavar="DB",
                   help="improvement tried on each stage for the ranking (default 1 dB)")
    p.add_argument("--what-if", nargs="+", metavar=("STAGE", "KEY=VALUE"),
                   help="swap one stage's data: --what-if STAGE KEY=VALUE ..., keys gain, nf, te, loss, temperature_k, "
                        "en, in, output_ohm (or their full names), e.g. --what-if 2 nf=1.2 or --what-if 1 en=0.3n")


def request_from_args(args: argparse.Namespace) -> Any:
    from ..measure.cascade import CascadeRequest
    stage, *pairs = args.what_if or [None]
    return CascadeRequest(args.chain, args.improve_db, stage, tuple(pairs))
