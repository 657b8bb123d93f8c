"""The benchnf command: one module per command (``add_parser`` + ``run``), one error boundary.

Each command resolves what the user gave, calls the library, and emits the result through the one
writer; it computes nothing itself. Importing this package loads no numpy: ``benchnf --help`` stays
fast. Exit statuses: :class:`~benchnf.cli.status.ExitStatus`.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from typing import NoReturn

from . import (
    batch,
    calibrate,
    calibrate_output,
    check,
    demo,
    desk,
    devices,
    excite,
    live,
    measure,
    measurement,
    profile,
    record,
    records,
    recover,
)
from .boundary import run_guarded
from .status import ExitStatus

__all__ = ["main", "build_parser", "ExitStatus"]

#: The commands that are not measurements (those come from the registry, cli/measurement.py).
COMMANDS = (profile, check, batch, devices, record, excite, measure, live, calibrate_output, recover, records, desk,
            demo)


class _Parser(argparse.ArgumentParser):
    """argparse with usage errors as one line (what is wrong, where the help is) and exit status 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(ExitStatus.BAD_INPUT, f"benchnf: error: {message} (see '{self.prog} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of every command."""
    parser = _Parser(
        prog="benchnf",
        description="Gain, noise density, EIN and noise figure of low-noise amplifiers from "
                    "sound-card captures.",
        epilog="Run 'benchnf demo' to analyse the shipped demo captures. Exit status: 0 done, "
               "1 a limit failed, 2 bad input, 3 missing dependency, 70 internal error (a report file is "
               "written), 130 interrupted.")
    from .. import __version__
    parser.add_argument("--version", action="version", version=f"benchnf {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    calibrate.add_parser(sub)
    measurement.add_parsers(sub)
    for command in COMMANDS:
        command.add_parser(sub)
    return parser


def _one_blas_thread() -> None:
    """benchnf's linear algebra is tiny (batched FFTs do the work, one core each); multi-threaded BLAS
    only spins its idle threads (measured: 50 % of a core in the live view).  Set before numpy loads;
    the user's own setting wins."""
    import os
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; return its exit status (never raises, except with --traceback)."""
    if "numpy" not in sys.modules:
        _one_blas_thread()
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as done:  # --help, --version, or a usage error already reported in one line
        return int(done.code or 0)
    return run_guarded(args)
