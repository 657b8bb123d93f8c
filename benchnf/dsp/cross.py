"""Averaged cross-spectrum of two channels, streamed, with the statistics of the estimator.

Two analyzer inputs both see the DUT's output ``s``; each adds its own noise ``a``, ``b``, independent of
``s`` and of each other. With ``X`` and ``Y`` the Hann-windowed transforms of one segment of each channel,
the Welch cross-spectral density

    S_xy = 2 <X* Y> / (fs Σw²)          (one-sided; DC and Nyquist not doubled; scipy's convention)

averaged over m segments converges to the DUT's own spectrum S_ss: ``<X* Y> = <|S|²> + <S* B> + <A* S> +
<A* B>``, and the last three average towards zero as 1/√m. Its real part (the co-spectrum C) is the
estimate; its imaginary part (the quad-spectrum Q) holds no DUT power. For m independent averages the
co-spectrum's variance is

    var(Ĉ) = (S_xx S_yy + C² - Q²) / (2 m)

(Bendat and Piersol, *Random Data*, 4th ed., §9.2.2 (section from memory), the variance of the co-spectrum estimate), written
here with the Welch equivalent degrees of freedom ``ν`` of overlapping Hann segments in place of ``2 m``.
Neighbouring bins correlate as in the single-channel estimate (the window's kernel). The coherence is
``γ² = |S_xy|² / (S_xx S_yy)``.

References
----------
.. [1] E. Rubiola and F. Vernotte, "The cross-spectrum experimental method", arXiv:1003.0113 (2010).
.. [2] J. S. Bendat and A. G. Piersol, Random Data: Analysis and Measurement Procedures, 4th ed., Wiley
       2010, chapters 7 and 9.
.. [3] P. D. Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967 (the averaging, the equivalent
       degrees of freedom).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ParameterError
from .psd import HannSegments, Psd, make_window, one_sided_scale, welch_dof
from .spectrum import WINDOW_SUPPORT_RTOL, BatchRfft, check_segmenting, require_segments, segment_means

__all__ = ["CrossAccumulator", "CrossSpectra", "co_spectrum_psd"]

_BATCH = 8  # segments transformed at once (measured fastest here: the batch's spectra stay in cache)


@dataclass(frozen=True)
class CrossSpectra(HannSegments):
    """Averaged auto- and cross-spectral densities of two channels (one-sided, V²/Hz once scaled)."""

    frequency_hz: NDArray[np.float64]
    s_xx: NDArray[np.float64]
    s_yy: NDArray[np.float64]
    s_xy: NDArray[np.complex128]
    sample_rate_hz: float
    segment_length: int
    hop: int
    n_averages: int
    dof: float

    @property
    def co(self) -> NDArray[np.float64]:
        """The co-spectrum Re S_xy: the estimate of the common (DUT) spectrum."""
        return self.s_xy.real

    @property
    def coherence(self) -> NDArray[np.float64]:
        """Magnitude-squared coherence |S_xy|² / (S_xx S_yy), 0 where a channel is silent."""
        den = self.s_xx * self.s_yy
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(den > 0, np.abs(self.s_xy) ** 2 / den, 0.0)

    @property
    def co_variance(self) -> NDArray[np.float64]:
        """Per-bin variance of the co-spectrum estimate, (S_xx S_yy + C² - Q²) / ν."""
        c, q = self.s_xy.real, self.s_xy.imag
        return np.maximum(self.s_xx * self.s_yy + c * c - q * q, 0.0) / self.dof

    @property
    def resolution_floor(self) -> NDArray[np.float64]:
        """The common density (V²/Hz) a bin resolves after these averages: twice the standard deviation
        the two channels' own noise leaves in the co-spectrum, 2 sqrt(S_xx S_yy / ν)."""
        return 2.0 * np.sqrt(self.s_xx * self.s_yy / self.dof)

    def dut_psd(self, background: "CrossSpectra | None" = None) -> Psd:
        """The estimate of the common (DUT) spectrum as a :class:`Psd` carrying each bin's variance: the
        co-spectrum, less the `background`'s co-spectrum (both inputs terminated: what the analyzer itself
        puts into both channels) when given; the two estimates are independent, so their variances add.

        Its ``dof`` is the equivalent degrees of freedom of the median bin, ``2 C^2 / var(C)`` (at least 1),
        for the line search's thresholds; every uncertainty uses ``bin_variance``.
        """
        co, var = self.co, self.co_variance
        if background is not None:
            if background.frequency_hz.shape != self.frequency_hz.shape or background.hop != self.hop:
                raise ParameterError("the background's cross-spectrum has other bins than the DUT's: record both "
                                     "at one sample rate and analyse them with one segment length")
            co, var = co - background.co, var + background.co_variance
        return co_spectrum_psd(self.frequency_hz, co, var, sample_rate_hz=self.sample_rate_hz,
                               segment_length=self.segment_length, hop=self.hop, n_averages=self.n_averages,
                               dof=self.dof)



