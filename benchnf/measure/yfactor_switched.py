"""One recording while the noise source is switched on and off: its hot and cold states found from the power
steps (:mod:`benchnf.dsp.switched`), cut into captures of their own for the Y-factor analysis, and the
segments, each pair's figures and the power trace for the result."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..capture import Capture
from ..dsp.switched import Switching, block_powers, find_states
from ..io.sigmf_iq import IqCapture
from .yfactor_result import YPair, YPowerTrace, YSegment

__all__ = ["SwitchSettings", "cut_states", "switched_fields", "trace_points"]

_TRACE_POINTS = 2000  # the power trace kept in the result, at most


@dataclass(frozen=True)
class SwitchSettings:
    """How states are told apart: the power's block (default 10 ms for IQ, 100 ms for audio, where each block
    holds fewer samples), the time left out at each switch and the shortest usable state."""

    block_s: float | None = None
    guard_s: float = 0.05
    min_s: float = 0.2

    def block_frames(self, rec: Any) -> int:
        block_s = self.block_s if self.block_s is not None else (0.01 if isinstance(rec, IqCapture) else 0.1)
        return max(16, int(round(block_s * rec.sample_rate_hz)))


def _cut(rec: Any, start: int, stop: int, what: str) -> Any:
    """Samples `start` to `stop` of a recording as a capture of its own."""
    t0, t1 = start / rec.sample_rate_hz, stop / rec.sample_rate_hz
    if isinstance(rec, IqCapture):
        return replace(rec, start=rec.start + start, n_frames=stop - start, segments=(),
                       label=f"{rec.label} [{what} {t0:.2f}-{t1:.2f} s]")
    assert isinstance(rec, Capture)
    return rec.window(start, stop)


def cut_states(rec: Any, settings: SwitchSettings | None = None) -> tuple[list[Any], list[Any], Switching]:
    """The hot and cold captures of each pair found in one switched recording, and what was found."""
    settings = settings or SwitchSettings()
    block = settings.block_frames(rec)
    blocks = rec.blocks() if isinstance(rec, IqCapture) else rec.blocks(1 << 16)
    sw = find_states(block_powers(blocks, block), block_frames=block, rate_hz=rec.sample_rate_hz,
                     guard_s=settings.guard_s, min_s=settings.min_s)
    hot = [_cut(rec, sw.states[h].start, sw.states[h].stop, "hot") for h, _c in sw.pairs]
    cold = [_cut(rec, sw.states[c].start, sw.states[c].stop, "cold") for _h, c in sw.pairs]
    return hot, cold, sw


def trace_points(trace_db: np.ndarray, block_s: float) -> tuple[float, tuple[float, ...]]:
    """The power trace thinned to at most 2000 points (each the mean power of its blocks): interval and levels."""
    k = max(1, math.ceil(trace_db.size / _TRACE_POINTS))
    n = trace_db.size // k * k
    lin = (10 ** (trace_db[:n] / 10)).reshape(-1, k).mean(axis=1)
    return block_s * k, tuple(round(float(v), 4) for v in 10 * np.log10(lin))


def switched_fields(sw: Switching, figures: list[tuple[Any, ...]], rate_hz: float) -> dict[str, Any]:
    """The result's ``segments``, ``pairs`` and ``power_trace`` of a switched recording."""
    def fin(v: float) -> float | None:
        return round(v, 4) if v is not None and math.isfinite(v) else None
    segments = tuple(YSegment(s.state, s.start / rate_hz, s.stop / rate_hz, fin(s.level_db), fin(s.spread_db),  # type: ignore[arg-type]
                              s.pair, s.dropped) for s in sw.states)
    pairs = []
    for (h, c), (y_db, nf, u, te, gain) in zip(sw.pairs, figures):
        mid = (min(sw.states[h].start, sw.states[c].start) + max(sw.states[h].stop, sw.states[c].stop)) / 2 / rate_hz
        pairs.append(YPair(h, c, mid, y_db, nf, u, te, gain))
    block_s = sw.block_frames / rate_hz
    interval, levels = trace_points(sw.trace_db, block_s)
    return {"segments": segments, "pairs": tuple(pairs),
            "power_trace": YPowerTrace(interval, levels, round(sw.threshold_db, 4))}
