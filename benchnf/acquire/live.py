"""Live view while adjusting the bench: a running spectrum and its integrated noise, refreshed often.

:class:`LiveAnalyzer` holds the computation (no device): feed it blocks, ask
for a snapshot.  :func:`run_live` connects it to a sound card and prints one
refreshed line several times a second (and, optionally, a matplotlib window).
Typing ``r`` and Enter resets the averaging.
"""

from __future__ import annotations

import math
import queue
import sys
import threading
import time
from dataclasses import dataclass, replace

import numpy as np

from ..dsp.integrate import band_bin_weights
from ..dsp.spectrum import Psd, WelchAccumulator
from ..dsp.spurs import find_lines
from ..dsp.weighting import Band
from ..units import fs_to_dbfs, vrms_to_dbu

__all__ = ["LiveSnapshot", "CrossReading", "ReferenceReading", "LiveAnalyzer", "CrossLiveAnalyzer",
           "ReferenceLiveAnalyzer", "run_live", "referred_to_input"]


def referred_to_input(density: np.ndarray, gain_db: float) -> np.ndarray:
    """An output power density referred to the input through a voltage gain in dB: S_in = S_out / G^2."""
    return density / 10 ** (gain_db / 10)


@dataclass(frozen=True)
class LiveSnapshot:
    seconds_averaged: float
    band_rms: float | None  # None: the cross-spectrum mode has not resolved the band yet
    unit: str
    strongest_line_hz: float | None
    strongest_line_rms: float | None
    frequency_hz: np.ndarray
    density: np.ndarray
    lines: tuple = ()  # every line found (dsp.spurs.Line), strongest first
    weighting: str = "none"
    gain_db: float | None = None  # stated gain: then input_density and ein_rms are input-referred
    cross: "CrossReading | None" = None  # the cross-spectrum mode's extras (density is then the co-spectrum)
    reference: "ReferenceReading | None" = None  # the reference mode's extras

    @property
    def input_density(self) -> np.ndarray | None:
        """The density divided by the stated power gain (None without a gain)."""
        return None if self.gain_db is None else referred_to_input(self.density, self.gain_db)

    @property
    def ein_rms(self) -> float | None:
        """The band noise referred to the input through the stated gain: EIN = E_out / G_v."""
        if self.gain_db is None or self.band_rms is None:
            return None
        return self.band_rms / 10 ** (self.gain_db / 20)

    def line(self) -> str:
        if self.band_rms is None and self.cross is not None:
            return (f"[{self.seconds_averaged:6.1f} s] band noise not resolved yet (below "
                    f"{self.cross.band_upper_rms:.3g} {self.unit}); one input alone reads {self.cross.own_rms:.3g}")
        if self.band_rms is None:
            return f"[{self.seconds_averaged:6.1f} s] band noise -"
        level = (f"{vrms_to_dbu(self.band_rms):7.2f} dBu ({self.band_rms * 1e6:8.3f} uV)" if self.unit == "V"
                 else f"{fs_to_dbfs(self.band_rms):7.2f} dBFS")
        hum = (f"strongest line {self.strongest_line_hz:7.1f} Hz at "
               f"{20 * math.log10(self.strongest_line_rms / self.band_rms):+6.1f} dB re band"
               if self.strongest_line_hz and self.strongest_line_rms else "no lines")
        return f"[{self.seconds_averaged:6.1f} s] band noise {level}; {hum}"


@dataclass(frozen=True)
class CrossReading:
    """What the cross-spectrum mode adds to a snapshot: the first input alone, the density one bin resolves
    (:attr:`benchnf.dsp.cross.CrossSpectra.resolution_floor`), the band's U and, while the band is within
    three standard deviations of zero, an upper bound instead of a level."""

    own_density: np.ndarray
    resolution_density: np.ndarray
    own_rms: float
    band_u95_db: float | None  # of the band level (amplitude), k=2; None while not resolved
    band_upper_rms: float  # k=2 upper bound of the band level


