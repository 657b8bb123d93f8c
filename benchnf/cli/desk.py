"""benchnf desk."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..write import Writer
from ._common import records_options, settle_station
from ._types import port_number
from .status import ExitStatus

LOOPBACK_HOSTS = ("127.0.0.1", "localhost", "::1")


def add_parser(sub: Any) -> None:
    p = sub.add_parser("desk", help="the bench desk: live spectrum, guided steps, results and unit checks in a "
                                    "browser",
                       description="A local web application on the same measurement layer as the command line. "
                                   "It reads and writes only inside --folder and binds to 127.0.0.1; another "
                                   "--host needs the token printed in the URL at start.")
    p.add_argument("--folder", type=Path, default=Path("."), metavar="DIR",
                   help="the folder it works in: captures, plans, profiles, results (default: here)")
    p.add_argument("--open", type=Path, metavar="RESULTS.json", help="open straight on this result (inside DIR)")
    p.add_argument("--port", type=port_number, default=8642, metavar="N", help="TCP port (default 8642; 0: any free)")
    p.add_argument("--host", default="127.0.0.1", metavar="ADDR",
                   help="address to listen on (default 127.0.0.1; any other needs the printed token)")
    p.add_argument("--no-browser", action="store_true", help="do not open a browser; just print the URL")
    records_options(p)
    p.add_argument("--traceback", action="store_true", help="show the full traceback on errors")
    p.set_defaults(run=run, overwrite=False)


def run(args: argparse.Namespace, writer: Writer) -> int:
    from .._optional import require
    require("tornado", extra="desk", purpose="the bench desk's web server")
    require("plotly", extra="desk", purpose="the bench desk's plots (plotly.js ships in its wheel)")
    from ..desk.app import open_desk, serve
    settle_station(args)
    desk = open_desk(folder=args.folder, opened=args.open, host=args.host, port=args.port,
                     records=args.records, station=args.station, operator=args.operator,
                     token=args.host not in LOOPBACK_HOSTS)
    print(f"benchnf desk on {desk.url}")
    print(f"  folder {desk.state.folder.root}; checks recorded in {desk.records_text}")
    print("  CAUTION: mains and valve equipment carry lethal voltages; phantom power and speaker outputs can "
          "destroy a sound-card input. Follow local codes and licensed practice.")
    print("  Ctrl-C stops it.", flush=True)
    if not args.no_browser:
        import webbrowser
        webbrowser.open(desk.url)
    serve(desk)
    return ExitStatus.OK
