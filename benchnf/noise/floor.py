"""Subtracting the analyzer's own noise floor, in linear power.

.. math::

    S_{DUT}(f) = S_{meas}(f) - S_{floor}(f),\\qquad
    \\text{margin}(f) = 10\\log_{10}\\frac{S_{meas}(f)}{S_{floor}(f)}

The correction in dB of a reading that stands E dB above the floor is
``10 log10(1 - 10^(-E/10))``: -3.02 dB at 3 dB, -1.26 dB at 6 dB, -0.46 dB
at 10 dB.  This has the form of the background-noise correction K1 of
ISO 3744:2010, applied to electrical noise.

References
----------
.. [1] ISO 3744:2010, "Acoustics - Determination of sound power levels and
       sound energy levels of noise sources using sound pressure -
       Engineering methods for an essentially free field over a reflecting
       plane" (background noise correction K1).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import FloorMarginWarning, MeasurementError
from ..units import power_db

__all__ = ["floor_correction_db", "subtract_floor", "FloorSubtraction", "band_relative_std", "band_std",
           "check_band_margin", "LOW_MARGIN_DB"]

#: Below this margin a floor-corrected value is flagged as uncertain.
LOW_MARGIN_DB = 3.0


def floor_correction_db(excess_db: ArrayLike) -> NDArray[np.float64]:
    """Correction (dB, <= 0) to apply to a reading `excess_db` above the floor.

    Examples
    --------
    >>> round(float(floor_correction_db(3.0)), 3)
    -3.021
    """
    e = np.asarray(excess_db, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return 10.0 * np.log10(1.0 - 10.0 ** (-e / 10.0))


@dataclass(frozen=True)
class FloorSubtraction:
    """Per-bin result of a floor subtraction.

    Attributes
    ----------
    difference : numpy.ndarray
        ``measured - floor``, negative where scatter puts a bin below the
        floor: sum it over a band for an unbiased band power.
    margin_db : numpy.ndarray
        ``10 log10(measured / floor)`` per bin.
    """

    difference: NDArray[np.float64]
    margin_db: NDArray[np.float64]

    @property
    def density(self) -> NDArray[np.float64]:
        """``measured - floor`` with NaN where it is not positive (for plots and spots)."""
        return np.where(self.difference > 0, self.difference, np.nan)


def subtract_floor(measured: ArrayLike, floor: ArrayLike) -> FloorSubtraction:
    """Subtract a floor density from a measured one, bin by bin, in linear power."""
    m = np.asarray(measured, dtype=np.float64)
    f = np.asarray(floor, dtype=np.float64)
    if m.shape != f.shape:
        raise MeasurementError("the floor and the measurement have different frequency bins: "
                               "record both at the same sample rate and analyse with one segment length")
    diff = m - f
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = power_db(m / f)
    return FloorSubtraction(diff, margin)


def correlated_sum_variance(a: ArrayLike, correlation: Sequence[float]) -> float:
    """Variance of ``sum_k X_k`` for bins of standard deviation ``a_k`` correlated by lag.

    ``sum_d c_d sum_k a_k a_(k+d)`` over both signs of d, with ``c_0 = 1`` (or an instrument's noise
    bandwidth in bins, where only that is known) and ``c_d`` the correlation of two bins d apart.
    """
    x = np.asarray(a, dtype=np.float64)
    total = correlation[0] * float(np.dot(x, x))
    for d, c in enumerate(correlation[1:], 1):
        if d < x.size:
            total += 2.0 * c * float(np.dot(x[:-d], x[d:]))
    return total


def band_std(weights: ArrayLike, variance: ArrayLike, correlation: Sequence[float]) -> float:
    """Standard deviation of a band sum ``sum_k w_k S_k`` whose bins have the stated `variance` each and
    correlate by lag as `correlation` (see :func:`band_relative_std`)."""
    w = np.asarray(weights, dtype=np.float64)
    return math.sqrt(correlated_sum_variance(w * np.sqrt(np.asarray(variance, dtype=np.float64)), correlation))


def band_relative_std(weights: ArrayLike, density: ArrayLike, *, dof: float, correlation: Sequence[float],
                      variance: ArrayLike | None = None) -> float:
    """Relative standard deviation of a Welch band power ``sum_k w_k S_k``.

    Each bin has relative variance ``2/nu`` (nu from Welch's formula, segment overlap included), and two
    bins d apart of one windowed periodogram correlate as ``|C(d)|^2`` with
    ``C(d) = sum_n w_n^2 exp(-2 pi i d n / N) / sum_n w_n^2`` (`correlation`, from
    :func:`benchnf.dsp.psd.window_bin_correlation`)::

        var = 2/nu * sum_k sum_j (w_k S_k)(w_j S_j) |C(k - j)|^2

    For Hann (``C(1) = -2/3``, ``C(2) = 1/6``) a wide band's variance is ``35/18`` bin variances per bin,
    not the 1.5 of its noise bandwidth: the scatter is ``sqrt(35/27) = 1.14`` times larger.

    References
    ----------
    .. [1] P. D. Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967 (variance of the averaged estimate).
    .. [2] D. B. Percival and A. T. Walden, "Spectral Analysis for Physical Applications", Cambridge 1993,
           ch. 6 (covariance of periodogram ordinates of a tapered series).

    With `variance` (each bin's, for an averaged cross-spectrum whose bins are not chi-square) the same sum
    is taken over ``w_k sqrt(var_k)``: the co-spectrum's errors of two bins d apart correlate by the same
    ``|C(d)|^2`` (the product of the two channels' independent transforms; see :mod:`benchnf.dsp.cross`).
    """
    w = np.asarray(weights, dtype=np.float64)
    ws = w * np.asarray(density, dtype=np.float64)
    total = float(np.sum(ws))
    if not total > 0:
        return np.inf
    if variance is not None:
        return band_std(w, variance, correlation) / total
    return math.sqrt(2.0 / dof * correlated_sum_variance(ws, correlation)) / total


def check_band_margin(*, measured_v2: float, floor_v2: float, measured_rel_std: float,
                      floor_rel_std: float, what: str) -> float:
    """Return the band margin in dB; warn below 3 dB; refuse if unresolved.

    The DUT is taken as indistinguishable from the floor when the excess
    ``measured - floor`` is less than three standard deviations of that
    difference.

    Raises
    ------
    MeasurementError
        The excess is not statistically resolved.
    """
    margin_db = float(power_db(measured_v2 / floor_v2))
    excess = measured_v2 - floor_v2
    sigma = float(np.hypot(measured_v2 * measured_rel_std, floor_v2 * floor_rel_std))
    if not excess > 3.0 * sigma:
        raise MeasurementError(
            f"the {what} cannot be told from the analyzer floor (only {margin_db:.2f} dB above it "
            f"in the band): raise the DUT gain, add a low-noise preamplifier before the analyzer, "
            f"or record both captures longer")
    if margin_db < LOW_MARGIN_DB:
        warnings.warn(f"the {what} stands only {margin_db:.1f} dB above the analyzer floor: the "
                      f"floor-corrected value is uncertain", FloorMarginWarning, stacklevel=2)
    return margin_db
