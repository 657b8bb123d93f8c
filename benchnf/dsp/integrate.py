"""Integrating a density over a band, with a weighting, bin by bin.

Each Welch bin k stands for the frequencies ``[f_k - df/2, f_k + df/2]``
(df = fs/N).  A bin cut by a band edge counts by the fraction of it inside
the band.  Written here because scipy's integrators (``trapezoid``,
``simpson``) integrate sampled curves, not piecewise-constant bins with
fractional edges.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .weighting import Band, weighting_power_gain

__all__ = ["band_bin_weights", "band_integral"]


def band_bin_weights(frequency_hz: ArrayLike, band: Band, *, weighting: str = "none") -> NDArray[np.float64]:
    """Weights w_k so that ``sum(w_k S_k)`` is the weighted band integral of density S.

    ``w_k = df * (fraction of bin k inside the band) * |W(f_k)|^2``.

    Parameters
    ----------
    frequency_hz : array_like
        Evenly spaced bin centres from 0 Hz (as from a Welch estimate).
    band : Band
        The band.
    weighting : str
        Weighting name (see :data:`benchnf.dsp.weighting.WEIGHTINGS`).
    """
    f_all = np.asarray(frequency_hz, dtype=np.float64)
    df = float(f_all[1] - f_all[0])
    out = np.zeros(f_all.shape)
    # Only the bins that can touch the band are computed (a third-octave band is a few of many).
    first = max(0, int(np.floor((band.low_hz - f_all[0]) / df)) - 1)
    last = min(f_all.size, int(np.ceil((band.high_hz - f_all[0]) / df)) + 2)
    if first >= last:
        return out
    f = f_all[first:last]
    lo_edge = np.maximum(f - df / 2, 0.0)
    hi_edge = f + df / 2
    inside = np.clip(np.minimum(hi_edge, band.high_hz) - np.maximum(lo_edge, band.low_hz), 0.0, None)
    with np.errstate(divide="ignore", invalid="ignore"):
        gain = np.where(inside > 0, weighting_power_gain(weighting, np.where(f > 0, f, df / 4)), 0.0)
    out[first:last] = inside * gain
    return out


def band_integral(frequency_hz: ArrayLike, density: ArrayLike, band: Band, *,
                  weighting: str = "none") -> float:
    """Weighted integral of a one-sided density over a band (e.g. V^2/Hz -> V^2).

    .. math:: P = \\int_{f_l}^{f_h} S(f)\\,|W(f)|^2\\,df \\approx \\sum_k w_k S_k

    NaN bins are not allowed inside the band.
    """
    w = band_bin_weights(frequency_hz, band, weighting=weighting)
    s = np.asarray(density, dtype=np.float64)
    used = w > 0
    return float(np.dot(w[used], s[used]))
