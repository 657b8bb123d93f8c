"""Windows, their noise bandwidth and degrees of freedom, and the Psd a Welch estimate produces."""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ParameterError

__all__ = ["Psd", "WINDOWS", "make_window", "window_enbw_bins", "welch_dof", "default_segment_length",
           "window_bin_correlation"]

#: Windows offered: name -> scipy.signal.get_window name.  Hann for noise,
#: flat-top for tone levels.
WINDOWS = {"hann": "hann", "flattop": "flattop", "blackmanharris": "blackmanharris",
           "hamming": "hamming", "boxcar": "boxcar"}

def make_window(name: str, segment_length: int) -> NDArray[np.float64]:
    """A periodic (DFT-even) window, as scipy.signal.welch uses.

    The Hann window of every noise spectrum is written out, ``w[n] = 1/2 - 1/2 cos(2 pi n / N)`` (Harris 1978,
    eq. (27), periodic form), so the bench path does not import scipy.signal (0.7 s here); the others come
    from ``scipy.signal.get_window``. tests/reference/test_spectrum_scipy.py compares both with scipy.
    """
    if name not in WINDOWS:
        raise ParameterError(f"window {name!r} is not one of {', '.join(WINDOWS)}")
    if name == "hann":
        return 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(segment_length) / segment_length)
    from scipy import signal
    return signal.get_window(WINDOWS[name], segment_length, fftbins=True).astype(np.float64)


def window_enbw_bins(window: ArrayLike) -> float:
    """Equivalent noise bandwidth of a window in bins, ``N sum(w^2) / (sum w)^2``.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
           discrete Fourier transform", Proc. IEEE 66(1), 51-83, 1978, eq. (11)
           and Table 1 (Hann: 1.50 bins).
    """
    w = np.asarray(window, dtype=np.float64)
    return float(w.size * np.sum(w * w) / np.sum(w) ** 2)


@functools.lru_cache(maxsize=32)
def window_bin_correlation(name: str, segment_length: int) -> tuple[float, ...]:
    """Correlation ``|C(d)|^2`` of two periodogram bins d apart, d = 0, 1, ..., for a window.

    ``C(d) = sum_n w_n^2 exp(-2 pi i d n / N) / sum_n w_n^2``, kept while above 1e-9 (a cosine-sum
    window's C vanishes beyond a few lags). Hann: 1, 4/9, 1/36 (C(1) = -2/3, C(2) = 1/6), summing over both
    signs to 35/18.

    References
    ----------
    .. [1] D. B. Percival and A. T. Walden, "Spectral Analysis for Physical Applications", Cambridge
           1993, ch. 6 (from memory; computed here from the window itself).
    """
    w2 = make_window(name, segment_length) ** 2
    c = np.abs(np.fft.rfft(w2)) / float(np.sum(w2))
    corr = c * c
    last = next((d for d in range(1, corr.size) if corr[d] < 1e-9), corr.size)
    return tuple(float(x) for x in corr[:last])


def welch_dof(window: ArrayLike, hop: int, n_segments: int) -> float:
    """Equivalent degrees of freedom of a Welch average for Gaussian noise.

    .. math::

        \\nu = \\frac{2K}{1 + 2\\sum_{m=1}^{K-1}(1 - m/K)\\,\\rho(m)},\\qquad
        \\rho(m) = \\frac{\\left(\\sum_n w_n w_{n+mS}\\right)^2}{\\left(\\sum_n w_n^2\\right)^2}

    for K segments of window w advanced by S samples.  For Hann at 50 %
    overlap this is ``36 K^2 / (19 K - 1)``.

    Parameters
    ----------
    window : array_like
        The window.
    hop : int
        Segment advance S in samples.
    n_segments : int
        Number of averaged segments K >= 1.

    References
    ----------
    .. [1] P. D. Welch, "The use of fast Fourier transform for the estimation
           of power spectra", IEEE Trans. Audio Electroacoust. 15(2), 1967.
    .. [2] D. B. Percival and A. T. Walden, "Spectral Analysis for Physical
           Applications", Cambridge, 1993, eq. (292b).
    """
    w = np.asarray(window, dtype=np.float64)
    k = int(n_segments)
    if k < 1:
        raise ParameterError(f"n_segments={n_segments!r} must be >= 1")
    energy = float(np.dot(w, w))
    total = 0.0
    for m in range(1, k):
        shift = m * hop
        if shift >= w.size:
            break
        rho = (float(np.dot(w[: w.size - shift], w[shift:])) / energy) ** 2
        total += (1.0 - m / k) * rho
    return 2.0 * k / (1.0 + 2.0 * total)


def default_segment_length(sample_rate_hz: float) -> int:
    """Power of two giving bins of 3 Hz or finer (16384 at 48 kHz, 32768 at 96 kHz).

    Fine enough that the one-third-octave band at 20 Hz (4.6 Hz wide) spans
    more than one bin.
    """
    return int(2 ** math.ceil(math.log2(max(sample_rate_hz / 3.0, 16.0))))


