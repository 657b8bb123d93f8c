"""The desk's running spectrum: a sound-card stream feeding :class:`~benchnf.acquire.live.LiveAnalyzer`.

The stream's callback only queues blocks; the server's periodic task drains the queue into the
analyzer and takes a snapshot (so the numpy work runs on one thread). Payloads are plain dicts for JSON.
"""

from __future__ import annotations

import math
import queue
import threading
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import BenchError

__all__ = ["AudioGuard", "LiveSettings", "LiveFeed", "reference_trace", "trace_csv"]

_MAX_POINTS = 4097  # bins sent to the browser: every bin of the default 8192-sample segment


class AudioGuard:
    """One user of the sound card at a time: a live view or a recording, never two."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self.holder: str | None = None

    def take(self, who: str) -> None:
        with self._lock:
            if self.holder is not None:
                raise BenchError(f"the sound card is busy with {self.holder}: stop it first")
            self.holder = who

    def give_back(self, who: str) -> None:
        with self._lock:
            if self.holder == who:
                self.holder = None


@dataclass(frozen=True)
class LiveSettings:
    device: str | None = None
    host_api: str | None = None
    rate_hz: float = 48_000.0
    channel: int = 0
    volts_per_fs: float | None = None
    gain_db: float | None = None
    band_hz: tuple[float, float] = (20.0, 20_000.0)
    weighting: str = "none"
    averages: int | None = 16
    segment_length: int = 8192
    cross_channel: int | None = None  # a second input on the same output: the cross-spectrum mode
    cross_volts_per_fs: float | None = None  # that input's calibration (default: the first's)
    reference_channel: int | None = None  # a channel carrying a suspected source: the reference mode


class LiveFeed:
    """A running input stream and its analyzer; start() opens the device, stop() closes it."""

    def __init__(self, settings: LiveSettings, guard: AudioGuard) -> None:
        from ..acquire.live import CrossLiveAnalyzer, LiveAnalyzer, ReferenceLiveAnalyzer
        from ..dsp.weighting import Band
        self.settings, self._guard = settings, guard
        self.analyzer: Any
        if settings.reference_channel is not None:
            self.analyzer = ReferenceLiveAnalyzer(sample_rate_hz=settings.rate_hz,
                                                  segment_length=settings.segment_length,
                                                  band=Band(*settings.band_hz), volts_per_fs=settings.volts_per_fs,
                                                  weighting=settings.weighting, gain_db=settings.gain_db)
        elif settings.cross_channel is None:
            self.analyzer = LiveAnalyzer(sample_rate_hz=settings.rate_hz, segment_length=settings.segment_length,
                                         band=Band(*settings.band_hz), volts_per_fs=settings.volts_per_fs,
                                         weighting=settings.weighting, gain_db=settings.gain_db,
                                         averages=settings.averages)
        else:
            self.analyzer = CrossLiveAnalyzer(sample_rate_hz=settings.rate_hz, segment_length=settings.segment_length,
                                              band=Band(*settings.band_hz), volts_per_fs=settings.volts_per_fs,
                                              second_volts_per_fs=settings.cross_volts_per_fs,
                                              weighting=settings.weighting, gain_db=settings.gain_db)
        second = settings.cross_channel if settings.reference_channel is None else settings.reference_channel
        self._take = [settings.channel] if second is None else [settings.channel, second]
        self._blocks: queue.Queue[np.ndarray] = queue.Queue(maxsize=512)
        self._stream: Any = None
        self.overflows = 0
        self.device_text = ""
        self.note: str | None = None

    def start(self) -> None:
        from ..acquire.devices import find_device, sounddevice
        sd = sounddevice()
        s = self.settings
        dev = find_device(s.device, host_api=s.host_api, kind="input")
        for ch in self._take:
            if ch >= dev.max_input_channels:
                raise BenchError(f"{dev.name!r} has {dev.max_input_channels} input channel(s), 0 to "
                                 f"{dev.max_input_channels - 1} (0 = first); channel {ch} does not exist")
        self._guard.take("the live view")
        try:
            # Low latency: the first blocks arrive at once (with the host's default "high" latency the ALSA
            # pulse device here delivered its first block 1.4 s after the start); a dropped block is counted.
            self._stream = sd.InputStream(samplerate=s.rate_hz, channels=max(self._take) + 1, dtype="float32",
                                          device=dev.index, callback=self._callback, latency="low")
            self._stream.start()
        except Exception as err:  # PortAudio's errors: a rate or channel count the device refuses
            self._guard.give_back("the live view")
            self._stream = None
            raise BenchError(f"{dev.name!r} cannot stream at {s.rate_hz:g} Hz: {err}") from err
        self.device_text = dev.describe()
        from ..acquire.devices import rate_note
        self.note = rate_note(dev, s.rate_hz)

    def _callback(self, indata: Any, frames: int, time: Any, status: Any) -> None:
        if status and status.input_overflow:
            self.overflows += 1
        try:
            block = indata[:, self._take]
            self._blocks.put_nowait(block[:, 0].copy() if block.shape[1] == 1 else block.copy())
        except queue.Full:
            self.overflows += 1

    def stop(self) -> None:
        if self._stream is not None:
            try:
                self._stream.stop()
                self._stream.close()
            finally:
                self._stream = None
                self._guard.give_back("the live view")

    @property
    def running(self) -> bool:
        return self._stream is not None

    def reset(self) -> None:
        self.analyzer.reset()

    def drain(self) -> None:
        """Move every queued block into the analyzer (on the caller's thread)."""
        while True:
            try:
                block = self._blocks.get_nowait()
            except queue.Empty:
                return
            self.analyzer.feed(block.astype(np.float64))

    def payload(self) -> dict[str, Any] | None:
        """The newest snapshot for the browser: density (output or input-referred), band noise, EIN, lines."""
        self.drain()
        snap = self.analyzer.snapshot()
        if snap is None:
            return None
        density = snap.density if snap.input_density is None else snap.input_density
        f = snap.frequency_hz
        step = max(1, math.ceil(f.size / _MAX_POINTS))
        unit = snap.unit
        return {
            "seconds": snap.seconds_averaged, "unit": unit, "referred": "input" if snap.gain_db is not None else "output",
            "x": f[1::step].tolist(), "y": np.sqrt(np.clip(density[1::step], 0, None)).tolist(),
            "band_hz": list(self.settings.band_hz), "weighting": snap.weighting,
            "band_rms": snap.band_rms, "ein_rms": snap.ein_rms, "gain_db": snap.gain_db,
            "lines": [{"freq_hz": ln.freq_hz, "rms": ln.vrms, "family": ln.family, "excess_db": ln.excess_db}
                      for ln in snap.lines[:12]],
            "averages": self.analyzer.averages, "overflows": self.overflows,
            "cross": _cross_payload(snap, f, step), "reference": _reference_payload(snap, step),
        }


def _shown(snap: Any, step: int, *densities: np.ndarray) -> list[list[float]]:
    """Densities as the browser draws them: referred to the input through a stated gain, as amplitudes."""
    from ..acquire.live import referred_to_input
    return [np.sqrt(d[1::step] if snap.gain_db is None else referred_to_input(d[1::step], snap.gain_db)).tolist()
            for d in densities]


def _reference_payload(snap: Any, step: int) -> dict[str, Any] | None:
    """The reference mode's extras: the output coherent with the reference, the output without it, the share."""
    r = snap.reference
    if r is None:
        return None
    coherent, conditioned = _shown(snap, step, r.coherent_density, r.conditioned_density)
    return {"coherent_y": coherent, "conditioned_y": conditioned, "band_share": r.band_share}


def _cross_payload(snap: Any, f: np.ndarray, step: int) -> dict[str, Any] | None:
    """The cross-spectrum mode's extras: the first input alone and the density one bin resolves, the band's
    U, and its upper bound while not resolved."""
    c = snap.cross
    if c is None:
        return None
    own, floor = _shown(snap, step, c.own_density, c.resolution_density)
    return {"own_y": own, "floor_y": floor, "own_rms": c.own_rms, "band_u95_db": c.band_u95_db,
            "band_upper_rms": c.band_upper_rms}


def reference_trace(kind: str, path: Path | None, *, settings: LiveSettings, profile_mask: Any = None
                    ) -> dict[str, Any]:
    """A trace to compare the live spectrum against: a floor capture, a saved trace CSV or a profile's mask.

    Densities in V/sqrt(Hz) (FS/sqrt(Hz) without a calibration), as the live trace.
    """
    if kind == "mask":
        m = profile_mask
        return {"name": f"mask: {m.quantity}", "x": [float(f) for f in m.frequency_hz],
                "y": [float(v) for v in m.limit]}
    if path is None:
        raise BenchError("choose a file for the reference trace")
    from ..dsp.spectrum import Psd, welch_psd
    from ..io.opener import input_kind, open_input
    if kind == "trace":
        psd = open_input(path)
        if not isinstance(psd, Psd):
            raise BenchError(f"{path.name} is a time series, not a spectrum trace")
        return {"name": path.name, "x": psd.frequency_hz[1:].tolist(), "y": np.sqrt(psd.psd_per_hz[1:]).tolist()}
    if input_kind(path) != "audio":
        raise BenchError(f"{path.name} is not an audio capture: choose a floor recording")
    cap = open_input(path)
    psd = welch_psd(cap.blocks(), sample_rate_hz=cap.sample_rate_hz, segment_length=settings.segment_length)
    scale = settings.volts_per_fs or 1.0
    density = psd.psd_per_hz * scale ** 2
    if settings.gain_db is not None:
        from ..acquire.live import referred_to_input
        density = referred_to_input(density, settings.gain_db)
    return {"name": path.name, "x": psd.frequency_hz[1:].tolist(), "y": np.sqrt(density[1:]).tolist()}


def trace_csv(payload: dict[str, Any]) -> str:
    """The live trace as a benchnf CSV trace (docs/csv.md): readable again as a reference."""
    if payload["unit"] != "V":
        raise BenchError("a trace is saved in volts: give the live view a calibration (volts per full scale) first")
    unit = "V/rtHz"
    lines = ["# saved from the bench desk's live view", "# detector = rms",
             f"# referred to the {payload['referred']}", f"frequency (Hz),density ({unit})"]
    lines += [f"{x:.6g},{y:.6e}" for x, y in zip(payload["x"], payload["y"])]
    return "\n".join(lines) + "\n"
