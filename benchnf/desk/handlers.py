"""The desk's page and JSON API, one small handler per action (routes in :func:`.server.make_app`)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import tornado.web

from .. import __version__
from ..errors import BenchError
from .server import STATIC, UPLOAD_LIMIT, DeskHandler

__all__ = ["Page", "API", "push_live"]


class Page(DeskHandler):
    def get(self) -> None:
        self.set_header("Content-Type", "text/html; charset=utf-8")
        self.set_header("Content-Security-Policy", "default-src 'self'; img-src 'self' data: blob:; "
                        "style-src 'self' 'unsafe-inline'; connect-src 'self'")
        self.finish((STATIC / "desk.html").read_bytes())


class NoIcon(DeskHandler):
    def get(self) -> None:
        self.set_status(204)
        self.finish()


class State(DeskHandler):
    def get(self) -> None:
        from ..acquire.plan import CAUTIONS
        st = self.state
        self.reply({"version": __version__, "folder": str(st.folder.root), "opened": st.opened,
                    "records": _records_text(st.records_url), "station": st.station, "operator": st.operator,
                    "cautions": CAUTIONS, "audio": st.guard.holder,
                    "live": st.live.settings.__dict__ if st.live and st.live.running else None})


def _records_text(url: str | None) -> str | None:
    if not url:
        return None
    from ..records.store import shown_url
    return shown_url(url)


class Files(DeskHandler):
    def get(self) -> None:
        from .folder import KINDS
        kind = self.get_query_argument("kind", "results")
        if kind == "units":
            self.reply({"kind": kind, "files": _unit_folders(self.state.folder)})
            return
        if kind not in KINDS:
            raise BenchError(f"kind {kind!r}: one of {', '.join(KINDS)}, units")
        self.reply({"kind": kind, "files": self.state.folder.listing(kind)})


def _unit_folders(folder: Any) -> list[str]:
    """Folders below the desk's own holding a terminated and a tone capture, found as batch finds a unit's."""
    from ..check.batch import role_files
    holders = {(folder.root / c).parent for c in folder.listing("captures")} - {folder.root}
    return sorted(folder.relative(d) for d in holders if {"terminated", "tone"} <= set(role_files(d)))


class Result(DeskHandler):
    def get(self) -> None:
        from .views import result_view
        name = self.get_query_argument("path", "")
        self.reply(result_view(self.path_arg("path"), name, self.state.folder))


class Download(DeskHandler):
    def get(self) -> None:
        path = self.path_arg("path")
        if not path.is_file():
            raise BenchError(f"{self.get_query_argument('path')} is not a file in the desk's folder")
        self.set_header("Content-Type", "application/octet-stream")
        self.set_header("Content-Disposition", f'attachment; filename="{path.name}"')
        self.finish(path.read_bytes())


class Export(DeskHandler):
    """A gain-method result's spectra CSV or HTML report, made from its re-run and sent (nothing written)."""

    def get(self) -> None:
        from .analysis import export
        name, content = export(self.path_arg("path"), self.get_query_argument("form", "csv"), self.state.folder)
        self.set_header("Content-Type", "text/csv" if name.endswith(".csv") else "text/html; charset=utf-8")
        self.set_header("Content-Disposition", f'attachment; filename="{name}"')
        self.finish(content)


class Analyse(DeskHandler):
    """A folder of captures analysed as ``benchnf analyze`` would; its results written beside them."""

    def post(self) -> None:
        from ..dsp.weighting import WEIGHTINGS
        from .analysis import SETTINGS, analyse_folder
        data, st = self.body(), self.state
        captures = self.path_arg("folder", str(data.get("folder", "")))
        if not captures.is_dir():
            raise BenchError(f"{data.get('folder')!r} is not a folder of captures")
        numbers = {k: _number(data, k, low=lo, high=hi) for k, (lo, hi) in SETTINGS.items()}
        calibration = self.path_arg("calibration", str(data["calibration"])) if data.get("calibration") else None
        weighting = data.get("weighting") or None
        if weighting is not None and weighting not in WEIGHTINGS:
            raise BenchError(f"weighting {weighting!r}: one of {', '.join(WEIGHTINGS)}")
        path = analyse_folder(captures, writer=st.writer, calibration=calibration, numbers=numbers,
                              band_hz=None, weighting=weighting)
        self.reply({"results": st.folder.relative(path)})


