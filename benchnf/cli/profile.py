"""benchnf profile."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options, decision_rule_option
from ._types import non_negative_pct, probability
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("profile", help="make a known-good profile from results JSON files",
                       description="Limits from the results of three or more known-good units: normal tolerance "
                                   "limits (ISO 16269-6) of their spread, moved out by each figure's U "
                                   "(docs/check.md).")
    p.add_argument("results", type=Path, nargs="+", metavar="GOOD.json", help="results of 'benchnf analyze --json'")
    p.add_argument("--coverage", type=probability, default=0.95, metavar="P",
                   help="fraction of good units the limits contain (0.95)")
    p.add_argument("--confidence", type=probability, default=0.95, metavar="C",
                   help="confidence that they do (0.95)")
    p.add_argument("--margin-db", type=non_negative_pct, default=0.0, metavar="M",
                   help="an extra margin in dB on every limit (0)")
    p.add_argument("--name", metavar="TEXT", help="the profile's name")
    decision_rule_option(p)
    p.add_argument("-o", "--output", type=Path, required=True, metavar="PROFILE.toml",
                   help="profile to write (never overwritten)")
    common_options(p)
    p.set_defaults(run=run)


def serial_of(path: Path) -> str:
    """A unit's name from its results file: the file's stem, or its folder's name for a generic one."""
    return path.parent.name if path.stem.lower() in ("results", "result") and path.parent.name else path.stem


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..check.population import profile_from_results
    from ..check.profile import profile_from_data
    from ..io.toml_file import parse_toml
    from ..registry import read_result
    out = writer.target(args.output)
    same = [p for i, p in enumerate(args.results) if Path(p).resolve() in {Path(q).resolve() for q in args.results[:i]}]
    if same:
        from ..errors import ParameterError
        raise ParameterError(f"{same[0]} is given more than once: give each known-good unit's results once")
    results = [read_result(p, kinds=("analysis",)) for p in args.results]
    prof = profile_from_results(results, coverage=args.coverage, confidence=args.confidence,
                                margin_db=args.margin_db, name=args.name or "known good",
                                serials=[serial_of(Path(p)) for p in args.results],
                                decision_rule=args.decision_rule or "zones")
    text = prof.to_toml()
    profile_from_data(parse_toml(text, f"the profile made for {out}"), where=out)  # it must load again
    writer.text(out, text)
    print(f"profile of {len(results)} known-good units, {len(prof.limits)} limits, {len(prof.masks)} mask(s), "
          f"{len(prof.hum)} hum limit(s), decision rule {prof.decision_rule}: written to {out}")
    if prof.origin is not None:
        print(prof.origin.describe())
    return ExitStatus.OK
