"""benchnf devices."""

from __future__ import annotations

import argparse
from typing import Any

from ..write import Writer
from ._common import common_options
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("devices", help="list audio devices (name, host API, channels, native rate)")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..acquire.devices import list_devices
    devices = list_devices()
    print(f"  {'name':40s} {'host API':14s} {'in':>4} {'out':>4} {'native Hz':>10}")
    for d in devices:
        print(f"  {d.name[:40]:40s} {d.host_api[:14]:14s} {d.max_input_channels:4d} {d.max_output_channels:4d} "
              f"{d.default_samplerate:10g}")
    print("\nSelect a device by (part of) its name with --device, and --host-api when names repeat.")
    return ExitStatus.OK

