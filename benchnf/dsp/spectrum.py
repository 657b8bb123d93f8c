"""Streaming Welch power spectral density, with its statistics.

The estimate is the same as :func:`scipy.signal.welch` with ``detrend="constant"``,
``average="mean"`` and no padding, but it is computed block by block, so its
memory use does not grow with the length of the capture, and many segments
go through one batched real FFT per call.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Iterable
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError, ParameterError
from . import fftw_backend
from .psd import WINDOWS, Psd, default_segment_length, make_window, welch_dof, window_enbw_bins

__all__ = ["Psd", "WelchAccumulator", "check_segmenting", "require_segments", "segment_means", "BatchFft",
           "SEGMENTS_PER_BATCH", "WINDOW_SUPPORT_RTOL", "welch_psd", "welch_dof", "window_enbw_bins", "pool_psds",
           "make_window", "default_segment_length", "WINDOWS", "welch_iq_psd"]

#: Segments per FFT call: many, to spread Python's per-call cost.  Measured here on a whole
#: analysis at 32768-sample segments, 8 beat 1, 2, 4 and 32 (by 3-10 %).
SEGMENTS_PER_BATCH = 8
#: Bins where the window's transform is below this fraction of its peak are rounding noise
#: (a cosine-sum window's transform is exactly zero beyond its few terms).
WINDOW_SUPPORT_RTOL = 1e-12
#: Segments a stream transforms with numpy before it moves to FFTW (where pyFFTW is installed).
FFTW_AFTER_SEGMENTS = 2048


class BatchFft:
    """FFTs of batches of segments, writing into reused buffers: real input (``rfft``), or complex input
    (``fft``, two real streams at once as ``x + i y``, :class:`benchnf.dsp.cross.CrossAccumulator`).

    FFTW (through pyFFTW, the ``fast`` extra) runs about 1.7 times faster than numpy's pocketfft on this
    work, but importing it costs about 0.15 s (it loads scipy.fft); so a stream starts on numpy and starts
    the import in the background (:mod:`benchnf.dsp.fftw_backend`) once it has transformed
    FFTW_AFTER_SEGMENTS segments, where the saving outgrows the import (about three minutes at 48 kHz), or
    at once when :meth:`expect` is told the stream is that long; it moves to FFTW at the first batch after
    the import. Such a known long stream has the plan of its whole batches measured by FFTW, once per
    machine and shape (kept as FFTW wisdom); other plans are estimated or taken from wisdom. All give the
    same transform to rounding (the tests run each). The environment variable ``BENCHNF_FFT=numpy`` keeps
    numpy, ``BENCHNF_FFT=fftw`` waits for FFTW and takes it from the first batch. One thread: parallelism is
    left to the caller (one part of the stream per core).
    """

    def __init__(self, n: int, *, complex_input: bool = False) -> None:
        self.n = n
        self.complex_input = complex_input
        self._plans: dict[int, Any] = {}
        self._work = np.empty((0, n), dtype=np.complex128 if complex_input else np.float64)
        self._pyfftw: Any = None
        self._single = False
        choice = os.environ.get("BENCHNF_FFT", "").lower()
        self._wanted = choice != "numpy"
        self._wait = choice == "fftw"
        self._segments = 0 if choice != "fftw" else FFTW_AFTER_SEGMENTS
        self._measure = False
        #: How each FFTW plan was made, by batch size (see :func:`benchnf.dsp.fftw_backend.plan`).
        self.plan_origin: dict[int, str] = {}

    def expect(self, segments: int, *, single: bool = False) -> None:
        """The stream will bring about `segments` segments: long enough for FFTW to repay its import, start
        the import now instead of after FFTW_AFTER_SEGMENTS, and have its whole batches' plan measured. With
        `single`, such a stream is transformed by FFTW in single precision (see :attr:`single`)."""
        if segments >= FFTW_AFTER_SEGMENTS and self._wanted:
            self._segments = max(self._segments, FFTW_AFTER_SEGMENTS)
            self._measure = True
            if single and not self._plans and fftw_backend.installed():
                self._single = True
            _ = self.backend  # starts the import now (and takes FFTW at once if it is loaded already)

    @property
    def single(self) -> bool:
        """True when FFTW's transforms run in single precision (float32/complex64): the caller may keep its
        samples in float32. numpy's transforms (before FFTW is loaded, or without it) stay in double, where
        numpy's single precision is slower (measured 3.6 times at 32768 points)."""
        return self._single

    @property
    def backend(self) -> str:
        """``"fftw"`` or ``"numpy"`` (what the next batch will use)."""
        if self._pyfftw is None and self._wanted and self._segments >= FFTW_AFTER_SEGMENTS:
            fftw_backend.start()
            self._pyfftw = fftw_backend.module(wait=self._wait)
        return "numpy" if self._pyfftw is None else "fftw"

    def input(self, m: int) -> NDArray[Any]:
        """The (m, n) array to write the windowed segments into."""
        if self.backend == "numpy":
            if self._work.shape[0] < m:
                self._work = np.empty((m, self.n), dtype=self._work.dtype)
            return self._work[:m]
        if m not in self._plans:
            fftw = self._pyfftw
            out = "complex64" if self._single else "complex128"
            a = fftw.empty_aligned((m, self.n), dtype=out if self.complex_input else
                                   ("float32" if self._single else "float64"))
            b = fftw.empty_aligned((m, self.n if self.complex_input else self.n // 2 + 1), dtype=out)
            # measured for whole batches only: a stream's last, shorter one is estimated
            self._plans[m], self.plan_origin[m] = fftw_backend.plan(
                fftw, a, b, measure=self._measure and m == SEGMENTS_PER_BATCH)
        return self._plans[m].input_array

    def execute(self, m: int) -> NDArray[np.complexfloating]:
        """Transform what :meth:`input` (same m) was filled with; the result is reused."""
        self._segments += m
        if self._pyfftw is None or m not in self._plans:
            return (np.fft.fft if self.complex_input else np.fft.rfft)(self._work[:m], axis=-1)
        return self._plans[m]()


def check_segmenting(sample_rate_hz: float, segment_length: int, overlap: float) -> None:
    """Refuse a sample rate, segment length or overlap no Welch average can use."""
    if not (math.isfinite(sample_rate_hz) and sample_rate_hz > 0):
        raise ParameterError(f"sample_rate_hz={sample_rate_hz!r} must be > 0")
    if int(segment_length) != segment_length or segment_length < 16:
        raise ParameterError(f"segment_length={segment_length!r} must be a whole number >= 16")
    if not 0.0 <= overlap < 1.0:
        raise ParameterError(f"overlap={overlap!r} must satisfy 0 <= overlap < 1")


def require_segments(count: int, segment_length: int, sample_rate_hz: float) -> None:
    """Refuse an average of no segment: the capture was shorter than one."""
    if count == 0:
        raise MeasurementError(f"the capture is shorter than one analysis segment ({segment_length} samples, "
                               f"{segment_length / sample_rate_hz:.3g} s): record longer or choose a shorter --segment")


def segment_means(buf: NDArray[Any], n_seg: int, n: int, hop: int) -> NDArray[Any]:
    """Mean of each of the `n_seg` segments of `n` samples that start every `hop` samples from ``buf[0]``.

    When the hop divides N (50 % overlap and the like) the segments are made of whole hop-blocks: each block
    is summed once and the sums added up, instead of summing every sample once per segment it belongs to.
    """
    if n % hop:
        step = buf.itemsize
        return np.lib.stride_tricks.as_strided(buf, shape=(n_seg, n), strides=(hop * step, step)).mean(
            axis=-1, dtype=np.complex128 if np.iscomplexobj(buf) else np.float64)
    r = n // hop
    # Each block summed in the samples' own precision (pairwise: relative error about eps log2(hop)), the
    # blocks' sums then added in double.
    block_sums = buf[:(n_seg + r - 1) * hop].reshape(-1, hop).sum(axis=1).astype(
        np.complex128 if np.iscomplexobj(buf) else np.float64)
    sums = block_sums[:n_seg].copy()
    for j in range(1, r):
        sums += block_sums[j:j + n_seg]
    return sums / n


class WelchAccumulator:
    """Accumulates a Welch PSD from blocks of samples of any size.

    Parameters
    ----------
    sample_rate_hz : float
        Sample rate in Hz.
    segment_length : int
        Samples per segment (N), >= 16.
    window : str
        One of :data:`WINDOWS`; Hann by default.
    overlap : float
        Fraction of a segment shared with the next, 0 <= overlap < 1 (0.5).

    Notes
    -----
    Each segment x is detrended by its mean, windowed and transformed.  The
    mean removal is done after the FFT: with X the transform of the windowed
    segment, W that of the window and mu the segment mean, the detrended
    transform is ``X - mu W``.  The window's transform is zero outside a few
    bins (two for Hann, five for flat-top: a cosine-sum window), so only
    there is ``|X - mu W|^2`` computed; elsewhere it is ``|X|^2``.  That is
    exact, and costs a pass over those few bins instead of one over every
    segment.  The density is ``2 |X|^2 / (fs sum w^2)`` averaged over
    segments (DC and, for even N, the Nyquist bin are not doubled), as in
    :func:`scipy.signal.welch`.

    Samples can be given with :meth:`update`, or written straight into the
    accumulator's buffer: :meth:`reserve` space, fill it, :meth:`commit` it
    (this saves a copy of every sample when the caller decodes a file).
    """

    def __init__(self, *, sample_rate_hz: float, segment_length: int, window: str = "hann",
                 overlap: float = 0.5) -> None:
        check_segmenting(sample_rate_hz, segment_length, overlap)
        self.sample_rate_hz = float(sample_rate_hz)
        self.segment_length = n = int(segment_length)
        self.window_name = window
        self.window = make_window(window, n)
        self.hop = max(1, n - int(round(overlap * n)))
        window_fft = np.fft.rfft(self.window)
        w_mag = np.abs(window_fft)
        self._support = np.flatnonzero(w_mag > WINDOW_SUPPORT_RTOL * w_mag.max())
        self._window_fft_support = window_fft[self._support]
        # Running sums over segments: |X|^2 in every bin (as re, im pairs), and |X - mu W|^2
        # in the bins where W is not zero (see Notes).
        self._sum_sq = np.zeros(2 * (n // 2 + 1))
        self._sum_sq_support = np.zeros(self._support.size)
        self._count = 0
        self._buffer = np.empty(0)  # the unconsumed tail, then the new samples
        self._n_tail = 0
        self._reserved = 0
        self._fft = BatchFft(n)
        self._batch = SEGMENTS_PER_BATCH

    @property
    def n_averages(self) -> int:
        """Segments accumulated so far (including any still buffered)."""
        self._flush()
        return self._count

    @property
    def fft_backend(self) -> str:
        """Which FFT library runs: ``"fftw"`` or ``"numpy"``."""
        return self._fft.backend

    def expect(self, n_samples: int) -> None:
        """The stream will bring about `n_samples` samples (a file of known length): lets the FFT choose."""
        self._fft.expect((int(n_samples) - self.segment_length) // self.hop + 1)

    def reserve(self, n_samples: int) -> NDArray[np.float64]:
        """Space for the next `n_samples` samples of the stream: fill it, then :meth:`commit`.

        The array is a view of the accumulator's buffer, valid until the next call of any
        other method.
        """
        n_tail, size = self._n_tail, self._n_tail + int(n_samples)
        if self._buffer.size < size:  # reused: large fresh arrays cost page faults
            grown = np.empty(max(size, 2 * self._buffer.size))
            grown[:n_tail] = self._buffer[:n_tail]
            self._buffer = grown
        self._reserved = int(n_samples)
        return self._buffer[n_tail:size]

    def commit(self, n_samples: int) -> None:
        """Add the first `n_samples` of what :meth:`reserve` returned to the stream."""
        if not 0 <= n_samples <= self._reserved:
            raise ParameterError(f"commit({n_samples}) exceeds the {self._reserved} samples reserved")
        self._reserved = 0
        self._n_tail += int(n_samples)
        # Wait for a whole batch of segments: few large FFT calls beat many small ones.
        if self._n_tail >= self.segment_length + (self._batch - 1) * self.hop:
            self._flush()

    def update(self, block: ArrayLike) -> None:
        """Add the next samples of the stream."""
        x = np.asarray(block, dtype=np.float64)
        if x.ndim != 1:
            raise ParameterError(f"blocks must be 1-D, got shape {x.shape}")
        if x.size == 0:
            return
        self.reserve(x.size)[:] = x
        self.commit(x.size)

    def _flush(self) -> None:
        """Transform every whole segment buffered; keep the rest for the next block."""
        n, hop, size = self.segment_length, self.hop, self._n_tail
        if size < n:
            return
        buf = self._buffer[:size]
        n_seg = (size - n) // hop + 1
        step = buf.itemsize
        frames = np.lib.stride_tricks.as_strided(buf, shape=(n_seg, n), strides=(hop * step, step),
                                                 writeable=False)
        means = self._segment_means(buf, n_seg)
        for start in range(0, n_seg, self._batch):
            self._accumulate(frames[start:start + self._batch], means[start:start + self._batch])
        consumed = n_seg * hop
        self._n_tail = size - consumed
        buf[: self._n_tail] = buf[consumed:].copy()

    def _accumulate(self, frames: NDArray[np.float64], means: NDArray[np.float64]) -> None:
        m = frames.shape[0]
        np.multiply(frames, self.window, out=self._fft.input(m))
        spectra = self._fft.execute(m)
        pairs = spectra.view(np.float64)
        self._sum_sq += np.einsum("ij,ij->j", pairs, pairs)
        detrended = spectra[:, self._support] - np.multiply.outer(means, self._window_fft_support)
        self._sum_sq_support += np.einsum("ij,ij->j", detrended, detrended.conj()).real
        self._count += m

    def _segment_means(self, buf: NDArray[np.float64], n_seg: int) -> NDArray[np.float64]:
        return segment_means(buf, n_seg, self.segment_length, self.hop)

    def _detrended_power_sum(self) -> NDArray[np.float64]:
        """Sum over segments of |X - mean W|^2, from the running sums (see Notes)."""
        total = self._sum_sq.reshape(-1, 2).sum(axis=1)
        total[self._support] = self._sum_sq_support
        return total

    def merge(self, other: "WelchAccumulator") -> None:
        """Add the segments another accumulator of the same estimate averaged (another part of the same
        stream, read in parallel): the sums add, as if one had seen every segment."""
        if (other.segment_length, other.hop, other.window_name, other.sample_rate_hz) != (
                self.segment_length, self.hop, self.window_name, self.sample_rate_hz):
            raise ParameterError("only accumulators of the same estimate can be merged")
        self._flush()
        other._flush()
        self._sum_sq += other._sum_sq
        self._sum_sq_support += other._sum_sq_support
        self._count += other._count

    def restart_average(self) -> None:
        """Forget the segments averaged so far, keeping the stream's unconsumed samples.

        For a running average that is refreshed in pieces (the live view): the next :meth:`result` covers
        only what was added since, and no sample between the pieces is lost.
        """
        self._flush()
        self._sum_sq[:] = 0.0
        self._sum_sq_support[:] = 0.0
        self._count = 0

    def result(self, *, unit: str = "FS", scale: float = 1.0) -> Psd:
        """The PSD of everything added so far, amplitudes multiplied by `scale`.

        Raises
        ------
        MeasurementError
            Fewer samples than one segment were added.
        """
        self._flush()
        require_segments(self._count, self.segment_length, self.sample_rate_hz)
        n = self.segment_length
        density = self._detrended_power_sum() / (self._count * self.sample_rate_hz * float(np.dot(self.window, self.window)))
        density[1: n // 2 + (n % 2)] *= 2.0  # not DC, nor Nyquist when N is even
        return Psd(
            frequency_hz=np.asarray(np.fft.rfftfreq(n, 1.0 / self.sample_rate_hz), dtype=np.float64),
            psd_per_hz=density * scale ** 2,
            unit=unit,
            sample_rate_hz=self.sample_rate_hz,
            segment_length=n,
            hop=self.hop,
            window=self.window_name,
            enbw_hz=window_enbw_bins(self.window) * self.sample_rate_hz / n,
            n_averages=self._count,
            dof=welch_dof(self.window, self.hop, self._count),
        )


def welch_psd(samples: ArrayLike | Iterable[ArrayLike], *, sample_rate_hz: float,
              segment_length: int | None = None, window: str = "hann", overlap: float = 0.5,
              scale: float = 1.0, unit: str = "FS",
              on_block: Callable[[NDArray[np.float64]], None] | None = None) -> Psd:
    """Welch PSD of an array or of an iterable of 1-D blocks.

    Parameters
    ----------
    samples : array_like or iterable of array_like
        A 1-D array, or blocks of one (e.g. ``capture.blocks()``).
    sample_rate_hz : float
        Sample rate in Hz.
    segment_length : int, optional
        Samples per segment; default :func:`default_segment_length`.
    window : str
        ``"hann"`` (noise) or ``"flattop"`` (tone levels), see :data:`WINDOWS`.
    overlap : float
        Segment overlap fraction.
    scale : float
        Amplitude factor applied to the result (e.g. volts per full scale).
    unit : str
        Unit of ``samples * scale``: ``"V"`` or ``"FS"``.
    on_block : callable, optional
        Called with every block as it passes (integrity checks, progress).

    Returns
    -------
    Psd

    References
    ----------
    .. [1] P. D. Welch, IEEE Trans. Audio Electroacoust. 15(2), 70-73, 1967.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> psd = welch_psd(rng.normal(0, 1, 1 << 16), sample_rate_hz=1000.0, segment_length=256)
    >>> round(float(np.mean(psd.psd_per_hz[1:-1])) * 1000 / 2, 2)  # 2 sigma^2 / fs
    1.0
    """
    seg = default_segment_length(sample_rate_hz) if segment_length is None else segment_length
    acc = WelchAccumulator(sample_rate_hz=sample_rate_hz, segment_length=seg, window=window,
                           overlap=overlap)
    blocks: Iterable[Any] = [samples] if isinstance(samples, (np.ndarray, list, tuple)) else samples  # type: ignore[assignment]
    for block in blocks:
        block = np.asarray(block, dtype=np.float64)
        if on_block is not None:
            on_block(block)
        acc.update(block)
    return acc.result(unit=unit, scale=scale)


def pool_psds(spectra: list[Psd]) -> Psd:
    """Average Welch spectra of independent captures of one condition.

    The densities are averaged with weights proportional to their segment
    counts; the degrees of freedom of independent estimates add.
    """
    from dataclasses import replace
    first = spectra[0]
    for p in spectra[1:]:
        if (p.segment_length != first.segment_length or p.sample_rate_hz != first.sample_rate_hz
                or p.window != first.window or p.unit != first.unit):
            raise ParameterError("spectra to pool must share sample rate, segment, window and unit")
    if len(spectra) == 1:
        return first
    if any(p.is_cross for p in spectra):
        raise ParameterError("cross-spectrum estimates are not pooled: record one longer capture instead")
    weights = np.array([p.n_averages for p in spectra], dtype=np.float64)
    density = np.average(np.stack([p.psd_per_hz for p in spectra]), axis=0, weights=weights)
    return replace(first, psd_per_hz=density, n_averages=int(weights.sum()),
                   dof=float(sum(p.dof for p in spectra)))


def welch_iq_psd(blocks: Iterable[ArrayLike], *, sample_rate_hz: float, segment_length: int,
                 centre_hz: float = 0.0, scale: float = 1.0, unit: str = "FS",
                 on_block: Callable[[NDArray[np.complex128]], None] | None = None) -> Psd:
    """Two-sided Welch PSD of complex (IQ) samples, on an absolute frequency axis.

    Hann window, 50 % overlap, each segment's mean removed; density
    ``|X|^2 / (fs sum w^2)`` averaged over segments (no doubling: both
    sidebands are kept), as :func:`scipy.signal.welch` with
    ``return_onesided=False``.  Bins are shifted so that frequency increases,
    ``centre_hz + (-fs/2 .. fs/2)``.
    """
    n = int(segment_length)
    w = make_window("hann", n)
    hop = n // 2
    total = np.zeros(n)
    count = 0
    tail = np.zeros(0, dtype=np.complex128)
    for block in blocks:
        x = np.asarray(block, dtype=np.complex128)
        if on_block is not None:
            on_block(x)
        buf = np.concatenate((tail, x))
        if buf.size >= n:
            n_seg = (buf.size - n) // hop + 1
            frames = np.lib.stride_tricks.sliding_window_view(buf, n)[::hop][:n_seg]
            spectra = np.fft.fft((frames - frames.mean(axis=1, keepdims=True)) * w, axis=1)
            total += np.sum(spectra.real ** 2 + spectra.imag ** 2, axis=0)
            count += n_seg
            tail = buf[n_seg * hop:]
        else:
            tail = buf
    if count == 0:
        raise MeasurementError(f"the IQ capture is shorter than one analysis segment ({n} samples)")
    density = np.fft.fftshift(total / (count * sample_rate_hz * float(np.dot(w, w))))
    freq = centre_hz + np.fft.fftshift(np.fft.fftfreq(n, 1.0 / sample_rate_hz))
    return Psd(frequency_hz=freq, psd_per_hz=density * scale ** 2, unit=unit, sample_rate_hz=sample_rate_hz,
               segment_length=n, hop=hop, window="hann (IQ, two-sided)",
               enbw_hz=window_enbw_bins(w) * sample_rate_hz / n, n_averages=count,
               dof=welch_dof(w, hop, count))