class Devices(DeskHandler):
    def get(self) -> None:
        from ..acquire.devices import list_devices
        self.reply([{"name": d.name, "host_api": d.host_api, "inputs": d.max_input_channels,
                     "rate_hz": d.default_samplerate} for d in list_devices() if d.max_input_channels > 0])


def _number(data: dict[str, Any], key: str, *, low: float, high: float, default: Any = None) -> Any:
    value = data.get(key, default)
    if value in (None, ""):
        return default
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise BenchError(f"{key}: {value!r} is not a number") from None
    if not low <= x <= high:
        raise BenchError(f"{key}: {x:g} is outside {low:g} to {high:g}")
    return x


def _second_channel(data: dict[str, Any]) -> tuple[int | None, int | None]:
    """The live view's second channel: another input on the same output (cross-spectrum) or a reference."""
    output = int(_number(data, "channel", low=0, high=63, default=0))
    cross, reference = (_number(data, key, low=0, high=63) for key in ("cross_channel", "reference_channel"))
    if cross is not None and reference is not None:
        raise BenchError("a second input on the output or a reference channel: one at a time")
    if output in (cross, reference):
        raise BenchError("the second channel must be another one than the output's")
    return (int(cross) if cross is not None else None), (int(reference) if reference is not None else None)


def live_settings(data: dict[str, Any], folder: Any) -> Any:
    """LiveSettings from the page's form, each number checked; a calibration file read from the folder."""
    from ..dsp.weighting import WEIGHTINGS
    from .live import LiveSettings
    vpfs = _number(data, "volts_per_fs", low=1e-6, high=1e4)
    if data.get("calibration"):
        from ..calibration import Calibration
        vpfs = Calibration.load(folder.resolve(str(data["calibration"]))).volts_per_fs
    band = (_number(data, "band_lo_hz", low=0.0, high=1e7, default=20.0),
            _number(data, "band_hi_hz", low=1.0, high=1e7, default=20_000.0))
    if not band[0] < band[1]:
        raise BenchError(f"band: {band[0]:g} Hz must be below {band[1]:g} Hz")
    weighting = str(data.get("weighting") or "none")
    if weighting not in WEIGHTINGS:
        raise BenchError(f"weighting {weighting!r}: one of {', '.join(WEIGHTINGS)}")
    averages = _number(data, "averages", low=0, high=100_000, default=16)
    gain = _number(data, "gain_db", low=-40.0, high=160.0)
    if data.get("gain_from"):  # the gain a gain-method result measured
        from ..registry import read_result
        measured = read_result(folder.resolve(str(data["gain_from"])), kinds=("analysis",))
        if gain is not None:
            raise BenchError("state a gain or take it from a result, not both")
        gain = measured.gain_db
    cross_channel, reference_channel = _second_channel(data)
    return LiveSettings(reference_channel=reference_channel, cross_channel=cross_channel,
                        cross_volts_per_fs=_number(data, "cross_volts_per_fs", low=1e-6, high=1e4),
                        device=data.get("device") or None, host_api=data.get("host_api") or None,
                        rate_hz=_number(data, "rate_hz", low=1000.0, high=1e6, default=48_000.0),
                        channel=int(_number(data, "channel", low=0, high=63, default=0)), volts_per_fs=vpfs,
                        gain_db=gain, band_hz=band, weighting=weighting,
                        averages=int(averages) or None)


class LiveStart(DeskHandler):
    def post(self) -> None:
        from .live import LiveFeed
        st = self.state
        if st.live is not None and st.live.running:
            raise BenchError("the live view is running already: stop it to change its settings")
        feed = LiveFeed(live_settings(self.body(), st.folder), st.guard)
        feed.start()
        st.live, st.reference = feed, None
        self.reply({"device": feed.device_text, "note": feed.note})


class LiveStop(DeskHandler):
    def post(self) -> None:
        if self.state.live is not None:
            self.state.live.stop()
        self.reply({"stopped": True})


class LiveReset(DeskHandler):
    def post(self) -> None:
        if self.state.live is None or not self.state.live.running:
            raise BenchError("the live view is not running")
        self.state.live.reset()
        self.reply({"reset": True})


