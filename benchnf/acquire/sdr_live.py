"""The noise figure while tuning, in the terminal: a receiver streamed into
:class:`benchnf.measure.yfactor_live.YFactorLive`, one line per hot/cold pair."""

from __future__ import annotations

import sys
import time
from typing import Any, TextIO

from .sdr import SdrSettings, live_chunks, open_sdr

__all__ = ["follow_pairs", "pair_line"]

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


def follow_pairs(address: str, settings: SdrSettings, source: Any, *, seconds: float | None,
                 out: TextIO = sys.stdout) -> tuple[Any, bool]:
    """Stream until `seconds` (or Ctrl-C), printing each pair; the whole run's result (None without a pair)
    and whether it was interrupted."""
    from ..measure.yfactor_live import YFactorLive
    live = YFactorLive(rate_hz=settings.rate_hz, centre_hz=settings.centre_hz, gain_db=settings.gain_db,
                       source=source)
    best = previous = None
    interrupted = False
    print(f"following the noise figure at {settings.centre_hz / 1e6:.4f} MHz; switch the noise source on and off, "
          f"a second or more each", file=out, flush=True)
    t0 = time.monotonic()
    with open_sdr(address, settings) as stream:
        try:
            for iq in live_chunks(stream, _READ_S, lambda text: print(f"benchnf: warning: {text}", file=sys.stderr,
                                                                       flush=True)):
                for pair in live.feed(iq):
                    print(pair_line(pair, best, previous), file=out, flush=True)
                    previous = pair.noise_figure_db
                    best = previous if best is None else min(best, previous)
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