class LiveAnalyzer:
    """Welch spectrum with band level and hum, resettable: cumulative, or a running average of N segments.

    With ``averages=N`` each snapshot blends the segments that arrived since the last one into the
    running mean with weight ``m / min(n_seen, N)`` (m new segments): the plain mean until N segments
    have been seen, an exponential average with a time constant of N segments after that (common
    practice for analyzers' "exponential" averaging).
    """

    def __init__(self, *, sample_rate_hz: float, segment_length: int = 8192, band: Band = Band(20.0, 20_000.0),
                 volts_per_fs: float | None = None, weighting: str = "none", gain_db: float | None = None,
                 averages: int | None = None) -> None:
        self.sample_rate_hz, self.segment_length, self.band = sample_rate_hz, segment_length, band
        self.volts_per_fs, self.weighting, self.gain_db = volts_per_fs, weighting, gain_db
        self.averages = averages
        self._weights: tuple[int, np.ndarray] | None = None
        self.reset()

    def reset(self) -> None:
        self._acc = WelchAccumulator(sample_rate_hz=self.sample_rate_hz, segment_length=self.segment_length)
        self._frames = 0
        self._running: Psd | None = None
        self._seen = 0

    def _psd(self) -> Psd | None:
        """The averaged spectrum now (None before the first whole segment)."""
        fresh = self._acc.n_averages
        unit, scale = ("V" if self.volts_per_fs else "FS"), (self.volts_per_fs or 1.0)
        if self.averages is None:
            return self._acc.result(unit=unit, scale=scale) if fresh else None
        if fresh:
            new = self._acc.result(unit=unit, scale=scale)
            self._acc.restart_average()
            self._seen += fresh
            if self._running is None:
                self._running = new
            else:
                a = fresh / min(self._seen, self.averages)
                n = min(self._seen, self.averages)
                self._running = replace(new, psd_per_hz=self._running.psd_per_hz + a * (new.psd_per_hz -
                                                                                         self._running.psd_per_hz),
                                        n_averages=n, dof=new.dof * n / fresh)
        return self._running

    def feed(self, block: np.ndarray) -> None:
        self._acc.update(block)
        self._frames += block.size

    def snapshot(self) -> LiveSnapshot | None:
        psd = self._psd()
        if psd is None:
            return None
        if self._weights is None or self._weights[0] != psd.frequency_hz.size:
            self._weights = (psd.frequency_hz.size, band_bin_weights(psd.frequency_hz, self.band,
                                                                     weighting=self.weighting))
        w = self._weights[1]
        search = find_lines(psd) if psd.n_averages >= 4 else None
        lines = search.lines if search else ()
        rms = math.sqrt(float(np.dot(w, psd.psd_per_hz)))
        top = lines[0] if lines else None
        return LiveSnapshot(self._frames / self.sample_rate_hz, rms, psd.unit, top.freq_hz if top else None,
                            top.vrms if top else None, psd.frequency_hz, psd.psd_per_hz, tuple(lines),
                            self.weighting, self.gain_db)


class CrossLiveAnalyzer:
    """The live view of two inputs on one output: their averaged cross-spectrum (cumulative until reset: the
    inputs' own noise averages away only over a long average), the band level with its U, refused as a level
    (an upper bound instead) until resolved. See docs/cross.md."""

    averages = None

    def __init__(self, *, sample_rate_hz: float, segment_length: int = 8192, band: Band = Band(20.0, 20_000.0),
                 volts_per_fs: float | None = None, second_volts_per_fs: float | None = None,
                 weighting: str = "none", gain_db: float | None = None) -> None:
        self.sample_rate_hz, self.segment_length, self.band = sample_rate_hz, segment_length, band
        self.volts_per_fs, self.weighting, self.gain_db = volts_per_fs, weighting, gain_db
        self.second_volts_per_fs = second_volts_per_fs if second_volts_per_fs is not None else volts_per_fs
        self.reset()

    def reset(self) -> None:
        from ..dsp.cross import CrossAccumulator
        self._acc = CrossAccumulator(sample_rate_hz=self.sample_rate_hz, segment_length=self.segment_length)
        self._frames = 0

    def feed(self, pair: np.ndarray) -> None:
        """A block of shape (frames, 2): the two inputs."""
        self._acc.update(pair[:, 0], pair[:, 1])
        self._frames += pair.shape[0]

    def snapshot(self) -> LiveSnapshot | None:
        from ..noise.floor import band_std
        if self._acc.n_averages < 2:
            return None
        spectra = self._acc.result(scale_x=self.volts_per_fs or 1.0, scale_y=self.second_volts_per_fs or 1.0)
        dut = spectra.dut_psd()
        w = band_bin_weights(dut.frequency_hz, self.band, weighting=self.weighting)
        power = float(np.dot(w, dut.psd_per_hz))
        variance = dut.bin_variance if dut.bin_variance is not None else np.zeros_like(w)
        std = band_std(w, variance, dut.correlation_kernel)
        resolved = power > 3.0 * std
        lines = find_lines(dut).lines if resolved and dut.n_averages >= 4 else ()
        top = lines[0] if lines else None
        reading = CrossReading(spectra.s_xx, spectra.resolution_floor, math.sqrt(float(np.dot(w, spectra.s_xx))),
                               10 / math.log(10) * 2 * std / power if resolved else None,
                               math.sqrt(max(power, 0.0) + 2.0 * std))
        return LiveSnapshot(self._frames / self.sample_rate_hz, math.sqrt(power) if resolved else None,
                            "V" if self.volts_per_fs else "FS", top.freq_hz if top else None,
                            top.vrms if top else None, dut.frequency_hz, dut.psd_per_hz, tuple(lines),
                            self.weighting, self.gain_db, reading)


