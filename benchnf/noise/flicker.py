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
.. [2] The covariance of least-squares parameters, sigma^2 (J^T J)^-1, as scipy.optimize.curve_fit
       gives it with absolute sigma (the tests compare both).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError

__all__ = ["FlickerFit", "fit_flicker"]



def _model(log_f: NDArray[np.float64], p: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """The log model and its Jacobian: ``y = lw + ln(1 + exp(a (lc - ln f)))`` in (lw, lc[, a])."""
    slope = p[2] if p.size > 2 else 1.0
    d = p[1] - log_f
    u = slope * d
    y = p[0] + np.logaddexp(0.0, u)
    share = 0.5 * (1.0 + np.tanh(0.5 * u))  # the logistic 1/(1 + exp(-u)), without overflow
    cols = [np.ones_like(log_f), slope * share] + ([d * share] if p.size > 2 else [])
    return y, np.column_stack(cols)


def _fit(log_f: NDArray[np.float64], y: NDArray[np.float64],
         p: NDArray[np.float64]) -> tuple[NDArray[np.float64] | None, NDArray[np.float64]]:
    """Least squares by Levenberg-Marquardt with the analytic Jacobian, carried on until the step vanishes
    (Gauss-Newton converges quadratically at the end), so the optimum itself is returned, not a point where
    the sum of squares merely stopped falling: the same spectrum gives the same corner to the last digits.
    Returns (parameters, J^T J at them), or (None, ...) when it does not converge.

    References: K. Levenberg (1944), D. W. Marquardt (1963); the scaled damping of Numerical Recipes, 3rd
    ed., sec. 15.5.2. Checked against scipy.optimize.curve_fit in tests/reference/test_flicker_fit.py.
    """
    model, jac = _model(log_f, p)
    r = y - model
    cost = float(r @ r)
    lam = 1e-3
    jtj = jac.T @ jac
    for _ in range(500):
        a = jtj + lam * np.diag(np.diag(jtj))
        try:
            step = np.linalg.solve(a, jac.T @ r)
        except np.linalg.LinAlgError:
            return None, jtj
        trial = p + step
        new_model, new_jac = _model(log_f, trial)
        new_r = y - new_model
        new_cost = float(new_r @ new_r)
        if not np.isfinite(new_cost):
            lam *= 10.0
        elif new_cost <= cost:
            p, r, jac, cost = trial, new_r, new_jac, new_cost
            jtj = jac.T @ jac
            lam = max(lam / 10.0, 1e-15)
            if np.all(np.abs(step) <= 1e-15 * np.maximum(np.abs(p), 1.0)):
                return p, jtj
        else:
            lam *= 10.0
        if lam > 1e12:  # no step lowers the sum of squares any more: this is the optimum
            return (p, jtj) if np.all(np.isfinite(p)) else (None, jtj)
    return None, jtj


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
    p0 = [white0, math.log(max(range_hz[0] * 2, 1.0))] + ([1.0] if free_slope else [])
    unresolved = MeasurementError(f"no 1/f corner is resolved between {range_hz[0]:g} and {range_hz[1]:g} Hz "
                                  f"(the noise is white there, or the range is too narrow)")
    popt, jtj = _fit(np.log(fu), ls, np.array(p0, dtype=np.float64))
    if popt is None:
        raise unresolved
    with np.errstate(all="ignore"):
        cond = np.linalg.cond(jtj)
    if not (np.isfinite(cond) and cond < 1e14):  # the corner and the white level cannot be told apart
        raise unresolved
    pcov = np.linalg.inv(jtj) * sigma ** 2
    if not np.all(np.isfinite(pcov)) or math.exp(popt[1]) < range_hz[0] / 100:
        raise unresolved
    from ..dsp.special import digamma
    pcov = pcov * enbw_bins
    std = [float(e) for e in np.sqrt(np.diag(pcov))]
    # The mean of ln(S_est) lies below ln(S) by ln(nu/2) - psi(nu/2) (about 1/nu): undo it.
    log_bias = math.log(dof / 2) - digamma(dof / 2)
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
