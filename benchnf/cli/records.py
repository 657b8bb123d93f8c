"""benchnf records: what the records store holds, per serial, station, time and verdict; a unit's history;
export; process capability."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..errors import BenchError
from ..write import Writer
from ._common import records_url_of, station_file_option
from ._types import export_file, iso_time, positive_number, whole_count
from .status import ExitStatus


def add_parser(sub: Any) -> None:
    p = sub.add_parser("records", help="list, show, export the records of checked units; process capability",
                       description="Reads the records database that check and batch write (--records URL, or "
                                   "BENCHNF_RECORDS).")
    p.add_argument("--records", metavar="URL", help="records database (default: BENCHNF_RECORDS, else the station "
                                                   "file's)")
    station_file_option(p)
    p.add_argument("--traceback", action="store_true", help="show the full traceback on errors")
    acts = p.add_subparsers(dest="action", metavar="ACTION", required=True)
    a = acts.add_parser("list", help="one line per check, filtered")
    a.add_argument("--serial", metavar="SERIAL")
    a.add_argument("--station", metavar="NAME")
    a.add_argument("--verdict", choices=["PASS", "MARGINAL", "FAIL", "ERROR", "MEASURED"])
    a.add_argument("--since", type=iso_time, metavar="ISO-TIME",
                   help="ISO 8601, e.g. 2026-12-01 or 2026-12-01T08:00 (UTC unless an offset follows)")
    a.add_argument("--until", type=iso_time, metavar="ISO-TIME", help="ISO 8601, as --since")
    a = acts.add_parser("show", help="one unit's history: every check and what changed between them")
    a.add_argument("serial", metavar="SERIAL")
    a.add_argument("--results", action="store_true",
                   help="also show the result kept with each record, as the command that made it shows it")
    a = acts.add_parser("export", help="one row per check, one column per limit (CSV, or Parquet for "
                                       "FILE.parquet where pyarrow is installed)")
    a.add_argument("-o", "--output", type=export_file, required=True, metavar="FILE.csv|FILE.parquet")
    a.add_argument("--overwrite", action="store_true", help="replace the file if it exists")
    a = acts.add_parser("chart", help="individuals and moving-range control chart of one figure, as PNG")
    a.add_argument("--figure", required=True, metavar="KEY", help="a limit's name, e.g. ein_dbu")
    a.add_argument("-o", "--output", type=Path, required=True, metavar="DIR")
    a.add_argument("--overwrite", action="store_true", help="replace the chart if it exists")
    a = acts.add_parser("import-history", help="import the history CSV that batch appends to")
    a.add_argument("history", type=Path, metavar="FILE.csv")
    a = acts.add_parser("capability", help="per limit: n, mean, s, Cp, Cpk, Pp, Ppk, lower 95 %% bound of Cpk")
    a.add_argument("--min-units", type=whole_count, default=10, metavar="N",
                   help="fewest units for a capability figure (default 10)")
    a = acts.add_parser("grr", help="gauge R&R of one figure: the same units measured repeatedly by several "
                                    "stations (or operators), by the ANOVA method")
    a.add_argument("--figure", required=True, metavar="KEY", help="a limit's name, e.g. ein_dbu")
    a.add_argument("--by", choices=["station", "operator"], default="station",
                   help="what the appraisers are (default station)")
    a.add_argument("--tolerance", type=positive_number, metavar="WIDTH",
                   help="the tolerance's width (upper minus lower limit), for GRR as a percentage of it")
    a.add_argument("-o", "--output", type=Path, metavar="DIR", help="write the charts (PNG) here")
    a.add_argument("--json", type=Path, metavar="OUT.json", help="write the study as JSON")
    a.add_argument("--overwrite", action="store_true", help="replace files that exist")
    p.set_defaults(run=run)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from ..records import connect
    url = args.records = records_url_of(args)
    if not url:
        raise BenchError("give the records database with --records URL (or set BENCHNF_RECORDS, or name it in a "
                         "station file)")
    store = connect(url, create=args.action == "import-history")
    action = {"list": _list, "show": _show, "export": _export, "capability": _capability, "chart": _chart,
              "import-history": _import_history, "grr": _grr}[args.action]
    try:
        return action(store, args, writer)
    finally:
        store.close()


def _fmt(v: Any) -> str:
    return "-" if v is None else (f"{v:.4g}" if isinstance(v, float) else str(v))


def _list(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    rows = store.checks(serial=args.serial, station=args.station, verdict=args.verdict, since=args.since,
                        until=args.until)
    print(f"  {'checked at (UTC)':25s} {'serial':16s} {'verdict':9s} {'station':16s} profile")
    for r in rows:
        print(f"  {r['checked_at']:25s} {r['serial'][:16]:16s} {r['verdict']:9s} {r['station'][:16]:16s} "
              f"{r['profile_name']}")
    print(f"\n  {len(rows)} check(s)")
    return ExitStatus.OK


def _show(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    rows = store.checks(serial=args.serial)
    if not rows:
        raise BenchError(f"no checks of {args.serial!r} in the records: see 'benchnf records list'")
    limits = store.limits_of([r["id"] for r in rows])
    before: dict[str, Any] = {}
    for r in rows:
        print(f"{r['checked_at']}  {r['verdict']}  at {r['station']}"
              + (f" by {r['operator']}" if r["operator"] else "") + f"  (profile {r['profile_name']})")
        for lim in limits[r["id"]]:
            prev = before.get(lim["name"])
            change = ("" if prev is None or lim["measured"] is None or prev is None
                      else f"  ({lim['measured'] - prev:+.3g} since the check before)")
            print(f"    {lim['name'][:44]:44s} {_fmt(lim['measured']):>11} {lim['unit']:4s} {lim['verdict']}{change}")
            before[lim["name"]] = lim["measured"]
        if args.results:
            _show_result(store.result_of(r["id"]))
    return ExitStatus.OK


def _show_result(result: Any) -> None:
    """A kept result through its measurement's one presentation (any registered kind)."""
    if result is None:
        print("    (no result kept with this record)")
        return
    from .. import registry
    from ..report.render_text import render_text
    if result.KIND == "check":
        from ..report.present_check import present
        view = present(result)
    else:
        view = registry.measurement(result.KIND).part("present")(result)
    print("\n".join("    " + line for line in render_text(view).splitlines()))


