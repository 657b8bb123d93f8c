"""H1 response estimate against the known response of a filter (scipy.signal.freqz as oracle)."""

import numpy as np
import pytest
from scipy import signal

from benchnf.dsp.response import h1_response
from benchnf.errors import MeasurementError


def test_h1_recovers_a_known_filter_despite_output_noise():
    rng = np.random.default_rng(11)
    fs, n = 48_000.0, 48_000 * 8
    b, a = signal.butter(2, [100.0, 8000.0], btype="bandpass", fs=fs)
    x = rng.normal(size=n)
    y = 5.0 * signal.lfilter(b, a, x) + rng.normal(0, 0.05, n)  # noise at the output only
    r = h1_response(x, y, sample_rate_hz=fs, segment_length=4096)
    _, h_true = signal.freqz(5.0 * b, a, worN=r.frequency_hz, fs=fs)
    sel = (r.frequency_hz > 200) & (r.frequency_hz < 6000)
    np.testing.assert_allclose(np.abs(r.h[sel]), np.abs(h_true[sel]), rtol=0.02)
    assert np.all(r.coherence[sel] > 0.99)
    assert np.all(r.magnitude_std_rel()[sel] < 0.01)


def test_low_coherence_in_the_band_is_refused():
    rng = np.random.default_rng(12)
    x = rng.normal(size=48_000 * 2)
    y = rng.normal(size=x.size)  # unrelated: no response at all
    with pytest.raises(MeasurementError, match="coherence"):
        h1_response(x, y, sample_rate_hz=48_000.0, segment_length=4096, check_band_hz=(20, 20_000))
