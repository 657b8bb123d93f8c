"""The scatter a band power actually shows over a capture, not the one a model predicts.

The Welch statistics give a band power's variance from its degrees of freedom, for stationary Gaussian
noise. Near the analyzer's floor a figure is a small difference of two such powers, and whatever the model
leaves out (a floor that is not stationary, interference, a spectrum shape that the correlation of
neighbouring bins misjudges) is multiplied by it. Here the variance of the mean band power is estimated
from the capture itself by the method of batch means: the Hann segments (50 % overlap) are grouped into B
consecutive batches, and

    var(mean) = s_B^2 / B,     s_B: the standard deviation of the B batch means,

which holds for correlated segments as long as a batch is much longer than the correlation (Law and
Kelton, Simulation Modeling and Analysis, 3rd ed., section 9.5.3: batch means; from memory).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from .psd import make_window

__all__ = ["band_power_rel_var", "BATCHES"]

#: Batches of the batch-means estimate: enough for a variance (7 degrees of freedom), each still many segments.
BATCHES = 8
_CHUNK = 64  # segments transformed at once


def segment_band_powers(x: NDArray[np.float64], segment_length: int, weights: NDArray[np.float64]) -> NDArray[np.float64]:
    """The weighted band power of each Hann segment (50 % overlap), in arbitrary but common units."""
    seg, hop = segment_length, segment_length // 2
    n_seg = (x.size - seg) // hop + 1 if x.size >= seg else 0
    win = make_window("hann", seg)
    out = np.empty(max(n_seg, 0))
    for start in range(0, n_seg, _CHUNK):
        idx = np.arange(start, min(start + _CHUNK, n_seg))[:, None] * hop + np.arange(seg)[None, :]
        frames = x[idx]
        frames = (frames - frames.mean(axis=1, keepdims=True)) * win
        spec = np.abs(np.fft.rfft(frames, axis=1)) ** 2
        out[start:start + spec.shape[0]] = spec @ weights
    return out


def band_power_rel_var(x: NDArray[np.float64], segment_length: int, weights: NDArray[np.float64]) -> float | None:
    """The relative variance of the capture's mean band power, by batch means; None when the capture holds
    fewer than two segments per batch."""
    p = segment_band_powers(x, segment_length, weights)
    per = p.size // BATCHES
    if per < 2:
        return None
    means = p[:per * BATCHES].reshape(BATCHES, per).mean(axis=1)
    mean = float(p.mean())
    return float(np.var(means, ddof=1)) / BATCHES / mean ** 2 if mean > 0 and math.isfinite(mean) else None