class LiveReference(DeskHandler):
    def post(self) -> None:
        from .live import LiveSettings, reference_trace
        data, st = self.body(), self.state
        kind = data.get("kind", "none")
        settings = st.live.settings if st.live is not None else LiveSettings()
        if kind == "none":
            st.reference = None
        elif kind in ("floor", "trace"):
            st.reference = reference_trace(kind, self.path_arg("path", str(data.get("path", ""))), settings=settings)
        elif kind == "mask":
            from ..check.profile import load_profile
            profile = load_profile(self.path_arg("path", str(data.get("path", ""))))
            if not profile.masks:
                raise BenchError(f"profile {profile.name!r} has no mask")
            st.reference = reference_trace("mask", None, settings=settings, profile_mask=profile.masks[0])
        else:
            raise BenchError(f"reference {kind!r}: one of none, floor, trace, mask")
        self.reply({"reference": st.reference})


class LiveSave(DeskHandler):
    def post(self) -> None:
        from .live import trace_csv
        st = self.state
        payload = st.live.payload() if st.live is not None and st.live.running else None
        if payload is None:
            raise BenchError("nothing to save: start the live view and let it average first")
        name = str(self.body().get("name") or "live-trace")
        folder = st.writer.folder(st.folder.root / "traces")
        path = st.writer.text(st.writer.child(folder, name if name.endswith(".csv") else name + ".csv"),
                              trace_csv(payload))
        self.reply({"saved": st.folder.relative(path)})


class PlanOpen(DeskHandler):
    def post(self) -> None:
        from .guided import GuidedRun
        st = self.state
        if st.guided is not None and st.guided.busy is not None:
            raise BenchError("a step of the open plan is recording: wait for it")
        plan_path = self.path_arg("path", str(self.body().get("path", "")))
        st.guided = GuidedRun(plan_path, lambda p: st.folder.resolve(str(p)), st.writer, st.guard)
        self.reply(st.guided.state(st.folder.relative))


class PlanRecord(DeskHandler):
    def post(self) -> None:
        st = self.state
        if st.guided is None:
            raise BenchError("open a plan first")
        step = _number(self.body(), "step", low=1, high=1000)
        if step is None:
            raise BenchError("say which step to record")
        st.guided.record(int(step) - 1)
        self.reply(st.guided.state(st.folder.relative))


class PlanState(DeskHandler):
    def get(self) -> None:
        st = self.state
        self.reply(st.guided.state(st.folder.relative) if st.guided is not None else None)


class PlanFinish(DeskHandler):
    def post(self) -> None:
        st = self.state
        if st.guided is None:
            raise BenchError("open a plan first")
        st.guided.finish()
        self.reply(st.guided.state(st.folder.relative))


class Check(DeskHandler):
    def post(self) -> None:
        from .unitcheck import check_unit_from_desk
        data, st = self.body(), self.state
        source = self.path_arg("source", str(data.get("source", "")))
        profile = self.path_arg("profile", str(data.get("profile", "")))
        calibration = self.path_arg("calibration", str(data["calibration"])) if data.get("calibration") else None
        floor = self.path_arg("floor", str(data["floor"])) if data.get("floor") else None
        out = check_unit_from_desk(serial=str(data.get("serial", "")), source=source, profile_path=profile,
                                   folder=st.folder.root, writer=st.writer, records_url=st.records_url,
                                   station=st.station, operator=st.operator, calibration=calibration, floor=floor)
        out["report"] = st.folder.relative(out["report"])
        self.reply(out)


class Checks(DeskHandler):
    def get(self) -> None:
        from .unitcheck import earlier_checks
        self.reply(earlier_checks(self.state.records_url, self.get_query_argument("serial", "")))


class Gauge(DeskHandler):
    def get(self) -> None:
        from .gauge import gauge_study, recorded_figures
        figure = self.get_query_argument("figure", "")
        if not figure:
            self.reply({"figures": recorded_figures(self.state.records_url)})
            return
        self.reply(gauge_study(self.state.records_url, figure, self.get_query_argument("by", "station")))


@tornado.web.stream_request_body
class Upload(DeskHandler):
    """A file from the browser into ``uploads/`` of the folder: size-limited, never over an existing file."""

    def prepare(self) -> None:
        super().prepare()
        connection: Any = self.request.connection
        connection.set_max_body_size(UPLOAD_LIMIT)
        size = int(self.request.headers.get("Content-Length", "0") or 0)
        if size > UPLOAD_LIMIT:
            raise tornado.web.HTTPError(413, reason=f"the file is {size / 2**20:.0f} MiB; the desk takes at most "
                                                     f"{UPLOAD_LIMIT / 2**20:.0f} MiB")
        self._parts: list[bytes] = []

    def data_received(self, chunk: bytes) -> None:
        self._parts.append(chunk)

    def post(self) -> None:
        st = self.state
        name = self.get_query_argument("name", "")
        folder = st.writer.folder(st.folder.root / "uploads")
        path = st.writer.bytes(st.writer.child(folder, Path(name).name if name else ""), b"".join(self._parts))
        self.reply({"saved": st.folder.relative(path)})


