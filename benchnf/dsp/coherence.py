"""The spectral matrix of several channels of one recording, summed in contiguous batches of segments.

For channels ``x_1..x_K`` and Hann-windowed, mean-removed segment transforms ``X_k``, the one-sided densities

    G_kl = 2 <X_k* X_l> / (fs Σw²)          (DC and Nyquist not doubled; scipy.signal.csd's convention)

form a Hermitian K x K matrix per bin. The sums are kept per batch of consecutive segments, so that a
figure computed from the whole matrix can be recomputed with one batch left out (the delete-one-group
jackknife gives its standard uncertainty without a formula for each nonlinear figure: Efron and Tibshirani,
An Introduction to the Bootstrap, 1993, ch. 11; Bendat and Piersol, Random Data, 4th ed., 2010, §9.3 (section from memory), for
the same idea in spectral estimates). Conditioning on some channels and coherence are in
:mod:`benchnf.measure.attribution`.

References
----------
.. [1] J. S. Bendat and A. G. Piersol, Random Data, 4th ed., Wiley 2010, ch. 7 (multiple-input systems).
.. [2] P. D. Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import MeasurementError, ParameterError
from .psd import HannSegments, make_window, one_sided_scale, welch_dof

__all__ = ["SpectralMatrix", "spectral_matrix"]


@dataclass(frozen=True)
class SpectralMatrix(HannSegments):
    """Batch sums of ``X_k* X_l`` (shape batches x K x K x bins) and what turns them into densities."""

    frequency_hz: NDArray[np.float64]
    sums: NDArray[np.complex128]
    counts: NDArray[np.int64]
    norm: NDArray[np.float64]  # per bin, for one segment: 2 / (fs Σw²), halved at DC and Nyquist
    sample_rate_hz: float
    segment_length: int
    hop: int

    @property
    def n_averages(self) -> int:
        return int(self.counts.sum())

    @property
    def dof(self) -> float:
        return welch_dof(make_window("hann", self.segment_length), self.hop, self.n_averages)


    def density(self, leave_out: int | None = None) -> NDArray[np.complex128]:
        """The K x K x bins density matrix, of all batches or of all but one."""
        total, count = self.sums.sum(axis=0), int(self.counts.sum())
        if leave_out is not None:
            total, count = total - self.sums[leave_out], count - int(self.counts[leave_out])
        return total * (self.norm / count)

    @property
    def n_batches(self) -> int:
        return int(np.count_nonzero(self.counts))


def spectral_matrix(blocks: Iterable[NDArray[np.float64]], *, n_frames: int, sample_rate_hz: float,
                    segment_length: int, batches: int = 16, scales: NDArray[np.float64] | None = None
                    ) -> SpectralMatrix:
    """The spectral matrix of K channels read as blocks of shape (frames, K), Hann segments at 50 % overlap,
    in `batches` contiguous groups of segments (`n_frames` says how many segments there will be).

    Raises
    ------
    MeasurementError
        Fewer segments than two per batch.
    """
    n = int(segment_length)
    hop = n // 2
    total = (n_frames - n) // hop + 1 if n_frames >= n else 0
    if total < 2 * batches:
        raise MeasurementError(f"the recording holds {total} analysis segments; the attribution needs at least "
                               f"{2 * batches}: record at least {(2 * batches + 1) * hop / sample_rate_hz:.3g} s")
    per_batch = math.ceil(total / batches)
    window = make_window("hann", n)
    sums: NDArray[np.complex128] | None = None
    counts = np.zeros(batches, dtype=np.int64)
    tail: NDArray[np.float64] | None = None
    done = 0
    for block in blocks:
        data = block if tail is None else np.concatenate([tail, block])
        m = (data.shape[0] - n) // hop + 1 if data.shape[0] >= n else 0
        m = min(m, total - done)
        start = 0
        while start < m:  # chunks of at most 64 segments, never across a batch boundary
            g = done + start
            stop = min(m, start + per_batch - g % per_batch, start + 64)
            piece = data[start * hop:(stop - 1) * hop + n]
            frames = np.lib.stride_tricks.sliding_window_view(piece, n, axis=0)[::hop]  # (segments, K, n)
            frames = frames - frames.mean(axis=-1, keepdims=True)
            spectra = np.fft.rfft(frames * window, axis=-1)
            if scales is not None:
                spectra *= np.asarray(scales, dtype=np.float64)[None, :, None]
            part = np.einsum("skf,slf->klf", spectra.conj(), spectra)
            sums = np.zeros((batches, *part.shape), dtype=np.complex128) if sums is None else sums
            sums[g // per_batch] += part
            counts[g // per_batch] += stop - start
            start = stop
        done += m
        tail = data[m * hop:]
    if sums is None or done == 0:
        raise MeasurementError("no analysis segment could be read from the recording")
    norm = one_sided_scale(n, sample_rate_hz, window)
    if sums.shape[1] < 2:
        raise ParameterError("the spectral matrix needs at least two channels")
    freq = np.asarray(np.fft.rfftfreq(n, 1.0 / sample_rate_hz), dtype=np.float64)
    return SpectralMatrix(freq, sums, counts, norm, float(sample_rate_hz), n, hop)