def one_sided_scale(segment_length: int, sample_rate_hz: float, window: NDArray[np.float64]) -> NDArray[np.float64]:
    """Per bin, what turns one segment's ``X_k* X_l`` into a one-sided density: ``2 / (fs sum w^2)``, not
    doubled at DC nor, for an even length, at Nyquist (scipy.signal.welch and csd's convention)."""
    scale = np.full(segment_length // 2 + 1, 2.0 / (sample_rate_hz * float(np.dot(window, window))))
    scale[0] /= 2.0
    if segment_length % 2 == 0:
        scale[-1] /= 2.0
    return scale


class HannSegments:
    """What an estimate from Hann segments at 50 % overlap knows of itself (a mixin for the dataclasses that
    carry ``segment_length`` and ``sample_rate_hz``): how its bins correlate, and its RBW."""

    segment_length: int
    sample_rate_hz: float

    @property
    def correlation_kernel(self) -> tuple[float, ...]:
        return window_bin_correlation("hann", self.segment_length)

    @property
    def enbw_hz(self) -> float:
        return self.enbw_of(self.segment_length, self.sample_rate_hz)

    @staticmethod
    def enbw_of(segment_length: int, sample_rate_hz: float) -> float:
        """The RBW of Hann segments of this length, Hz."""
        return window_enbw_bins(make_window("hann", segment_length)) * sample_rate_hz / segment_length


@dataclass(frozen=True)
class Psd:
    """A one-sided power spectral density and how it was estimated.

    Attributes
    ----------
    frequency_hz : numpy.ndarray
        Bin centre frequencies, 0 to fs/2.
    psd_per_hz : numpy.ndarray
        Density in `unit`^2/Hz (V^2/Hz when calibrated, FS^2/Hz otherwise).
    unit : str
        ``"V"`` or ``"FS"`` (full scale).
    sample_rate_hz, segment_length, hop, window
        Parameters of the estimate.
    enbw_hz : float
        Equivalent noise bandwidth of one bin (the RBW) in Hz.
    n_averages : int
        Number of segments averaged.
    dof : float
        Equivalent degrees of freedom of each bin (see :func:`welch_dof`). For a cross-spectrum estimate
        (`bin_variance` given) the equivalent degrees of freedom of its median bin, ``2 S^2 / var``, which
        only the line search's thresholds use.
    bin_variance : numpy.ndarray or None
        Variance of each bin's estimate (`unit`^4/Hz^2) where it is not Welch's chi-square ``2 S^2 / dof``:
        the averaged cross-spectrum's (:mod:`benchnf.dsp.cross`).
    """

    frequency_hz: NDArray[np.float64]
    psd_per_hz: NDArray[np.float64]
    unit: str
    sample_rate_hz: float
    segment_length: int
    hop: int
    window: str
    enbw_hz: float
    n_averages: int
    dof: float
    bin_variance: NDArray[np.float64] | None = None

    def __post_init__(self) -> None:
        for name in ("frequency_hz", "psd_per_hz", "bin_variance"):
            if getattr(self, name) is None:
                continue
            arr = np.array(getattr(self, name), dtype=np.float64)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def correlation_kernel(self) -> tuple[float, ...]:
        """How the bins of this estimate correlate by lag (see :func:`window_bin_correlation`); for an
        instrument trace, whose filter is not known, its noise bandwidth in bins."""
        if self.window in WINDOWS:
            return window_bin_correlation(self.window, self.segment_length)
        return (max(self.enbw_hz / self.bin_width_hz, 1.0),)

    @property
    def bin_width_hz(self) -> float:
        """Spacing of the bins, fs/N, in Hz."""
        return self.sample_rate_hz / self.segment_length

    @property
    def psd_v2_per_hz(self) -> NDArray[np.float64]:
        """The density in V^2/Hz; raises if the spectrum is not calibrated."""
        if self.unit != "V":
            from ..errors import CalibrationError
            raise CalibrationError("this spectrum is in full-scale units; calibrate the capture "
                                   "to get volts")
        return self.psd_per_hz

    @property
    def power_per_bin(self) -> NDArray[np.float64]:
        """Tone-scaled spectrum (``unit``^2 per bin): density times ENBW.

        An on-bin sine of amplitude A reads A^2/2 in its peak bin.
        """
        return self.psd_per_hz * self.enbw_hz

    def scaled(self, factor_v_per_unit: float, unit: str = "V") -> "Psd":
        """Return the spectrum with amplitudes multiplied by `factor_v_per_unit`."""
        from dataclasses import replace
        var = self.bin_variance * factor_v_per_unit ** 4 if self.bin_variance is not None else None
        return replace(self, psd_per_hz=self.psd_per_hz * factor_v_per_unit ** 2, unit=unit, bin_variance=var)

    @property
    def is_cross(self) -> bool:
        """True for an averaged cross-spectrum (its bins' variance stated, not chi-square)."""
        return self.bin_variance is not None

    def confidence_factors(self, level: float = 0.95) -> tuple[float, float]:
        """Multipliers (lower, upper) giving a `level` chi-square interval for each bin.

        ``[nu S / chi2_{nu, (1+level)/2},  nu S / chi2_{nu, (1-level)/2}]``.

        References
        ----------
        .. [1] J. S. Bendat and A. G. Piersol, "Random Data", 4th ed., Wiley
               2010, sec. 8.5.4.
        """
        from .special import chi2_isf
        if not 0 < level < 1:
            raise ParameterError(f"level={level!r} must lie between 0 and 1")
        nu = self.dof
        return nu / chi2_isf(0.5 - level / 2, nu), nu / chi2_isf(0.5 + level / 2, nu)
