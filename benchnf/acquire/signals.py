"""Test signals in full-scale units, and aligning a recording with what was played."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError

__all__ = ["make_signal", "align_lag", "tone_span", "SIGNALS"]

SIGNALS = ("tone", "multitone", "sweep", "noise")


def make_signal(kind: str, *, sample_rate_hz: float, seconds: float, level_dbfs: float = -20.0,
                frequency_hz: float = 1000.0, seed: int = 0) -> NDArray[np.float32]:
    """A tone, a multitone (octave-spaced, random phases), a log sweep 20 Hz-20 kHz or white noise.

    `level_dbfs` is the RMS level per AES17 (a full-scale sine is 0 dBFS); the peak stays below 0 dBFS.
    """
    if kind not in SIGNALS:
        raise ParameterError(f"signal {kind!r} is not one of {', '.join(SIGNALS)}")
    if not (seconds > 0 and level_dbfs <= 0):
        raise ParameterError("a signal needs a duration > 0 s and a level <= 0 dBFS")
    n = int(round(seconds * sample_rate_hz))
    t = np.arange(n) / sample_rate_hz
    rms = 10 ** (level_dbfs / 20) / math.sqrt(2)
    rng = np.random.default_rng(seed)
    if kind == "tone":
        if not 0 < frequency_hz < sample_rate_hz / 2:
            raise ParameterError(f"tone {frequency_hz:g} Hz must lie below half the sample rate")
        x = np.sin(2 * np.pi * frequency_hz * t)
    elif kind == "multitone":
        freqs = [f for f in 31.25 * 2.0 ** np.arange(10) if f < sample_rate_hz / 2.2]
        x = sum(np.sin(2 * np.pi * f * t + rng.uniform(0, 2 * np.pi)) for f in freqs)
    elif kind == "sweep":
        from scipy import signal
        x = signal.chirp(t, 20.0, t[-1], min(20_000.0, sample_rate_hz / 2.2), method="logarithmic")
    else:
        x = rng.standard_normal(n)
    x = x / np.sqrt(np.mean(x ** 2)) * rms
    peak = float(np.max(np.abs(x)))
    if peak >= 1.0:
        raise ParameterError(f"a {kind} at {level_dbfs:g} dBFS RMS would clip (peak {20 * math.log10(peak):+.1f} "
                             f"dBFS): lower the level")
    return x.astype(np.float32)


def align_lag(recorded: NDArray, reference: NDArray) -> int:
    """Samples by which `recorded` lags `reference`, by cross-correlation (latency varies call to call)."""
    from scipy import signal
    r = np.asarray(recorded, dtype=np.float64)
    s = np.asarray(reference, dtype=np.float64)
    c = signal.correlate(r, s, mode="full", method="fft")
    return int(np.argmax(np.abs(c)) - (s.size - 1))


def tone_span(recorded: NDArray, sample_rate_hz: float, *, window_s: float = 0.01) -> tuple[int, int]:
    """First and one-past-last sample where a played burst is present in `recorded`: where its short-time
    power (`window_s` windows) exceeds a quarter of the largest, i.e. the amplitude exceeds half.

    Cross-correlation cannot place a steady tone (every period matches equally where the recording cuts the
    tone short); its envelope can.
    """
    x = np.asarray(recorded, dtype=np.float64)
    n = max(int(window_s * sample_rate_hz), 1)
    power = np.convolve(x * x, np.ones(n) / n, mode="same")
    on = np.flatnonzero(power > 0.25 * power.max()) if power.size and power.max() > 0 else np.array([], dtype=int)
    return (int(on[0]), int(on[-1]) + 1) if on.size else (0, 0)