def tuning_settings(data: dict[str, Any], folder: Any) -> tuple[str, Any, Any, Any]:
    """The receiver address, its settings, the noise source and the keying output (None: switched by hand)
    from the "NF while tuning" form."""
    from ..acquire.sdr import SdrSettings, parse_gain, parse_sdr_address
    from ..measure.yfactor_request import YFactorRequest, hot_cold_source
    address = str(data.get("address") or "").strip()
    parse_sdr_address(address)
    centre = _number(data, "centre_mhz", low=1.0, high=2500.0)
    if centre is None:
        raise BenchError("give the receiver's centre frequency (MHz)")
    settings = SdrSettings(centre * 1e6, _number(data, "rate_hz", low=1.0, high=1e7, default=2_400_000.0),
                           parse_gain(str(data.get("gain_db") or "")),
                           int(_number(data, "ppm", low=-1000, high=1000, default=0)))
    table = str(data.get("enr_table") or "").strip()
    enr = None if table else _number(data, "enr_db", low=-10.0, high=50.0)
    if enr is None and not table:
        raise BenchError("give the noise source's ENR (dB) or its ENR table")
    req = YFactorRequest(enr_db=enr, enr_table=folder.resolve(table) if table else None,
                         t_cold_k=_number(data, "t_cold_k", low=1.0, high=1000.0, default=290.0))
    drive = None
    if str(data.get("drive") or "").strip():
        from ..acquire.source_drive import DriveSettings
        drive = DriveSettings.at(str(data["drive"]),
                                 state_s=_number(data, "drive_state_s", low=0.2, high=60.0, default=1.0))
    return address, settings, hot_cold_source(req), drive


class TuningStart(DeskHandler):
    def post(self) -> None:
        from .tuning import TuningSession
        st = self.state
        if st.tuning is None:
            st.tuning = TuningSession()
        address, settings, source, drive = tuning_settings(self.body(), st.folder)
        st.tuning.start(address, settings, source, drive=drive, guard=st.guard)
        self.reply({"receiver": st.tuning.receiver})


class TuningStop(DeskHandler):
    def post(self) -> None:
        if self.state.tuning is not None:
            self.state.tuning.stop()
        self.reply({"stopped": True})


class TuningAct(DeskHandler):
    def post(self) -> None:
        body = self.body()
        what = str(body.get("what") or "")
        if what not in ("mark", "calibrate", "restart"):
            raise BenchError(f"{what!r}: one of mark, calibrate, restart")
        if self.state.tuning is None:
            raise BenchError("start the noise-figure view first")
        self.state.tuning.act(what, str(body.get("text") or ""))
        self.reply({"done": what})


class TuningState(DeskHandler):
    def get(self) -> None:
        t = self.state.tuning
        self.reply(t.payload() if t is not None else {"running": False, "pairs": []})


API = {"state": State, "files": Files, "result": Result, "download": Download, "export": Export,
       "analyse": Analyse, "devices": Devices,
       "live/start": LiveStart, "live/stop": LiveStop, "live/reset": LiveReset, "live/reference": LiveReference,
       "live/save": LiveSave, "plan/open": PlanOpen, "plan/record": PlanRecord, "plan/state": PlanState,
       "plan/finish": PlanFinish, "tuning/start": TuningStart, "tuning/stop": TuningStop,
       "tuning/act": TuningAct, "tuning/state": TuningState, "check": Check, "checks": Checks, "grr": Gauge, "upload": Upload}


def push_live(state: Any) -> None:
    """One tick of the live view: the newest snapshot (and the reference) to every open page."""
    feed = state.live
    if feed is None or not feed.running or not state.sockets:
        if feed is not None and feed.running:
            feed.drain()  # keep the queue short with no page open
        return
    payload = feed.payload()
    if payload is None:
        return
    message = json.dumps(payload, allow_nan=False, default=float)
    for sock in list(state.sockets):
        try:
            sock.write_message(message)
        except Exception:  # a page that went away: forget it
            state.sockets.discard(sock)
