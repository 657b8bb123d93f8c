"""One command per registered measurement (:mod:`benchnf.registry`): its options, then resolve, measure,
present, write.

The command prints the view of the result (:mod:`benchnf.report.render_text`), writes ``--json`` (the typed
result with its provenance) and ``--plot`` (the view's plots as PNG), and any extra file the measurement
names. It computes nothing itself. Building the parser imports only each measurement's options module
(argparse and the argument types), so ``benchnf --help`` stays fast.
"""

from __future__ import annotations

import argparse
import sys
from functools import partial
from typing import Any

from ..write import Writer
from ._common import check_outputs, output_options, progress, records_options, settle_station, write_outputs
from .status import ExitStatus

__all__ = ["add_parsers"]


def add_parsers(sub: Any) -> None:
    """A subcommand for every registered measurement, in the order registered."""
    from .. import registry
    for entry in registry.measurements():
        p = sub.add_parser(registry.command_name(entry), help=entry.summary, description=entry.description)
        entry.part("options")(p)
        output_options(p)
        kept = p.add_argument_group("records")
        kept.add_argument("--record", metavar="SERIAL",
                          help="keep the result in the records store under this serial (see --records)")
        records_options(kept)
        p.set_defaults(run=partial(_run, entry.name))


def _run(kind: str, args: argparse.Namespace, writer: Writer) -> int:
    from .. import registry
    from ..report.render_png import figures
    from ..report.render_text import render_text
    entry = registry.measurement(kind)
    check_outputs(args, writer)
    if getattr(args, "live", False) and entry.stream is not None:
        return int(entry.part("stream")(args, writer))
    settle_station(args)
    store = _records(args)
    request = entry.part("from_args")(args)
    with progress(0, quiet=args.quiet, label="measuring") as tick:
        result = registry.run_measurement(entry, request, progress=tick)
    for text in getattr(result, "warnings", ()):
        print(f"benchnf: warning: {text}", file=sys.stderr)
    view = entry.part("present")(result)
    print(render_text(view, explain=args.explain), end="")
    write_outputs(args, writer, result, lambda: figures(view))
    if entry.outputs is not None:
        entry.part("outputs")(args, writer, result)
    if store is not None:
        from ..records.entry import measurement_record
        try:
            store.add(measurement_record(result, serial=args.record, station=args.station, operator=args.operator))
        finally:
            store.close()
        print(f"recorded as {args.record} in {args.records}")
    return ExitStatus.OK


def _records(args: argparse.Namespace) -> Any:
    """The records store a --record goes to, opened (and refused) before anything is measured."""
    if args.record is None:
        return None
    from ..records.entry import serial_ok
    args.record = serial_ok(args.record)  # refused now, before anything is measured
    if not args.records:
        from ..errors import BenchError
        raise BenchError("--record needs the records store: give --records URL (or BENCHNF_RECORDS, or a station "
                         "file's records)")
    from ..records import connect
    return connect(args.records)
