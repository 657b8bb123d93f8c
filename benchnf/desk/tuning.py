"""The desk's noise-figure mode: a receiver streamed on a thread into
:class:`benchnf.measure.yfactor_live.YFactorLive`; the page polls the pairs so far.

The session keeps its calibration pair (the source straight into the receiver) across starts, and refuses
it when the receiver is started again at other settings.
"""

from __future__ import annotations

import threading
from contextlib import ExitStack
from typing import Any

import numpy as np

from ..errors import BenchError

__all__ = ["TuningSession"]

_READ_S = 0.05
#: Who holds the sound card while benchnf keys the noise source (the header says it).
KEYING = "the noise-source keying"


class TuningSession:
    """One receiver, its live pairs, the marks and the session's calibration pair."""

    def __init__(self) -> None:
        self.live: Any = None
        self.settings: Any = None
        self.receiver = ""
        self.error: str | None = None
        self.warnings: list[str] = []
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._held = ExitStack()  # the receiver and the keying output while the thread runs
        self.keying: Any = None

    @property
    def running(self) -> bool:
        return self._thread is not None and self._thread.is_alive()

    def start(self, address: str, settings: Any, source: Any, *, drive: Any = None, guard: Any = None) -> None:
        """Start the receiver (and, with `drive`, key the noise source from a sound-card output, holding the
        desk's sound-card `guard` while it plays, so that no live view or recording takes the card meanwhile
        and the page's header says who has it)."""
        from ..acquire.sdr import open_sdr
        from ..measure.yfactor_live import YFactorLive
        if self.running:
            raise BenchError("the noise-figure view is running already: stop it to change its settings")
        live = YFactorLive(rate_hz=settings.rate_hz, centre_hz=settings.centre_hz, gain_db=settings.gain_db,
                           source=source)
        live.calibration = self.live.calibration if self.live is not None else None  # kept for the session
        live.check_calibration(settings.centre_hz, settings.rate_hz, settings.gain_db)
        keying = None
        with ExitStack() as held:
            if drive is not None:
                from ..acquire.source_drive import SourceDrive
                if guard is not None:
                    guard.take(KEYING)
                    held.callback(guard.give_back, KEYING)
                keying = held.enter_context(SourceDrive(drive))
            stream = held.enter_context(open_sdr(address, settings))
            self._held = held.pop_all()  # closed by the thread when it ends
        self.live, self.settings, self.receiver, self.keying = live, settings, stream.describe, keying
        self.error, self.warnings = None, []
        self._stop.clear()
        self._thread = threading.Thread(target=self._run, args=(stream,), name="benchnf-tuning", daemon=True)
        self._thread.start()

    def _run(self, stream: Any) -> None:
        from ..acquire.sdr import live_chunks
        try:
            with self._held:
                for iq in live_chunks(stream, _READ_S, self._warn):
                    if self._stop.is_set():
                        return
                    with self._lock:
                        self.live.feed(iq)
        except BenchError as err:
            self.error = str(err)
        except Exception as err:  # a fault of the stream's thread: said on the page, not lost
            self.error = f"the receiver stopped ({type(err).__name__}: {err})"

    def _warn(self, text: str) -> None:
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
            waiting = self.live.calibrating
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
        keying = self.keying.metadata() if self.keying is not None and self.running else None
        return {"running": self.running, "receiver": self.receiver, "error": self.error, "warnings": self.warnings,
                "keying": keying,
                "settings": {"centre_hz": self.settings.centre_hz, "rate_hz": self.settings.rate_hz,
                             "gain_db": self.settings.gain_db},
                "calibration": None if cal is None else {
                    "receiver_nf_db": cal.receiver_nf_db, "gain_db": cal.settings[2],
                    "text": f"receiver NF {_q(cal.receiver_nf_db, 'dB', 2)} at gain {_q(cal.settings[2], 'dB', 1)}"},
                "calibrating": waiting, "best": best, "rows": rows, "enr_points": enr_points,
                "pairs": [{"index": p.index, "t_s": p.mid_s, "nf_db": p.noise_figure_db,
                           "u95_db": p.noise_figure_u95_db, "gain_db": p.gain_db,
                           "te_k": p.noise_temperature_k, "mark": p.mark, "text": _worded(p)} for p in pairs]}


def _q(value: float | None, unit: str, digits: int, u: float | None = None) -> str:
    from ..quantity import Quantity
    return Quantity(value, unit, u, digits=digits).text()


def _worded(p: Any) -> dict[str, str]:
    """A pair's figures as every front end words them (:mod:`benchnf.quantity`)."""
    return {"nf": _q(p.noise_figure_db, "dB", 2, p.noise_figure_u95_db), "gain": _q(p.gain_db, "dB", 2),
            "te": _q(p.noise_temperature_k, "K", 0)}
