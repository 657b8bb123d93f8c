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
from .spectrum import SEGMENTS_PER_BATCH, WINDOW_SUPPORT_RTOL, BatchFft, check_segmenting, require_segments, segment_means

__all__ = ["CrossAccumulator", "CrossSpectra", "co_spectrum_psd"]


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
    window's own transform is not zero, as :class:`~benchnf.dsp.spectrum.WelchAccumulator` does). Running
    sums are kept, so parts of one stream read in parallel :meth:`merge` into the single pass's result.

    Notes
    -----
    Both real streams go through one complex transform, ``z = x + i y`` (two real functions with one FFT:
    Press et al., *Numerical Recipes*, 2nd ed., §12.3, from memory; Brigham, *The Fast Fourier Transform*).
    With ``A = Z_k`` and ``B = Z_{N-k}``: ``X_k = (A + B*)/2`` and ``Y_k = (A - B*)/(2i)``, so that

    .. math::

        |X_k|^2 = \\tfrac14(|A|^2 + |B|^2 + 2\\,\\mathrm{Re}\\,AB),\\quad
        |Y_k|^2 = \\tfrac14(|A|^2 + |B|^2 - 2\\,\\mathrm{Re}\\,AB),\\quad
        X_k^* Y_k = \\tfrac12\\,\\mathrm{Im}\\,AB - \\tfrac{i}{4}(|A|^2 - |B|^2)

    and only ``Σ|Z_k|²`` (every k) and ``Σ Z_k Z_{N-k}`` (k up to N/2) are summed over segments: one complex
    transform is about a quarter faster than two real ones here (FFTW, 32768 points), and the sums read
    each transform once. A stream long enough for FFTW (:meth:`expect`) runs in single precision: the 16-
    and 24-bit samples of sound cards are exact in float32, the transform's rounding (about 1e-7 of each
    value) lies some 140 dB under the segment's content, and the sums are kept in double.
    """

    def __init__(self, *, sample_rate_hz: float, segment_length: int, overlap: float = 0.5) -> None:
        check_segmenting(sample_rate_hz, segment_length, overlap)
        self.sample_rate_hz = float(sample_rate_hz)
        self.segment_length = n = int(segment_length)
        self.hop = max(1, n - int(round(overlap * n)))
        self.window = make_window("hann", n)
        w_fft = np.fft.fft(self.window)
        self._support = np.flatnonzero(np.abs(w_fft) > WINDOW_SUPPORT_RTOL * np.abs(w_fft).max())
        self._w_support = w_fft[self._support]
        self._power = np.zeros(2 * n)  # Σ|Z_k|², as (re², im²) pairs
        self._pairs = np.zeros(n // 2 + 1, dtype=np.complex128)  # Σ Z_k Z_{N-k}
        self._count = 0
        self._buf = np.empty(0, dtype=np.complex128)  # x + i y, the unconsumed tail then the new samples
        self._n_tail = 0
        self._fft = BatchFft(n, complex_input=True)
        self._window = np.repeat(self.window, 2)  # for (re, im) pairs, in the samples' precision

    @property
    def n_averages(self) -> int:
        self._flush()
        return self._count

    def expect(self, n_samples: int) -> None:
        """The stream will bring about `n_samples` samples per channel (a file of known length). A long one
        is transformed in single precision where FFTW is installed (see Notes)."""
        self._fft.expect((int(n_samples) - self.segment_length) // self.hop + 1, single=True)
        if self._fft.single and self._n_tail == 0:
            self._buf = np.empty(0, dtype=np.complex64)
            self._window = self._window.astype(np.float32)

    @property
    def single(self) -> bool:
        """True when the transforms run in single precision."""
        return self._fft.single

    def update(self, x: ArrayLike, y: ArrayLike) -> None:
        """Add the next samples of both streams (the same number of each)."""
        a, b = np.asarray(x, dtype=np.float64), np.asarray(y, dtype=np.float64)
        if a.shape != b.shape or a.ndim != 1:
            raise ParameterError(f"the two channels' blocks must be 1-D and equally long, got {a.shape} and {b.shape}")
        into = self.reserve(a.size)
        into[:, 0] = a
        into[:, 1] = b
        self.commit(a.size)

    def reserve(self, n_samples: int) -> NDArray[np.floating]:
        """Space for the next `n_samples` samples of both streams, shape (n, 2) (x, y in each row: the buffer
        of ``x + i y`` seen as reals): fill it, then :meth:`commit`. Valid until any other method is called."""
        size = self._n_tail + int(n_samples)
        if self._buf.size < size:  # reused: large fresh arrays cost page faults
            grown = np.empty(max(size, 2 * self._buf.size), dtype=self._buf.dtype)
            grown[:self._n_tail] = self._buf[:self._n_tail]
            self._buf = grown
        return self._buf[self._n_tail:size].view(self._buf.real.dtype).reshape(-1, 2)

    def commit(self, n_samples: int) -> None:
        """Take the `n_samples` written into :meth:`reserve`'s space."""
        self._n_tail += int(n_samples)
        if self._n_tail >= self.segment_length + (SEGMENTS_PER_BATCH - 1) * self.hop:
            self._flush()

    def _flush(self) -> None:
        n, hop, size = self.segment_length, self.hop, self._n_tail
        if size < n:
            return
        n_seg = (size - n) // hop + 1
        half = n // 2
        for start in range(0, n_seg, SEGMENTS_PER_BATCH):
            m = min(SEGMENTS_PER_BATCH, n_seg - start)
            z = self._transform(start, m)
            pz = z.view(z.real.dtype)
            self._power += np.einsum("ij,ij->j", pz, pz)
            self._pairs[0] += np.sum(z[:, 0] * z[:, 0])
            self._pairs[1:] += (z[:, 1:half + 1] * z[:, n - 1:n - half - 1:-1]).sum(axis=0)
        self._count += n_seg
        used = n_seg * hop
        self._n_tail = size - used
        self._buf[:self._n_tail] = self._buf[used:size].copy()

    def _transform(self, first: int, m: int) -> NDArray[np.complexfloating]:
        """The transforms of ``x + i y``, detrended and windowed, of segments first..first+m (a reused array)."""
        n, hop = self.segment_length, self.hop
        row = self._buf[first * hop:(first + m - 1) * hop + n]
        reals = row.view(row.real.dtype)  # (re, im) pairs: a real product, no complex cast (0.6 times the time)
        step = reals.itemsize
        frames = np.lib.stride_tricks.as_strided(reals, shape=(m, 2 * n), strides=(2 * hop * step, step),
                                                 writeable=False)
        into = self._fft.input(m)
        np.multiply(frames, self._window, out=into.view(into.real.dtype))
        spectra = self._fft.execute(m)
        spectra[:, self._support] -= np.multiply.outer(segment_means(row, m, n, hop), self._w_support)
        return spectra

    def merge(self, other: "CrossAccumulator") -> None:
        """Add the segments another accumulator of the same estimate averaged (another part of the stream)."""
        if (other.segment_length, other.hop, other.sample_rate_hz) != (self.segment_length, self.hop,
                                                                       self.sample_rate_hz):
            raise ParameterError("only accumulators of the same estimate can be merged")
        self._flush()
        other._flush()
        self._power += other._power
        self._pairs += other._pairs
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
        power = self._power.reshape(-1, 2).sum(axis=1)  # Σ|Z_k|², k = 0 .. N-1
        a, b = power[:n // 2 + 1], power[(n - np.arange(n // 2 + 1)) % n]  # |A|² and |B|² (see Notes)
        re, im = self._pairs.real, self._pairs.imag
        sxx, syy = (a + b + 2 * re) / 4, (a + b - 2 * re) / 4
        sxy = im / 2 - 0.25j * (a - b)
        return CrossSpectra(
            frequency_hz=np.asarray(np.fft.rfftfreq(n, 1.0 / self.sample_rate_hz), dtype=np.float64),
            s_xx=sxx * norm * scale_x ** 2, s_yy=syy * norm * scale_y ** 2, s_xy=sxy * norm * scale_x * scale_y,
            sample_rate_hz=self.sample_rate_hz, segment_length=n, hop=self.hop, n_averages=self._count,
            dof=welch_dof(self.window, self.hop, self._count))
