"""The noise figure while tuning: a receiver's IQ stream, its hot and cold states found as they close, each
pair's noise figure as soon as its second state ends.

The stream is cut into blocks (10 ms); each block's power goes on a trace and its Welch spectrum is kept
until its state has been used. The states are found in the trace as in a switched recording
(:mod:`benchnf.dsp.switched`); a pair is evaluated once both its states have closed (another state has
begun), from the pooled spectra of its blocks, by the same Y-factor figures as a recording
(:func:`benchnf.measure.yfactor.yfactor_of_spectra`). A calibration pair (the source straight into the
receiver) may be taken first and is kept for the session; it is refused once the receiver's settings differ.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..dsp.spectrum import Psd, pool_psds, welch_iq_psd
from ..dsp.switched import block_powers, find_states
from ..errors import MeasurementError, ParameterError
from ..io.sigmf_iq import IqCapture
from .yfactor import HotColdSource, StateSpectra, segment_length_for, yfactor_of_spectra
from .yfactor_result import YFactorResult, YPair, YSegment
from .yfactor_switched import SwitchSettings

__all__ = ["LivePair", "ReceiverCalibration", "YFactorLive"]

_LOOK_BACK = 400  # blocks of trace kept before the first unused state, for the threshold (4 s at 10 ms)


@dataclass(frozen=True)
class LivePair:
    """One pair's figures as the live view shows them."""

    index: int
    mid_s: float
    noise_figure_db: float
    noise_figure_u95_db: float
    gain_db: float | None
    noise_temperature_k: float
    y_factor_db: float
    result: YFactorResult
    mark: str | None = None  # the adjustment noted before this pair


@dataclass(frozen=True)
class ReceiverCalibration:
    """The calibration pair of a session and the receiver settings it was taken at."""

    hot: Psd
    cold: Psd
    settings: tuple[float, float, float]  # centre Hz, rate, gain dB
    receiver_nf_db: float


