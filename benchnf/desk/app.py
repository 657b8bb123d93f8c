"""Starting and stopping the desk: the folder checked, the port bound, the URL made, the loop run."""

from __future__ import annotations

import errno
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import BenchError
from .folder import DeskFolder, OutsideFolder
from .server import DeskState, make_app

__all__ = ["RunningDesk", "open_desk", "serve", "LIVE_TICK_MS"]

LIVE_TICK_MS = 80  # 12.5 snapshots a second to the page


@dataclass
class RunningDesk:
    state: DeskState
    url: str
    records_text: str
    server: Any


def _opened(folder: DeskFolder, opened: Path | None) -> str | None:
    if opened is None:
        return None
    path = folder.resolve(str(opened))
    if not path.is_file():
        raise BenchError(f"--open {opened}: no such results file in {folder.root}")
    return folder.relative(path)


def open_desk(*, folder: Path, opened: Path | None = None, host: str = "127.0.0.1", port: int = 8642,
              records: str | None = None, station: str | None = None, operator: str | None = None,
              token: bool = False) -> RunningDesk:
    """Check the folder, bind the port and build the application; nothing is served until :func:`serve`."""
    from ..write import Writer
    from .live import AudioGuard
    desk_folder = DeskFolder(folder)
    if not os.access(desk_folder.root, os.W_OK | os.X_OK):
        raise BenchError(f"{desk_folder.root} is not writable: the desk writes captures, results and reports there; "
                         f"choose a folder you can write to")
    try:
        shown = _opened(desk_folder, opened)
    except OutsideFolder as err:
        raise BenchError(f"--open: {err}") from err
    records = records or str(desk_folder.root / "records.sqlite")
    state = DeskState(folder=desk_folder, host=host, token=DeskState.make_token() if token else None,
                      records_url=records, station=station, operator=operator, opened=shown, writer=Writer(),
                      guard=AudioGuard())
    server, port = _bind(make_app(state), host, port)
    state.port = port
    shown_host = f"[{host}]" if ":" in host else host
    url = f"http://{shown_host}:{port}/" + (f"?token={state.token}" if state.token else "")
    from ..records.store import shown_url
    return RunningDesk(state, url, shown_url(records), server)


def _bind(app: Any, host: str, port: int) -> tuple[Any, int]:
    import socket

    import tornado.httpserver
    import tornado.netutil
    from .server import UPLOAD_LIMIT
    try:
        sockets = tornado.netutil.bind_sockets(port, address=host)
    except socket.gaierror as err:
        raise BenchError(f"--host {host}: not an address of this machine ({err.strerror})") from err
    except OSError as err:
        if err.errno == errno.EADDRINUSE:
            raise BenchError(f"port {port} on {host} is in use (another desk?): choose another with --port, "
                             f"or --port 0 for any free one") from err
        raise BenchError(f"cannot listen on {host} port {port}: {err.strerror}") from err
    server = tornado.httpserver.HTTPServer(app, max_body_size=UPLOAD_LIMIT)
    server.add_sockets(sockets)
    return server, sockets[0].getsockname()[1]


# Loaded on a thread while the desk waits for its first request: the first live start, result or check
# then answers at once (importing them on the first click took about a second here).
_WARM = ("numpy", "scipy.signal", "benchnf.acquire.live", "benchnf.desk.live", "benchnf.desk.views",
         "benchnf.measure.requests", "sounddevice")


def _warm_up() -> None:
    import importlib
    for name in _WARM:
        try:
            importlib.import_module(name)
        except (ImportError, OSError):  # an optional library missing: the page says so when it is needed
            pass


def serve(desk: RunningDesk) -> None:
    """Run until Ctrl-C or SIGTERM: the live timer pushes snapshots; the sound card is closed at the end."""
    import threading

    import tornado.ioloop
    threading.Thread(target=_warm_up, name="benchnf-desk-warm-up", daemon=True).start()

    from .handlers import push_live
    timer = tornado.ioloop.PeriodicCallback(lambda: push_live(desk.state), LIVE_TICK_MS)
    timer.start()
    try:
        tornado.ioloop.IOLoop.current().start()
    except KeyboardInterrupt:
        pass
    finally:
        timer.stop()
        if desk.state.live is not None:
            desk.state.live.stop()
        desk.server.stop()
