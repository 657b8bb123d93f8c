"""The 1/f fit (benchnf/noise/flicker.py, Levenberg-Marquardt with the analytic Jacobian, written out so that an
analysis need not import scipy.optimize) against scipy.optimize (PyPI), the reference: least_squares on the same
model finds the same optimum, and curve_fit (absolute sigma) gives the same covariance. The spectra are seeded
chi-square draws about a known white level and corner (INVENTED DATA)."""

import math

import numpy as np
import pytest

from benchnf.noise.flicker import _fit, _model, fit_flicker

optimize = pytest.importorskip("scipy.optimize")

F = np.arange(1, 4000) * 2.9296875


def _spectrum(corner, slope, seed, dof=100.0):
    rng = np.random.default_rng(seed)
    return 1e-18 * (1 + (corner / F) ** slope) * rng.chisquare(dof, F.size) / dof


@pytest.mark.parametrize(("corner", "slope", "free"), [(30.0, 1.0, False), (300.0, 1.1, True), (6.0, 1.0, False)])
def test_the_optimum_is_scipys_and_at_least_as_good(corner, slope, free):
    s = _spectrum(corner, slope, seed=int(corner))
    use = (F >= 20) & (F <= 10_000)
    lf, y = np.log(F[use]), np.log(s[use])
    p0 = np.array([float(np.median(y)), math.log(40.0)] + ([1.0] if free else []))
    ours, _jtj = _fit(lf, y, p0)
    ref = optimize.least_squares(lambda q: y - _model(lf, q)[0], p0, jac=lambda q: -_model(lf, q)[1], method="lm",
                                 xtol=1e-15, ftol=1e-15, gtol=1e-15)
    np.testing.assert_allclose(ours, ref.x, rtol=1e-6)

    def gradient(q):
        return float(np.max(np.abs(_model(lf, q)[1].T @ (y - _model(lf, q)[0]))))
    assert gradient(ours) <= max(gradient(ref.x), 1e-9)  # the sum of squares is flat at our optimum


def test_the_covariance_is_curve_fits_with_absolute_sigma():
    dof = 100.0
    s = _spectrum(30.0, 1.0, seed=3, dof=dof)
    fit = fit_flicker(F, s, dof=dof, enbw_bins=1.0, range_hz=(20.0, 10_000.0))
    use = (F >= 20) & (F <= 10_000)

    def model(freq, lw, lc):
        return lw + np.logaddexp(0.0, lc - np.log(freq))
    popt, pcov = optimize.curve_fit(model, F[use], np.log(s[use]), p0=[-41.4, math.log(40)],
                                    sigma=np.full(use.sum(), math.sqrt(2 / dof)), absolute_sigma=True,
                                    xtol=1e-15, ftol=1e-15, gtol=1e-15)
    assert fit.corner_hz == pytest.approx(math.exp(popt[1]), rel=1e-5)
    assert fit.corner_std_hz == pytest.approx(math.exp(popt[1]) * math.sqrt(pcov[1, 1]), rel=1e-4)


def test_the_same_spectrum_gives_the_same_corner_to_the_last_digits():
    s = _spectrum(30.0, 1.0, seed=9)
    rng = np.random.default_rng(1)
    a = fit_flicker(F, s, dof=100.0, enbw_bins=35 / 18, range_hz=(20.0, 10_000.0)).corner_hz
    b = fit_flicker(F, s * (1 + 1e-15 * rng.standard_normal(F.size)), dof=100.0, enbw_bins=35 / 18,
                    range_hz=(20.0, 10_000.0)).corner_hz
    assert b == pytest.approx(a, rel=1e-11)  # a perturbation at the rounding level stays there
