"""The 1/f corner: fit of an input-referred density to a white level with a flicker rise.

.. math:: e^2(f) = e_w^2 \\left(1 + (f_c / f)^{\\alpha}\\right)

with alpha = 1 (pure 1/f) unless the slope is left free.  The fit minimises
``sum_k (ln S_k - ln e^2(f_k))^2`` over the bins of the chosen range (lines
excluded): a Welch bin's logarithm has standard deviation about
``sqrt(2 / nu)``, the same in every bin, so the log fit weighs them fairly;
its mean lies ``ln(nu/2) - psi(nu/2)`` below the log of the true density,
which is added back to the white level.
Parameter uncertainties come from the fit's covariance, inflated by the
window's equivalent noise bandwidth in bins (neighbouring bins are
correlated).

References
----------
.. [1] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System
       Design", Wiley 1993, ch. 1 (1/f noise and the noise corner).
.. [2] scipy.optimize.curve_fit (covariance of least-squares parameters).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from ..errors import MeasurementError

__all__ = ["FlickerFit", "fit_flicker"]

# Convergence of the least-squares fit, relative. MINPACK's default (1.5e-8) left the corner's last seven
# digits to the path the iteration took, so another BLAS or scipy release moved it by 1e-7; at 1e-13 the
# fit stops at the optimum itself, and the same spectrum gives the same corner everywhere.
_TOL = 1e-13


@dataclass(frozen=True)
class FlickerFit:
    """Result of :func:`fit_flicker`; standard uncertainties beside each value."""

    white_density_v_per_rthz: float
    white_density_std_v_per_rthz: float
    corner_hz: float
    corner_std_hz: float
    slope: float
    slope_std: float
    range_hz: tuple[float, float]
    n_bins: int

    def model_v2_per_hz(self, frequency_hz: ArrayLike) -> np.ndarray:
        """The fitted density at the given frequencies, V^2/Hz."""
        f = np.asarray(frequency_hz, dtype=np.float64)
        return self.white_density_v_per_rthz ** 2 * (1 + (self.corner_hz / f) ** self.slope)


def fit_flicker(frequency_hz: ArrayLike, density_v2_per_hz: ArrayLike, *, dof: float, enbw_bins: float,
                range_hz: tuple[float, float], exclude: ArrayLike | None = None,
                free_slope: bool = False) -> FlickerFit:
    """Fit white level and 1/f corner to a density over `range_hz`.

    Parameters
    ----------
    frequency_hz, density_v2_per_hz : array_like
        The spectrum (V^2/Hz); NaN bins are skipped.
    dof : float
        Welch degrees of freedom of each bin.
    enbw_bins : float
        Bins' worth of variance one bin carries with its correlated neighbours (the window's
        ``sum_d |C(d)|^2``, 35/18 for Hann): the fit's covariance is inflated by it.
    range_hz : (float, float)
        Fit range.
    exclude : array_like of bool, optional
        Bins to leave out (hum and spur lines).
    free_slope : bool
        Fit the exponent alpha too.

    Raises
    ------
    MeasurementError
        Too few usable bins, or the fit does not converge.
    """
    from scipy import optimize
    f = np.asarray(frequency_hz, dtype=np.float64)
    s = np.asarray(density_v2_per_hz, dtype=np.float64)
    use = (f >= range_hz[0]) & (f <= range_hz[1]) & np.isfinite(s) & (s > 0)
    if exclude is not None:
        use &= ~np.asarray(exclude, dtype=bool)
    if use.sum() < 8:
        raise MeasurementError(f"too few usable bins between {range_hz[0]:g} and {range_hz[1]:g} Hz "
                               f"for a 1/f fit: widen the range or use a longer segment")
    fu, ls = f[use], np.log(s[use])
    sigma = math.sqrt(2.0 / dof)
    white0 = float(np.median(ls[fu > np.median(fu)]))

    def model(freq, log_white, log_corner, slope=1.0):
        return log_white + np.log1p(np.exp(slope * (log_corner - np.log(freq))))

    p0 = [white0, math.log(max(range_hz[0] * 2, 1.0))] + ([1.0] if free_slope else [])
    import warnings
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", optimize.OptimizeWarning)
            popt, pcov = optimize.curve_fit(model, fu, ls, p0=p0, sigma=np.full(fu.size, sigma),
                                            absolute_sigma=True, maxfev=20_000,
                                            ftol=_TOL, xtol=_TOL)
    except optimize.OptimizeWarning:
        raise MeasurementError(f"no 1/f corner is resolved between {range_hz[0]:g} and {range_hz[1]:g} Hz "
                               f"(the noise is white there, or the range is too narrow)") from None
    except (RuntimeError, ValueError) as err:
        raise MeasurementError(f"the 1/f fit did not converge ({err}); choose another range") from err
    if not np.all(np.isfinite(pcov)) or math.exp(popt[1]) < range_hz[0] / 100:
        raise MeasurementError(f"no 1/f corner is resolved between {range_hz[0]:g} and {range_hz[1]:g} Hz "
                               f"(the noise is white there, or the range is too narrow)")
    from scipy import special
    pcov = pcov * enbw_bins
    std = [float(e) for e in np.sqrt(np.diag(pcov))]
    # The mean of ln(S_est) lies below ln(S) by ln(nu/2) - psi(nu/2) (about 1/nu): undo it.
    log_bias = math.log(dof / 2) - float(special.digamma(dof / 2))
    white = math.exp((popt[0] + log_bias) / 2)
    corner = math.exp(popt[1])
    return FlickerFit(
        white_density_v_per_rthz=white,
        white_density_std_v_per_rthz=white * std[0] / 2,
        corner_hz=corner,
        corner_std_hz=corner * std[1],
        slope=float(popt[2]) if free_slope else 1.0,
        slope_std=float(std[2]) if free_slope else 0.0,
        range_hz=(float(range_hz[0]), float(range_hz[1])),
        n_bins=int(use.sum()),
    )
