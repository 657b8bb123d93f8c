"""The desk's web server (tornado): pages, a JSON API, the live WebSocket, and the guard in front of them.

Safe by default: it binds to 127.0.0.1; on any other address every request needs the token made at
start (in the URL once, then a same-site cookie). On loopback the Host header must name loopback
(a page elsewhere cannot reach the desk through a DNS name that points here). Requests that change
anything must carry the ``X-Benchnf-Desk`` header, which a page from another origin cannot send without
the desk's consent, so it cannot start a recording or write a file.
"""

from __future__ import annotations

import hmac
import json
import secrets
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import tornado.web
import tornado.websocket

from ..errors import BenchError
from .folder import DeskFolder, OutsideFolder

__all__ = ["DeskState", "make_app", "LOOPBACK"]

LOOPBACK = ("127.0.0.1", "localhost", "::1")
STATIC = Path(__file__).resolve().parent / "static"
UPLOAD_LIMIT = 256 * 2 ** 20  # bytes: a few minutes of 24-bit stereo at 96 kHz
COOKIE = "benchnf_desk"


@dataclass
class DeskState:
    """Everything the handlers share: the folder, the writer, the sound-card guard, what is running."""

    folder: DeskFolder
    host: str = "127.0.0.1"
    port: int = 0
    token: str | None = None
    records_url: str | None = None
    station: str | None = None
    operator: str | None = None
    opened: str | None = None  # a results file to show first
    writer: Any = None
    guard: Any = None
    live: Any = None
    reference: dict[str, Any] | None = None
    guided: Any = None
    tuning: Any = None  # the noise-figure mode's receiver session
    sockets: set[Any] = field(default_factory=set)

    @staticmethod
    def make_token() -> str:
        return secrets.token_urlsafe(18)


class DeskHandler(tornado.web.RequestHandler):
    """Every page and API call: token, host and header checks first; errors as one JSON line."""

    def initialize(self, state: DeskState) -> None:
        self.state = state

    def prepare(self) -> None:
        guard(self, self.state)
        if self.state.token and self.get_query_argument("token", None):
            self.set_cookie(COOKIE, self.state.token, httponly=True, samesite="Strict")
        if self.request.method in ("POST", "PUT", "DELETE") and self.request.headers.get("X-Benchnf-Desk") != "1":
            raise tornado.web.HTTPError(403, reason="changes need the desk's own page (X-Benchnf-Desk header)")

    def write_error(self, status_code: int, **kwargs: Any) -> None:
        self.set_header("Content-Type", "application/json")
        self.finish(json.dumps({"error": self._reason}))

    def body(self) -> dict[str, Any]:
        try:
            data = json.loads(self.request.body or b"{}")
        except ValueError as err:
            raise BenchError(f"the request is not JSON ({err})") from err
        if not isinstance(data, dict):
            raise BenchError("the request must be a JSON object")
        return data

    def path_arg(self, name: str, value: str | None = None) -> Path:
        return self.state.folder.resolve(value if value is not None else self.get_query_argument(name, ""))

    def reply(self, data: Any) -> None:
        self.set_header("Content-Type", "application/json")
        self.set_header("Cache-Control", "no-store")
        self.finish(json.dumps(data, default=_json_default, allow_nan=False))

    def _handle_request_exception(self, e: BaseException) -> None:
        if isinstance(e, OutsideFolder):
            self.send_error(403, reason=str(e))
        elif isinstance(e, BenchError):
            self.send_error(400, reason=str(e))
        elif isinstance(e, (OSError, ValueError)) and not isinstance(e, tornado.web.HTTPError):
            self.send_error(400, reason=f"{type(e).__name__}: {e}")
        else:
            super()._handle_request_exception(e)


def _json_default(v: Any) -> Any:
    if isinstance(v, Path):
        return str(v)
    if hasattr(v, "item"):
        return v.item()
    raise TypeError(f"{type(v).__name__} is not JSON")


def guard(handler: tornado.web.RequestHandler, state: DeskState) -> None:
    """Refuse the request (403) unless :func:`guard_refusal` allows it: every handler calls this first."""
    refusal = guard_refusal(state, handler.request, handler.get_query_argument("token", None),
                            handler.get_cookie(COOKIE))
    if refusal:
        raise tornado.web.HTTPError(403, reason=refusal)


def guard_refusal(state: DeskState, request: Any, query_token: str | None, cookie: str | None) -> str | None:
    """Why a request is refused (None: allowed): a missing or wrong token, or a foreign Host on loopback."""
    if state.token:
        given = query_token or cookie or ""
        if not hmac.compare_digest(given.encode(), state.token.encode()):
            return "this desk needs the token printed when it started (open the URL it printed)"
        return None
    host = request.host.rsplit(":", 1)[0].strip("[]") if request.host else ""
    if host not in LOOPBACK:
        return f"host {host!r} is not this machine's loopback address"
    return None


def make_app(state: DeskState) -> tornado.web.Application:
    """The tornado application with every route of the desk."""
    from . import handlers
    import plotly
    vendor = Path(plotly.__file__).resolve().parent / "package_data"
    s = {"state": state}
    routes: list[Any] = [
        (r"/", handlers.Page, s),
        (r"/favicon\.ico", handlers.NoIcon, s),
        (r"/static/(desk\.js|desk\.css|tuning\.js)", GuardedStatic, {"path": str(STATIC), "state": state}),
        (r"/vendor/(plotly\.min\.js)", GuardedStatic, {"path": str(vendor), "state": state}),
        (r"/ws/live", LiveSocket, s),
        *[(rf"/api/{name}", h, s) for name, h in handlers.API.items()],
    ]
    return tornado.web.Application(routes, websocket_max_message_size=64 * 1024, xsrf_cookies=False,
                                   compress_response=True)


class GuardedStatic(tornado.web.StaticFileHandler):
    """Our script and style, and plotly.js from the plotly wheel, behind the same guard."""

    def initialize(self, path: str, state: DeskState) -> None:  # type: ignore[override]
        super().initialize(path)
        self.state = state

    def prepare(self) -> None:
        guard(self, self.state)


class LiveSocket(tornado.websocket.WebSocketHandler):
    """Pushes each live snapshot to the page (the server's timer sends; the page only listens)."""

    def initialize(self, state: DeskState) -> None:
        self.state = state

    def check_origin(self, origin: str) -> bool:
        from urllib.parse import urlparse
        return urlparse(origin).netloc == self.request.host

    def prepare(self) -> None:
        guard(self, self.state)

    def open(self, *args: Any, **kwargs: Any) -> None:
        self.state.sockets.add(self)

    def on_close(self) -> None:
        self.state.sockets.discard(self)