def co_spectrum_psd(frequency_hz: NDArray[np.float64], co: NDArray[np.float64], var: NDArray[np.float64], *,
                    sample_rate_hz: float, segment_length: int, hop: int, n_averages: int, dof: float) -> Psd:
    """A co-spectrum estimate (V²/Hz) with each bin's variance as a :class:`Psd` of Hann segments; its ``dof``
    is the median bin's equivalent ``2 C² / var`` (at least 1, at most `dof`), for the line search only."""
    inner = slice(1, -1)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where((co[inner] > 0) & (var[inner] > 0), 2.0 * co[inner] ** 2 / var[inner], 0.0)
    nu = float(min(max(float(np.median(ratio)), 1.0), dof))
    enbw = HannSegments.enbw_of(segment_length, sample_rate_hz)
    return Psd(frequency_hz=frequency_hz, psd_per_hz=co, unit="V", sample_rate_hz=sample_rate_hz,
               segment_length=segment_length, hop=hop, window="hann", enbw_hz=enbw, n_averages=n_averages, dof=nu,
               bin_variance=var)


class CrossAccumulator:
    """Accumulates the auto- and cross-spectra of two equally long streams, in blocks of any size.

    Each segment is detrended by its mean, Hann-windowed and transformed (as :func:`scipy.signal.csd` with
    ``detrend="constant"`` does; the mean is taken out after the transform, in the few bins where the
    window's own transform is not zero, as :class:`~benchnf.dsp.spectrum.WelchAccumulator` does); the sums of
    ``|X|²``, ``|Y|²`` and ``X* Y`` are kept, so parts of one stream read in parallel :meth:`merge` into the
    single pass's result.
    """

    def __init__(self, *, sample_rate_hz: float, segment_length: int, overlap: float = 0.5) -> None:
        check_segmenting(sample_rate_hz, segment_length, overlap)
        self.sample_rate_hz = float(sample_rate_hz)
        self.segment_length = n = int(segment_length)
        self.hop = max(1, n - int(round(overlap * n)))
        self.window = make_window("hann", n)
        w_fft = np.fft.rfft(self.window)
        self._support = np.flatnonzero(np.abs(w_fft) > WINDOW_SUPPORT_RTOL * np.abs(w_fft).max())
        self._w_support = w_fft[self._support]
        bins = n // 2 + 1
        self._sxx, self._syy = np.zeros(2 * bins), np.zeros(2 * bins)
        self._sxy = np.zeros(bins, dtype=np.complex128)  # the sum of X* Y
        self._count = 0
        self._buf = np.empty((2, 0))
        self._n_tail = 0
        self._fft = (BatchRfft(n), BatchRfft(n))

    @property
    def n_averages(self) -> int:
        self._flush()
        return self._count

    def update(self, x: ArrayLike, y: ArrayLike) -> None:
        """Add the next samples of both streams (the same number of each)."""
        a, b = np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)
        if a.shape != b.shape or a.ndim != 1:
            raise ParameterError(f"the two channels' blocks must be 1-D and equally long, got {a.shape} and {b.shape}")
        size = self._n_tail + a.size
        if self._buf.shape[1] < size:  # reused: large fresh arrays cost page faults
            grown = np.empty((2, max(size, 2 * self._buf.shape[1])))
            grown[:, :self._n_tail] = self._buf[:, :self._n_tail]
            self._buf = grown
        self._buf[0, self._n_tail:size] = a
        self._buf[1, self._n_tail:size] = b
        self._n_tail = size
        if size >= self.segment_length + (_BATCH - 1) * self.hop:
            self._flush()

    def _flush(self) -> None:
        n, hop, size = self.segment_length, self.hop, self._n_tail
        if size < n:
            return
        n_seg = (size - n) // hop + 1
        for start in range(0, n_seg, _BATCH):
            m = min(_BATCH, n_seg - start)
            fx = self._transform(0, start, m)
            fy = self._transform(1, start, m)
            px, py = fx.view(np.float64), fy.view(np.float64)
            self._sxx += np.einsum("ij,ij->j", px, px)
            self._syy += np.einsum("ij,ij->j", py, py)
            self._sxy += (np.conj(fx) * fy).sum(axis=0)
        self._count += n_seg
        used = n_seg * hop
        self._n_tail = size - used
        self._buf[:, :self._n_tail] = self._buf[:, used:size].copy()

    def _transform(self, ch: int, first: int, m: int) -> NDArray[np.complex128]:
        """The detrended, windowed transforms of segments first..first+m of one channel (a reused array)."""
        n, hop = self.segment_length, self.hop
        row = self._buf[ch, first * hop:(first + m - 1) * hop + n]
        step = row.itemsize
        frames = np.lib.stride_tricks.as_strided(row, shape=(m, n), strides=(hop * step, step), writeable=False)
        fft = self._fft[ch]
        np.multiply(frames, self.window, out=fft.input(m))
        spectra = fft.execute(m)
        spectra[:, self._support] -= np.multiply.outer(segment_means(row, m, n, hop), self._w_support)
        return spectra

    def merge(self, other: "CrossAccumulator") -> None:
        """Add the segments another accumulator of the same estimate averaged (another part of the stream)."""
        if (other.segment_length, other.hop, other.sample_rate_hz) != (self.segment_length, self.hop,
                                                                       self.sample_rate_hz):
            raise ParameterError("only accumulators of the same estimate can be merged")
        self._flush()
        other._flush()
        self._sxx += other._sxx
        self._syy += other._syy
        self._sxy += other._sxy
        self._count += other._count

    def result(self, *, scale_x: float = 1.0, scale_y: float = 1.0) -> CrossSpectra:
        """The densities so far, each channel's amplitude multiplied by its own scale (volts per full scale).

        Raises
        ------
        MeasurementError
            Fewer samples than one segment were added.
        """
        self._flush()
        require_segments(self._count, self.segment_length, self.sample_rate_hz)
        n = self.segment_length
        norm = one_sided_scale(n, self.sample_rate_hz, self.window) / self._count
        sxx = self._sxx.reshape(-1, 2).sum(axis=1)
        syy = self._syy.reshape(-1, 2).sum(axis=1)
        sxy = self._sxy
        return CrossSpectra(
            frequency_hz=np.asarray(np.fft.rfftfreq(n, 1.0 / self.sample_rate_hz), dtype=np.float64),
            s_xx=sxx * norm * scale_x ** 2, s_yy=syy * norm * scale_y ** 2, s_xy=sxy * norm * scale_x * scale_y,
            sample_rate_hz=self.sample_rate_hz, segment_length=n, hop=self.hop, n_averages=self._count,
            dof=welch_dof(self.window, self.hop, self._count))
