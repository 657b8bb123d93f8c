"""benchnf batch."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import (
    calibration_options,
    common_options,
    decision_rule_option,
    progress,
    records_options,
    relative_to_option,
    settle_station,
    verdict_table,
)
from ._types import non_negative_hz, positive_ohm, positive_volts, resistor_kelvin, whole_count
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("batch", help="check a folder of units in parallel",
                       description="One subfolder per unit (its name the serial): results.json, or captures "
                                   "(terminated, tone, optional floor). Writes an HTML report per unit, "
                                   "summary.csv, junit.xml and appends a history file.")
    p.add_argument("units", type=Path, metavar="UNITS_DIR")
    p.add_argument("--profile", type=Path, required=True, metavar="PROFILE.toml")
    p.add_argument("-o", "--output", type=Path, default=Path("benchnf-check"), metavar="DIR",
                   help="folder for the reports (default ./benchnf-check)")
    p.add_argument("--floor", type=Path, metavar="FILE", help="analyzer floor for units without their own")
    p.add_argument("--tone-input-vrms", type=positive_volts, metavar="V",
                   help="tone level at the source, when the tone sidecars do not state it")
    p.add_argument("--rs", type=positive_ohm, metavar="OHM",
                   help="source resistance (must agree with the sidecars and the profile)")
    p.add_argument("--temperature-k", type=resistor_kelvin, metavar="K",
                   help="source resistor temperature (must agree with the sidecars and the profile)")
    p.add_argument("--band", type=non_negative_hz, nargs=2, metavar=("LO", "HI"),
                   help="integration band in Hz (must agree with the profile)")
    p.add_argument("--weighting", choices=["none", "A", "C", "468", "468-2k"],
                   help="weighting (must agree with the profile)")
    p.add_argument("--history", type=Path, metavar="FILE", help="history CSV to append to (default DIR/history.csv)")
    decision_rule_option(p)
    p.add_argument("--workers", type=whole_count, metavar="N", help="parallel processes (default: the cores)")
    calibration_options(p)
    relative_to_option(p)
    records_options(p)
    common_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..check.batch import UnitSettings, check_batch, find_units
    from ..report.batch_files import HISTORY_HEADER, history_lines, junit_xml, summary_csv
    from ..check.profile import load_profile
    from ..report.html import unit_png, unit_report_html
    settle_station(args)
    if args.calibration:
        from ..calibration import Calibration
        Calibration.load(args.calibration)  # refused now, in one line, not once per unit
    profile = load_profile(args.profile)
    units = find_units(args.units)
    if args.history:
        writer.appendable(args.history, HISTORY_HEADER)  # refused before the output folder is made
    url = args.records  # settled above: option, environment, station file
    store = None
    if url:
        from ..records import connect
        store = connect(url)  # refused now, before any unit is analysed
    out = writer.folder(args.output)
    history = writer.appendable(args.history or out / "history.csv", HISTORY_HEADER)
    for name in ("summary.csv", "junit.xml", *(f"{u.name}.{x}" for u in units for x in ("html", "png"))):
        writer.target(writer.child(out, name))  # refused now, before any unit is analysed
    settings = UnitSettings(
        calibration=args.calibration, volts_per_fs=args.volts_per_fs, floor=args.floor,
        tone_input_vrms=args.tone_input_vrms, rs_ohm=args.rs, temperature_k=args.temperature_k,
        band_hz=tuple(args.band) if args.band else None, weighting=args.weighting, station=args.station,
        operator=args.operator, relative_to=args.relative_to, decision_rule=args.decision_rule)
    with progress(len(units), quiet=args.quiet, label="checking") as tick:
        outcomes = check_batch(Path(args.units), str(args.profile), settings=settings, workers=args.workers,
                               progress=tick)
    rows = []
    for o in outcomes:
        failed = [v.name for v in (o.check.limits if o.check else ()) if v.verdict != "PASS"]
        rows.append((o.serial, o.verdict, o.error or ", ".join(failed)))
        writer.text(writer.child(out, f"{o.serial}.html"),
                    unit_report_html(serial=o.serial, verdict=o.verdict, check=o.check, results=o.results,
                                     profile=profile, error=o.error))
        if o.results:
            writer.bytes(writer.child(out, f"{o.serial}.png"), unit_png(o.results, o.check, profile))
    writer.text(out / "summary.csv", summary_csv(outcomes))
    writer.text(out / "junit.xml", junit_xml(outcomes, profile=profile.name))
    writer.append_lines(history, HISTORY_HEADER, history_lines(outcomes, profile=profile.name))
    if store is not None:
        from ..records.entry import check_record
        for o in outcomes:
            store.add(check_record(o.check, serial=o.serial, verdict=o.verdict, results=o.results, profile=profile,
                                   station=args.station, operator=args.operator))
        store.close()
        print(f"{len(outcomes)} units recorded in {url}")
    counts = {k: sum(o.verdict == k for o in outcomes) for k in ("PASS", "MARGINAL", "FAIL", "ERROR")}
    print(f"benchnf - {len(outcomes)} units against profile {profile.name!r}\n")
    print(verdict_table([("unit", "verdict", "limits not passed / error")] + rows))
    print("\n  " + ", ".join(f"{v} {k.lower()}" for k, v in counts.items()))
    print(f"\nreports, summary.csv and junit.xml in {out}/; history appended to {history}")
    if counts["ERROR"]:
        print(f"benchnf: error: {counts['ERROR']} unit(s) could not be checked; the table above says why",
              file=sys.stderr)
    if counts["FAIL"]:
        return ExitStatus.CHECK_FAILED
    return ExitStatus.BAD_INPUT if counts["ERROR"] else ExitStatus.OK

