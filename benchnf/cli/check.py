"""benchnf check."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import common_options, decision_rule_option, records_options, relative_to_option, settle_station
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("check", help="check one unit's results against a profile (exit 0 pass, 1 fail)",
                       description="Each limit PASS, MARGINAL or FAIL by the decision rule (stated with the verdict), "
                                   "with the margin, U and a suggestion; exit status 0 pass, 1 fail, 2 bad input.")
    p.add_argument("--profile", type=Path, required=True, metavar="PROFILE.toml")
    p.add_argument("results", type=Path, metavar="RESULTS.json", help="results of 'benchnf analyze --json'")
    p.add_argument("--unit", metavar="SERIAL", help="the unit's name (default: the file name)")
    p.add_argument("--report", type=Path, metavar="DIR", help="write an HTML report and a PNG summary")
    p.add_argument("--json", type=Path, metavar="OUT.json")
    decision_rule_option(p)
    relative_to_option(p)
    records_options(p)
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..check.limits import check_results
    from ..check.profile import load_profile
    from ..registry import read_result
    from ..report.present_check import present
    from ..report.render_text import render_text
    settle_station(args)
    profile = load_profile(args.profile)
    results = read_result(args.results, kinds=("analysis",))
    unit = args.unit or Path(args.results).stem
    url = args.records  # settled above: option, environment, station file
    store = None
    if url:
        from ..records import connect
        store = connect(url)  # refused now, before the check, if it cannot be opened
    res = check_results(results, profile, unit=unit, decision_rule=args.decision_rule)
    print(render_text(present(res)), end="")
    if args.json:
        from ..measure.provenance import provenance
        from ._common import input_paths
        writer.json(args.json, res.with_provenance(provenance(
            input_paths(args), root=args.relative_to or Path(args.json).parent, station=args.station,
            operator=args.operator)).to_dict())
        print(f"\nJSON written to {args.json}")
    if args.report:
        from ..report.html import unit_png, unit_report_html
        folder = writer.folder(args.report)
        page = writer.child(folder, f"{unit}.html")
        writer.text(page, unit_report_html(serial=unit, verdict=res.verdict, check=res, results=results,
                                           profile=profile))
        writer.bytes(writer.child(folder, f"{unit}.png"), unit_png(results, res, profile))
        print(f"report written to {page}")
    if store is not None:
        from ..records.entry import check_record
        store.add(check_record(res, serial=unit, verdict=res.verdict, results=results, profile=profile,
                               station=args.station, operator=args.operator))
        store.close()
        print(f"recorded in {url}")
    return ExitStatus.CHECK_FAILED if res.failed else ExitStatus.OK
