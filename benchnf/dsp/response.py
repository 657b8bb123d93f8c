"""Frequency response H(f) from a two-channel capture of a broadband stimulus."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError, ParameterError

__all__ = ["Response", "h1_response"]


@dataclass(frozen=True)
class Response:
    """A measured frequency response, output over input.

    Attributes
    ----------
    frequency_hz : numpy.ndarray
        Bin centres in Hz.
    h : numpy.ndarray
        Complex H1 estimate ``S_xy / S_xx`` (x = DUT input, y = DUT output).
    coherence : numpy.ndarray
        Magnitude-squared coherence ``|S_xy|^2 / (S_xx S_yy)``, 0..1.
    n_averages : int
        Segments averaged.
    """

    frequency_hz: NDArray[np.float64]
    h: NDArray[np.complex128]
    coherence: NDArray[np.float64]
    n_averages: int

    def __post_init__(self) -> None:
        for name in ("frequency_hz", "h", "coherence"):
            arr = np.array(getattr(self, name))
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    def magnitude_std_rel(self) -> NDArray[np.float64]:
        """Relative standard deviation of |H1|, ``sqrt((1 - g^2) / (2 n g^2))``.

        References
        ----------
        .. [1] J. S. Bendat and A. G. Piersol, "Random Data", 4th ed., 2010,
               Table 9.6.
        """
        g2 = np.clip(self.coherence, 1e-12, 1.0)
        return np.sqrt((1.0 - g2) / (2.0 * self.n_averages * g2))


def h1_response(dut_input: ArrayLike, dut_output: ArrayLike, *, sample_rate_hz: float,
                segment_length: int, min_coherence: float = 0.9,
                check_band_hz: tuple[float, float] | None = None) -> Response:
    """H1 estimate of the response from DUT input to DUT output.

    .. math:: H_1(f) = \\frac{S_{xy}(f)}{S_{xx}(f)},\\qquad
              \\gamma^2(f) = \\frac{|S_{xy}(f)|^2}{S_{xx}(f) S_{yy}(f)}

    with Welch cross- and auto-spectra (Hann, 50 % overlap) from
    :func:`scipy.signal.csd` and :func:`scipy.signal.welch`.  H1 is unbiased
    by noise at the output.

    Parameters
    ----------
    dut_input, dut_output : array_like
        Simultaneous samples of the DUT's input and output, same length.
    sample_rate_hz : float
        Sample rate in Hz.
    segment_length : int
        Samples per segment: use the noise spectrum's, so the bins match.
    min_coherence : float
        Coherence below which a bin in `check_band_hz` is refused.
    check_band_hz : (float, float), optional
        Band that must be covered with coherence >= `min_coherence`.

    References
    ----------
    .. [1] J. S. Bendat and A. G. Piersol, "Engineering Applications of
           Correlation and Spectral Analysis", 2nd ed., Wiley 1993, ch. 5.
    """
    from scipy import signal
    x = np.asarray(dut_input, dtype=np.float64)
    y = np.asarray(dut_output, dtype=np.float64)
    if x.shape != y.shape or x.ndim != 1:
        raise ParameterError("the response needs two 1-D channels of the same length")
    if x.size < segment_length:
        raise MeasurementError(f"the response capture is shorter than one segment "
                               f"({segment_length} samples): record longer")
    kw = dict(fs=sample_rate_hz, window="hann", nperseg=segment_length)
    f, sxy = signal.csd(x, y, **kw)
    _, sxx = signal.welch(x, **kw)
    _, syy = signal.welch(y, **kw)
    with np.errstate(divide="ignore", invalid="ignore"):
        h = np.where(sxx > 0, sxy / sxx, np.nan)
        coh = np.where((sxx > 0) & (syy > 0), np.abs(sxy) ** 2 / (sxx * syy), 0.0)
    n_avg = 1 + (x.size - segment_length) // (segment_length // 2)
    if check_band_hz is not None:
        lo, hi = check_band_hz
        sel = (f >= lo) & (f <= hi)
        bad = sel & ~(coh >= min_coherence)
        if np.any(bad):
            worst = f[bad][np.argmin(coh[bad])]
            raise MeasurementError(
                f"the response capture has coherence {coh[bad].min():.2f} at {worst:.0f} Hz (below "
                f"{min_coherence:g}): the stimulus is too weak or not broadband there; raise it or "
                f"record longer")
    return Response(f, h, coh, int(n_avg))