@dataclass(frozen=True)
class ReferenceReading:
    """What the reference mode adds: the output coherent with the reference channel, the output without it
    (conditioned, bias-corrected by n / (n - 1)) and the band share that arrives through it."""

    coherent_density: np.ndarray
    conditioned_density: np.ndarray
    band_share: float


class ReferenceLiveAnalyzer(CrossLiveAnalyzer):
    """The live view of an output with a reference channel (a rail probe, a mains loop): how much of the output
    is coherent with the reference, averaged until reset (docs/cross.md, attribution by coherence)."""

    def snapshot(self) -> LiveSnapshot | None:
        if self._acc.n_averages < 2:
            return None
        spectra = self._acc.result(scale_x=self.volts_per_fs or 1.0, scale_y=self.second_volts_per_fs or 1.0)
        n = spectra.dof / 2.0
        out = spectra.s_xx
        coherent = spectra.coherence * out
        conditioned = np.maximum((out - coherent) * n / (n - 1.0), 0.0)
        w = band_bin_weights(spectra.frequency_hz, self.band, weighting=self.weighting)
        total = float(np.dot(w, out))
        share = 1.0 - float(np.dot(w, conditioned)) / total if total > 0 else 0.0
        psd = Psd(frequency_hz=spectra.frequency_hz, psd_per_hz=out, unit="V" if self.volts_per_fs else "FS",
                  sample_rate_hz=self.sample_rate_hz, segment_length=self.segment_length, hop=spectra.hop,
                  window="hann", enbw_hz=spectra.enbw_hz, n_averages=spectra.n_averages, dof=spectra.dof)
        lines = find_lines(psd).lines if psd.n_averages >= 4 else ()
        top = lines[0] if lines else None
        return LiveSnapshot(self._frames / self.sample_rate_hz, math.sqrt(total), psd.unit,
                            top.freq_hz if top else None, top.vrms if top else None, psd.frequency_hz, out,
                            tuple(lines), self.weighting, self.gain_db, None,
                            ReferenceReading(coherent, conditioned, share))


def run_live(*, device: str | None, host_api: str | None, sample_rate_hz: float, volts_per_fs: float | None,
             band: Band, update_hz: float = 5.0, seconds: float | None = None, window: bool = False,
             out=sys.stdout) -> int:
    """Run the live view until Ctrl-C (or `seconds`); returns the number of updates shown."""
    from .devices import find_device, sounddevice
    sd = sounddevice()
    dev = find_device(device, host_api=host_api, kind="input")
    analyzer = LiveAnalyzer(sample_rate_hz=sample_rate_hz, band=band, volts_per_fs=volts_per_fs)
    q: queue.Queue = queue.Queue()
    reset = threading.Event()

    def keys():
        for line in sys.stdin:
            if line.strip().lower() == "r":
                reset.set()

    if sys.stdin is not None and sys.stdin.isatty():
        threading.Thread(target=keys, daemon=True).start()
    fig = ax = curve = None
    if window:
        from .._optional import require
        plt = require("matplotlib.pyplot", extra=None, purpose="the live window")
        plt.ion()
        fig, ax = plt.subplots(figsize=(8, 4.5))
        ax.set(xscale="log", yscale="log", xlabel="Frequency (Hz)",
               ylabel="Density (" + ("V" if volts_per_fs else "FS") + "/\u221aHz)")
    updates = 0
    t0 = time.monotonic()
    with sd.InputStream(samplerate=sample_rate_hz, channels=1, dtype="float32", device=dev.index,
                        callback=lambda indata, frames, t, status: q.put(indata[:, 0].copy())):
        print(f"live view of {dev.describe()} at {sample_rate_hz:g} Hz; type r + Enter to reset, Ctrl-C to stop",
              file=out)
        next_update = time.monotonic()
        try:
            while seconds is None or time.monotonic() - t0 < seconds:
                try:
                    analyzer.feed(q.get(timeout=0.5).astype(np.float64))
                except queue.Empty:
                    continue
                if reset.is_set():
                    analyzer.reset()
                    reset.clear()
                if time.monotonic() >= next_update:
                    snap = analyzer.snapshot()
                    next_update += 1.0 / update_hz
                    if snap is None:
                        continue
                    updates += 1
                    print("\r" + snap.line(), end="", file=out, flush=True)
                    if window and fig is not None and ax is not None:
                        if curve is None:
                            (curve,) = ax.plot(snap.frequency_hz[1:], np.sqrt(snap.density[1:]))
                        else:
                            curve.set_ydata(np.sqrt(snap.density[1:]))
                            ax.relim()
                            ax.autoscale_view()
                        fig.canvas.draw_idle()
                        fig.canvas.flush_events()
        except KeyboardInterrupt:
            pass
    print(file=out)
    return updates
