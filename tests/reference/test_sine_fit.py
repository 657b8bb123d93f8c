"""IEEE 1057 sine fits against scipy.optimize.least_squares."""

import numpy as np
import pytest
from scipy import optimize

from benchnf.dsp.tones import fit_sine, locate_tone
from benchnf.errors import MeasurementError


def _capture(seed=0, n=20_000, fs=48_000.0, f=997.3, a=0.31, phase=0.8, offset=0.02, noise=0.01):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    return t, a * np.cos(2 * np.pi * f * t + phase) + offset + rng.normal(0, noise, n)


def test_four_parameter_fit_matches_least_squares_oracle():
    t, x = _capture()
    fit = fit_sine(x, sample_rate_hz=48_000.0)

    def resid(p):
        a, b, c, f = p
        w = 2 * np.pi * f * t
        return x - a * np.cos(w) - b * np.sin(w) - c

    # Oracle: scipy.optimize.least_squares on the same four-parameter model, started nearby.
    sol = optimize.least_squares(resid, [0.3, 0.0, 0.0, 997.0], xtol=1e-15, ftol=1e-15, gtol=1e-15)
    a, b, c, f = sol.x
    assert fit.frequency_hz == pytest.approx(f, abs=1e-6)
    assert fit.amplitude == pytest.approx(np.hypot(a, b), rel=1e-8)
    assert fit.offset == pytest.approx(c, abs=1e-9)
    assert fit.residual_rms == pytest.approx(np.sqrt(np.mean(sol.fun ** 2)), rel=1e-6)


def test_three_parameter_fit_is_linear_least_squares():
    t, x = _capture(seed=1)
    fit = fit_sine(x, sample_rate_hz=48_000.0, frequency_hz=997.3, fit_frequency=False)
    w = 2 * np.pi * 997.3 * t
    coef, *_ = np.linalg.lstsq(np.column_stack((np.cos(w), np.sin(w), np.ones_like(t))), x, rcond=None)
    assert fit.amplitude == pytest.approx(np.hypot(coef[0], coef[1]), rel=1e-10)
    assert fit.phase_rad == pytest.approx(np.arctan2(-coef[1], coef[0]), abs=1e-9)


def test_amplitude_uncertainty_matches_scatter_over_seeds():
    # sigma * sqrt(2/N) (common practice) against the scatter of 200 seeded fits.
    fits = [fit_sine(_capture(seed=s, n=4000)[1], sample_rate_hz=48_000.0) for s in range(200)]
    amps = np.array([f.amplitude for f in fits])
    assert np.std(amps) == pytest.approx(np.mean([f.amplitude_std for f in fits]), rel=0.2)


def test_tone_must_be_where_stated():
    _, x = _capture()
    assert locate_tone(x, sample_rate_hz=48_000.0, expected_hz=1000.0) == pytest.approx(997.3, abs=1)
    with pytest.raises(MeasurementError, match="not at the stated 400 Hz"):
        locate_tone(x, sample_rate_hz=48_000.0, expected_hz=400.0)


def test_noise_alone_has_no_tone():
    x = np.random.default_rng(2).normal(size=48_000)
    with pytest.raises(MeasurementError, match="no tone stands 20 dB clear"):
        locate_tone(x, sample_rate_hz=48_000.0)
