"""The desk's noise-figure mode: a receiver streamed on a thread into
:class:`benchnf.measure.yfactor_live.YFactorLive`; the page polls the pairs so far.

The session keeps its calibration pair (the source straight into the receiver) across starts, and refuses
it when the receiver is started again at other settings.
"""

from __future__ import annotations

import threading
from typing import Any

import numpy as np

from ..errors import BenchError

__all__ = ["TuningSession", "tuning_settings"]

_READ_S = 0.05


def tuning_settings(data: dict[str, Any], folder: Any) -> tuple[str, Any, Any]:
    """The receiver address, its settings and the noise source from the page's form."""
    from ..acquire.sdr import SdrSettings, parse_gain, parse_sdr_address
    from ..measure.yfactor_request import YFactorRequest, hot_cold_source

    def number(key: str, default: float | None = None) -> float:
        text = str(data.get(key) or "").strip()
        if not text:
            if default is None:
                raise BenchError(f"give the {key.replace('_', ' ')}")
            return default
        try:
            return float(text)
        except ValueError:
            raise BenchError(f"{key.replace('_', ' ')} {text!r} is not a number") from None
    address = str(data.get("address") or "").strip()
    parse_sdr_address(address)
    settings = SdrSettings(number("centre_mhz") * 1e6, number("rate_hz", 2_400_000.0),
                           parse_gain(str(data.get("gain_db") or "")), int(number("ppm", 0.0)))
    table = str(data.get("enr_table") or "").strip()
    req = YFactorRequest(enr_db=None if table else number("enr_db"),
                         enr_table=folder.resolve(table) if table else None,
                         t_cold_k=number("t_cold_k", 290.0))
    return address, settings, hot_cold_source(req)


class TuningSession:
    """One receiver, its live pairs, the marks and the session's calibration pair."""

    def __init__(self) -> None:
        self.live: Any = None
        self.settings: Any = None
        self.receiver = ""
        self.error: str | None = None
        self.warnings: list[str] = []
        self._calibration: Any = None
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    @property
    def running(self) -> bool:
        return self._thread is not None and self._thread.is_alive()

    def start(self, address: str, settings: Any, source: Any) -> None:
        from ..acquire.sdr import open_sdr
        from ..measure.yfactor_live import YFactorLive
        if self.running:
            raise BenchError("the noise-figure view is running already: stop it to change its settings")
        live = YFactorLive(rate_hz=settings.rate_hz, centre_hz=settings.centre_hz, gain_db=settings.gain_db,
                           source=source)
        live.calibration = self._calibration
        live.check_calibration(settings.centre_hz, settings.rate_hz, settings.gain_db)
        stream = open_sdr(address, settings)
        self.live, self.settings, self.receiver = live, settings, stream.describe
        self.error, self.warnings = None, []
        self._stop.clear()
        self._thread = threading.Thread(target=self._run, args=(stream,), name="benchnf-tuning", daemon=True)
        self._thread.start()

    def _run(self, stream: Any) -> None:
        from ..acquire.sdr import overloaded_fraction, to_complex
        chunk = int(_READ_S * self.settings.rate_hz)
        try:
            with stream:
                while not self._stop.is_set():
                    raw = stream.read(chunk)
                    if raw.size < 2 * chunk:
                        self.error = "the receiver's connection ended: check the network and that rtl_tcp still runs"
                        return
                    if overloaded_fraction(raw) > 1e-4:
                        self._warn("I/Q values at the converter's rails (overload): lower the tuner gain")
                    if stream.lost_samples() > 0:
                        self._warn("samples are being lost on the way: choose a lower sample rate")
                    with self._lock:
                        self.live.feed(to_complex(raw))
                        self._calibration = self.live.calibration
        except BenchError as err:
            self.error = str(err)
        except Exception as err:  # a fault of the stream's thread: said on the page, not lost
            self.error = f"the receiver stopped ({type(err).__name__}: {err})"

    def _warn(self, text: str) -> None:
        if text not in self.warnings:
            self.warnings.append(text)

    def stop(self) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=5)
        self._thread = None

    def act(self, what: str, text: str = "") -> None:
        """Note an adjustment, take the next pair as the calibration pair, or forget the trace."""
        if self.live is None or not self.running:
            raise BenchError("start the noise-figure view first")
        with self._lock:
            if what == "mark":
                self.live.mark(text)
            elif what == "calibrate":
                self.live.calibrate_next()
            else:
                self.live.restart()

    def payload(self) -> dict[str, Any]:
        """The pairs so far, the newest pair's NF against frequency, the ENR points and the calibration."""
        if self.live is None:
            return {"running": False, "pairs": []}
        with self._lock:
            pairs = list(self.live.pairs)
            cal = self.live.calibration
            waiting = self.live._want_calibration
        rows = []
        if pairs:
            rows = [{"freq_hz": r.freq_hz, "nf_db": r.noise_figure_db, "u95_db": r.noise_figure_expanded_db}
                    for r in pairs[-1].result.rows]
        src = self.live.source
        enr_points = []
        if src.enr is not None:  # the table's points within the span, and its value at the centre
            lo, hi = self.settings.centre_hz - self.settings.rate_hz / 2, self.settings.centre_hz + self.settings.rate_hz / 2
            enr_points = [{"freq_hz": float(f), "enr_db": float(e)} for f, e in
                          zip(src.enr.frequency_hz, src.enr.enr_db) if lo <= f <= hi]
            enr_points.append({"freq_hz": self.settings.centre_hz,
                               "enr_db": float(src.enr.at(np.array([self.settings.centre_hz]))[0])})
        best = min(range(len(pairs)), key=lambda i: pairs[i].noise_figure_db) if pairs else None
        return {"running": self.running, "receiver": self.receiver, "error": self.error, "warnings": self.warnings,
                "settings": {"centre_hz": self.settings.centre_hz, "rate_hz": self.settings.rate_hz,
                             "gain_db": self.settings.gain_db},
                "calibration": None if cal is None else {"receiver_nf_db": cal.receiver_nf_db,
                                                         "gain_db": cal.settings[2]},
                "calibrating": waiting, "best": best, "rows": rows, "enr_points": enr_points,
                "pairs": [{"index": p.index, "t_s": p.mid_s, "nf_db": p.noise_figure_db,
                           "u95_db": p.noise_figure_u95_db, "gain_db": p.gain_db,
                           "te_k": p.noise_temperature_k, "mark": p.mark} for p in pairs]}