class YFactorLive:
    """Feed complex IQ blocks; pairs come out as their states close (see the module docstring)."""

    def __init__(self, *, rate_hz: float, centre_hz: float, gain_db: float, source: HotColdSource,
                 switch: SwitchSettings | None = None, rows: int = 8, edge_fraction: float = 0.1) -> None:
        self.rate_hz, self.centre_hz, self.gain_db, self.source = rate_hz, centre_hz, gain_db, source
        self.switch = switch or SwitchSettings()
        self.rows, self.edge_fraction = rows, edge_fraction
        self.first = IqCapture(rate_hz, centre_hz, 0, "live", metadata={"datatype": "cu8"})
        self.block = self.switch.block_frames(self.first)
        self.segment = segment_length_for(self.first)
        self.calibration: ReceiverCalibration | None = None
        self._want_calibration = False
        self.pairs: list[LivePair] = []
        self.segments: list[YSegment] = []
        self._spectra: list[tuple[Psd, Psd]] = []
        self._pairs_of: list[tuple[int, int]] = []  # (hot, cold) index into segments, per pair
        self._pending_mark: str | None = None
        self._blocks_seen = 0  # blocks since the start: the session's clock
        self.restart()

    # -- the session ---------------------------------------------------------------------------------
    def restart(self) -> None:
        """Forget the trace (a new DUT or setting): pairs so far stay, the calibration stays."""
        self._tail = np.zeros(0, dtype=np.complex64)
        self._trace: list[float] = []
        self._psds: deque[tuple[int, Psd]] = deque()
        self._offset = self._used_until = self._blocks_seen  # the trace starts now; nothing before is used

    @property
    def calibrating(self) -> bool:
        """True while the next pair is to be the calibration pair."""
        return self._want_calibration

    def calibrate_next(self) -> None:
        """Take the next pair as the calibration pair (the source straight into the receiver)."""
        self._want_calibration = True

    def check_calibration(self, centre_hz: float, rate_hz: float, gain_db: float) -> None:
        """Refuse a kept calibration pair taken at other receiver settings."""
        c = self.calibration
        if c is not None and c.settings != (centre_hz, rate_hz, gain_db):
            raise ParameterError(f"the calibration pair was taken at {c.settings[0]:g} Hz, {c.settings[1]:g} S/s, "
                                 f"gain {c.settings[2]:g} dB; the receiver now runs at {centre_hz:g} Hz, {rate_hz:g} "
                                 f"S/s, gain {gain_db:g} dB: take a new calibration pair")

    def mark(self, text: str) -> None:
        """Note an adjustment; it is attached to the next pair."""
        self._pending_mark = text.strip()[:120] or "adjusted"

    # -- the stream ----------------------------------------------------------------------------------
    def feed(self, iq: NDArray[np.complexfloating]) -> list[LivePair]:
        """Take the next samples; return the pairs completed by them."""
        x = np.concatenate((self._tail, np.asarray(iq, dtype=np.complex64)))
        n = x.size // self.block
        for k in range(n):
            b = x[k * self.block:(k + 1) * self.block].astype(np.complex128)
            self._trace.append(float(block_powers([b], self.block)[0]))
            self._psds.append((self._blocks_seen, welch_iq_psd([b], sample_rate_hz=self.rate_hz,
                                                               segment_length=self.segment, centre_hz=self.centre_hz)))
            self._blocks_seen += 1
        self._tail = x[n * self.block:]
        return self._close_pairs() if n else []

    def _close_pairs(self) -> list[LivePair]:
        trace = np.asarray(self._trace)
        if trace.size < 16:
            return []
        try:
            sw = find_states(trace, block_frames=1, rate_hz=self.rate_hz / self.block, guard_s=self.switch.guard_s,
                             min_s=self.switch.min_s)
        except MeasurementError:
            return []
        new = []
        states, usable = sw.states[:-1], [self._usable(s) for s in sw.states[:-1]]  # the last is still running
        i = 0
        while i < len(states) - 1:
            a, b = states[i], states[i + 1]
            if usable[i] and usable[i + 1] and a.state != b.state:
                h, c = (a, b) if a.state == "hot" else (b, a)
                new.append(self._evaluate(h, c))
                self._used_until = self._offset + b.stop
                i += 2
            else:
                i += 1
        self._forget()
        return [p for p in new if p is not None]

    def _usable(self, s: Any) -> bool:
        """A closed state not used yet, neither too short nor unsteady."""
        return (s.start + self._offset >= self._used_until
                and (s.dropped is None or s.dropped.startswith("no neighbouring")))

    def _forget(self) -> None:
        """Drop spectra of used blocks and trace older than the look-back."""
        while self._psds and self._psds[0][0] < self._used_until:
            self._psds.popleft()
        cut = max(0, self._used_until - _LOOK_BACK - self._offset)
        if cut:
            del self._trace[:cut]
            self._offset += cut

    def _pooled(self, state: Any) -> Psd:
        a, b = self._offset + state.start, self._offset + state.stop
        return pool_psds([p for i, p in self._psds if a <= i < b])

    def _evaluate(self, hot_state: Any, cold_state: Any) -> LivePair | None:
        hot, cold = self._pooled(hot_state), self._pooled(cold_state)
        if self._want_calibration:
            self._keep_calibration(hot, cold)
            return None
        cal = self.calibration
        sp = StateSpectra([hot], [cold], hot, cold, cal.hot if cal else None, cal.cold if cal else None, None)
        try:
            r = yfactor_of_spectra(sp, first=self.first, source=self.source, n_rows=self.rows,
                                   edge_fraction=self.edge_fraction)
        except (MeasurementError, ParameterError):
            return None  # a pair the figures refuse (Y not resolved, NF below 0) is left out
        mid = (self._time(min(hot_state.start, cold_state.start)) + self._time(max(hot_state.stop, cold_state.stop))) / 2
        pair = LivePair(len(self.pairs), mid, r.noise_figure_db, r.budgets["noise_figure_db"].expanded_db, r.gain_db,
                        r.noise_temperature_k, r.y_factor_db, r, self._pending_mark)
        self._pending_mark = None
        first = min((hot_state, cold_state), key=lambda st: st.start)
        for st in (first, cold_state if first is hot_state else hot_state):  # in time order
            self.segments.append(YSegment(st.state, self._time(st.start), self._time(st.stop), round(st.level_db, 4),
                                          round(st.spread_db, 4), len(self.pairs)))
        i = len(self.segments) - 2
        self._pairs_of.append((i, i + 1) if first is hot_state else (i + 1, i))
        self.pairs.append(pair)
        self._spectra.append((hot, cold))
        return pair

    def _time(self, blocks: int) -> float:
        """Seconds since the session started of a block index in the current trace."""
        return (blocks + self._offset) * self.block / self.rate_hz

    def _keep_calibration(self, hot: Psd, cold: Psd) -> None:
        sp = StateSpectra([hot], [cold], hot, cold, None, None, None)
        r = yfactor_of_spectra(sp, first=self.first, source=self.source, n_rows=self.rows,
                               edge_fraction=self.edge_fraction)
        self.calibration = ReceiverCalibration(hot, cold, (self.centre_hz, self.rate_hz, self.gain_db),
                                               r.noise_figure_db)
        self._want_calibration = False

    # -- the whole run -------------------------------------------------------------------------------
    def result(self) -> YFactorResult:
        """Every pair pooled into one result, with each pair's figures and the states they came from."""
        if not self.pairs:
            raise MeasurementError("no hot/cold pair was completed: switch the noise source on and off (each state "
                                   "a second or more) while the receiver runs")
        hots, colds = [h for h, _c in self._spectra], [c for _h, c in self._spectra]
        cal = self.calibration
        sp = StateSpectra(hots, colds, pool_psds(hots), pool_psds(colds), cal.hot if cal else None,
                          cal.cold if cal else None, None)
        r = yfactor_of_spectra(sp, first=self.first, source=self.source, n_rows=self.rows,
                               edge_fraction=self.edge_fraction)
        pairs = tuple(YPair(h, c, p.mid_s, p.y_factor_db, p.noise_figure_db, p.noise_figure_u95_db,
                            p.noise_temperature_k, p.gain_db) for p, (h, c) in zip(self.pairs, self._pairs_of))
        notes = r.notes + tuple(f"pair {p.index}: {p.mark}" for p in self.pairs if p.mark)
        return replace(r, segments=tuple(self.segments), pairs=pairs, notes=notes)
