"""The noise figure while tuning, in the terminal: a receiver streamed into
:class:`benchnf.measure.yfactor_live.YFactorLive`, one line per hot/cold pair."""

from __future__ import annotations

import queue
import sys
import threading
import time
from contextlib import ExitStack
from typing import Any, TextIO

from .sdr import SdrSettings, live_chunks, open_sdr

__all__ = ["follow_pairs", "pair_line", "typed_lines"]

_READ_S = 0.05


def pair_line(pair: Any, best: float | None, previous: float | None) -> str:
    """One pair as the terminal shows it: NF ± U, gain, Te and the trend against the last and the best."""
    from ..quantity import Quantity
    nf = Quantity(pair.noise_figure_db, "dB", pair.noise_figure_u95_db, digits=2).text()
    gain = f"gain {pair.gain_db:.2f} dB" if pair.gain_db is not None else "gain -"
    trend = "" if previous is None else f"  {pair.noise_figure_db - previous:+.2f} dB on the last"
    if best is not None and previous is not None:
        trend += "  (best so far)" if pair.noise_figure_db <= best else f"  best {best:.2f} dB"
    mark = f"  [{pair.mark}]" if pair.mark else ""
    return (f"pair {pair.index:3d}  {pair.mid_s:8.1f} s  NF {nf}  {gain}  Te {pair.noise_temperature_k:.0f} K"
            f"{trend}{mark}")


class _Terminal:
    """The terminal's side of a live session: the calibration pair first (when asked), the wait while the DUT
    is connected, then the pairs; each typed line is an adjustment noted on the next pair."""

    def __init__(self, live: Any, out: TextIO, calibrate_first: bool) -> None:
        self.live, self.out = live, out
        self.best: float | None = None
        self.previous: float | None = None
        self.state = "calibrating" if calibrate_first else "following"
        if calibrate_first:
            live.calibrate_next()
            self.say("calibration pair first: the noise source straight into the receiver; switch it on and off")

    def say(self, text: str) -> None:
        print(text, file=self.out, flush=True)

    def feed(self, iq: Any) -> None:
        if self.state == "connect":
            return  # the DUT is being connected: nothing measured
        for pair in self.live.feed(iq):
            self.say(pair_line(pair, self.best, self.previous))
            self.previous = pair.noise_figure_db
            self.best = self.previous if self.best is None else min(self.best, self.previous)
        if self.state == "calibrating" and not self.live.calibrating:
            self.state = "connect"
            self.say(f"calibration pair kept: receiver NF {self.live.calibration.receiver_nf_db:.2f} dB. Connect the "
                     f"DUT between the noise source and the receiver (the receiver's gain stays), then press Enter")

    def line(self, text: str | None) -> None:
        """A line typed (None: standard input closed)."""
        if text is None:
            if self.state == "connect":
                from ..errors import MeasurementError
                raise MeasurementError("standard input closed while waiting for the DUT to be connected: run "
                                       "--calibrate-first in a terminal and press Enter once the DUT is in")
            return
        if self.state == "connect":
            self.live.restart()
            self.state = "following"
            self.say("following the DUT: switch the noise source on and off, a second or more each")
        elif self.state == "calibrating":
            self.say("(the calibration pair is being taken: the note is not kept)")
        elif text.strip():
            self.live.mark(text)
            self.say(f"noted for the next pair: {text.strip()[:120]}")


def follow_pairs(address: str, settings: SdrSettings, source: Any, *, seconds: float | None,
                 calibrate_first: bool = False, lines: "queue.Queue[str | None] | None" = None,
                 out: TextIO = sys.stdout, drive: Any = None) -> tuple[Any, bool]:
    """Stream until `seconds` (or Ctrl-C), printing each pair; the whole run's result (None without a pair)
    and whether it was interrupted. `lines`: what the user types (None once input is closed): a note on the
    next pair, or, after a calibration pair (`calibrate_first`), that the DUT is connected. `drive`: key the
    noise source from a sound-card output meanwhile (:mod:`benchnf.acquire.source_drive`)."""
    from ..measure.yfactor_live import YFactorLive
    live = YFactorLive(rate_hz=settings.rate_hz, centre_hz=settings.centre_hz, gain_db=settings.gain_db,
                       source=source)
    how = "benchnf keys the noise source" if drive is not None else "switch the noise source on and off, a second or more each"
    print(f"following the noise figure at {settings.centre_hz / 1e6:.4f} MHz; {how}; type a note and Enter to mark "
          f"an adjustment", file=out, flush=True)
    term = _Terminal(live, out, calibrate_first)
    interrupted = False
    t0 = time.monotonic()
    with ExitStack() as keyed:
        if drive is not None:
            from .source_drive import SourceDrive
            keyed.enter_context(SourceDrive(drive))
            term.say(f"keying the noise source: {drive.state_s:g} s states, a {drive.tone_hz:g} Hz tone while hot")
        stream = keyed.enter_context(open_sdr(address, settings))
        try:
            for iq in live_chunks(stream, _READ_S, lambda text: print(f"benchnf: warning: {text}", file=sys.stderr,
                                                                       flush=True)):
                while lines is not None and not lines.empty():
                    term.line(lines.get_nowait())
                term.feed(iq)
                if seconds is not None and time.monotonic() - t0 >= seconds:
                    break
        except KeyboardInterrupt:
            interrupted = True
    if not live.pairs:
        if interrupted:
            return None, True
        from ..errors import MeasurementError
        raise MeasurementError("no hot/cold pair was completed: switch the noise source on and off (each state a "
                               "second or more) while the receiver runs, or run longer (--seconds)")
    return live.result(), interrupted


def typed_lines(stream: TextIO | None = None) -> "queue.Queue[str | None]":
    """Lines typed on standard input, from a reader thread; None once the input is closed (or unreadable)."""
    q: queue.Queue[str | None] = queue.Queue()
    src = stream if stream is not None else sys.stdin

    def read() -> None:
        try:
            for text in src:
                q.put(text.rstrip("\n"))
        except (OSError, ValueError, AttributeError, TypeError):
            pass
        q.put(None)
    threading.Thread(target=read, daemon=True, name="benchnf-typed-lines").start()
    return q
