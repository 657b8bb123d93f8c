"""benchnf profile."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options
from ._types import non_negative_pct
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("profile", help="make a known-good profile from results JSON files",
                       description="Limits from the results of one or more known-good units, with a margin "
                                   "(and their spread where several are given).")
    p.add_argument("results", type=Path, nargs="+", metavar="GOOD.json", help="results of 'benchnf analyze --json'")
    p.add_argument("--margin-db", type=non_negative_pct, default=1.0, metavar="M", help="margin in dB (1)")
    p.add_argument("--name", metavar="TEXT", help="the profile's name")
    p.add_argument("-o", "--output", type=Path, required=True, metavar="PROFILE.toml",
                   help="profile to write (never overwritten)")
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..check.profile import profile_from_data, profile_from_results
    from ..io.toml_file import parse_toml
    from ..registry import read_result
    out = writer.target(args.output)
    results = [read_result(p, kinds=("analysis",)) for p in args.results]
    prof = profile_from_results(results, margin_db=args.margin_db, name=args.name or "known good")
    text = prof.to_toml()
    profile_from_data(parse_toml(text, f"the profile made for {out}"), where=out)  # it must load again
    writer.text(out, text)
    print(f"profile of {len(results)} known-good unit(s), {len(prof.limits)} limits, {len(prof.masks)} mask(s), "
          f"{len(prof.hum)} hum limit(s), margin {args.margin_db:g} dB: written to {out}")
    return ExitStatus.OK