def _export(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    from ..records.store import iter_export_rows
    rows = list(iter_export_rows(store))
    columns: list[str] = []
    for r in rows:
        columns += [k for k in r if k not in columns]
    if Path(args.output).suffix.lower() == ".parquet":  # the suffix was checked when parsed (export_file)
        from ..records.export import parquet_bytes
        writer.bytes(args.output, parquet_bytes(rows, columns))
    else:
        from ..records.export import csv_text
        writer.text(args.output, csv_text(rows, columns))
    print(f"{len(rows)} check(s) written to {args.output}")
    return ExitStatus.OK


def _capability(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    from ..errors import ParameterError
    from ..records import capability
    print(f"  {'limit':40s} {'n':>5} {'mean':>10} {'s':>9} {'Cp':>6} {'Cpk':>6} {'Pp':>6} {'Ppk':>6} {'Cpk>=':>6}")
    shown = listed = 0
    for name in store.limit_names():
        rows = store.measured_values(name)
        bounded = [r for r in rows if r["lower"] is not None or r["upper"] is not None]
        if not bounded:
            continue
        listed += 1
        hashes = {r["profile_sha256"] for r in bounded}
        lsl, usl = bounded[-1]["lower"], bounded[-1]["upper"]
        try:
            c = capability([r["measured"] for r in bounded], lsl=lsl, usl=usl, min_units=args.min_units)
        except ParameterError as err:
            print(f"  {name[:40]:40s} {len(bounded):5d}  {err}")
            continue
        note = "  (profile changed over these records)" if len(hashes) > 1 else ""
        print(f"  {name[:40]:40s} {c.n:5d} {c.mean:10.4g} {c.sigma_overall:9.3g} {_fmt(c.cp):>6} {c.cpk:6.2f} "
              f"{_fmt(c.pp):>6} {c.ppk:6.2f} {c.cpk_lower95:6.2f}{note}")
        shown += 1
    if not listed:
        raise BenchError("no limit with numeric bounds has records: check units against a profile first")
    if not shown:
        raise BenchError(f"no limit has records of {args.min_units} or more units (--min-units): the lines above "
                         f"say how many each has")
    print("\n  Cp, Cpk from the moving range (within); Pp, Ppk from the overall s; Cpk>= is its lower 95 % bound")
    return ExitStatus.OK


def _grr(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    from ..records.grr import gauge_rr, unit_means
    from ..report.render_text import render_text
    rows = store.measured_values(args.figure, latest_per_serial=False)
    if not rows:
        raise BenchError(f"no recorded values of {args.figure!r}: the limits recorded are "
                         f"{', '.join(store.limit_names()) or 'none'}")
    data = [(r["serial"], r[args.by] or "-", r["measured"]) for r in rows]
    study = gauge_rr(data, figure_name=args.figure, by=args.by, tolerance_width=args.tolerance)
    from ..report.present_grr import present_grr
    view = present_grr(study, unit_means(data, study))
    print(render_text(view), end="")
    if args.json:
        writer.json(args.json, study.to_dict())
        print(f"JSON written to {args.json}")
    if args.output:
        from ..report.render_png import figures
        folder = writer.folder(args.output)
        for name, fig in figures(view):
            print(f"chart written to {writer.figure(writer.child(folder, name), fig)}")
    return ExitStatus.OK


def _chart(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    from ..records.charts import control_chart
    from ..report.charts import control_chart_figures
    rows = store.measured_values(args.figure)
    if not rows:
        raise BenchError(f"no recorded values of {args.figure!r}: the limits recorded are "
                         f"{', '.join(store.limit_names()) or 'none'}")
    chart = control_chart([r["measured"] for r in rows])
    folder = writer.folder(args.output)
    for name, fig in control_chart_figures(chart, figure=args.figure):
        png = writer.child(folder, name.replace(" ", "_").replace("/", "_"))
        writer.target(png.with_suffix(".html"))  # refused before the PNG is written, not half-way
        path = writer.figure(png, fig)
        page = writer.text(path.with_suffix(".html"), _chart_page(chart, rows, args, png=path.read_bytes()))
        print(f"control chart of {args.figure} over {len(chart.values)} units written to {path} and {page.name}")
    for i, rule in chart.signals:
        print(f"  unit {rows[i]['serial']} ({rows[i]['checked_at']}) breaks run rule {rule}")
    return ExitStatus.OK


def _chart_page(chart: Any, rows: list[dict[str, Any]], args: argparse.Namespace, *, png: bytes) -> str:
    import datetime as _dt

    from .. import __version__
    from ..records.store import shown_url
    from ..report.html import control_chart_html
    return control_chart_html(chart, figure=args.figure, rows=rows, png=png,
                              source=shown_url(args.records), software=f"benchnf {__version__}",
                              made_utc=_dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"))


_HISTORY_FIGURES = ("gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db", "flicker_corner_hz")


def _import_history(store: Any, args: argparse.Namespace, writer: Writer) -> int:
    """Rows of an old history CSV as records (each row's id is made from its text: importing twice adds
    nothing)."""
    import csv
    import uuid

    from ..records import CheckRecord, LimitRow
    try:
        lines = args.history.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as err:
        raise BenchError(f"{args.history} cannot be read ({err})") from err
    reader = csv.DictReader(lines)
    need = {"checked_at", "profile", "serial", "verdict"}
    if not reader.fieldnames or not need <= set(reader.fieldnames):
        raise BenchError(f"{args.history} is not a benchnf history CSV (it needs the columns {', '.join(sorted(need))})")
    added = 0
    for row, text in zip(reader, lines[1:]):
        limits = tuple(LimitRow(k, float(row[k]), "", None, None, None, "", None, "-")
                       for k in _HISTORY_FIGURES if row.get(k) not in (None, ""))
        rec = CheckRecord(serial=row["serial"], verdict=row["verdict"], profile_name=row["profile"],
                          profile_sha256=None, station="imported", operator=None, software="history import",
                          limits=limits, checked_at=row["checked_at"],
                          record_uid=str(uuid.uuid5(uuid.NAMESPACE_URL, f"benchnf-history:{text}")))
        added += bool(store.add(rec))
    print(f"{added} record(s) imported from {args.history}")
    return ExitStatus.OK
