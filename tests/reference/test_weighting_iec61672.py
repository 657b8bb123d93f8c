"""A-weighting against IEC 61672-1:2013 Table 3 and a PyPI oracle."""

import numpy as np
import pytest
from scipy import signal

from benchnf.dsp.weighting import BAND_PRESETS, Band, a_weighting_db, parse_band, weighting_power_gain
from benchnf.errors import ParameterError

# IEC 61672-1:2013, Table 3 (A-weighting, dB), rounded to 0.1 dB, as transcribed in
# ../shared/REFERENCES.md (read: acoustic-toolbox data file and two transcriptions agree).
# The table's values are the curve at the EXACT frequencies 1000 * 10^(n/10).
TABLE_3_A = [(-15, -39.4), (-12, -26.2), (-9, -16.1), (-6, -8.6), (-3, -3.2), (0, 0.0),
             (3, 1.2), (6, 1.0), (9, -1.1), (12, -6.6), (13, -9.3)]


@pytest.mark.parametrize(("n", "expected_db"), TABLE_3_A)
def test_a_weighting_matches_iec_61672_table_3_at_exact_frequencies(n, expected_db):
    f = 1000.0 * 10 ** (n / 10)
    assert float(a_weighting_db(f)) == pytest.approx(expected_db, abs=0.06)


def test_a_weighting_matches_sound_weighting_filters_oracle():
    # Oracle: PyPI package sound-weighting-filters 0.9.3, ABC_weighting.get_zpk("A"),
    # the analogue IEC 61672 A-curve normalised to 0 dB at 1 kHz.
    abc = pytest.importorskip("ABC_weighting")
    z, p, k = abc.get_zpk("A")
    f = np.geomspace(10.0, 24_000.0, 200)
    _, h = signal.freqs_zpk(z, p, k, worN=2 * np.pi * f)
    np.testing.assert_allclose(a_weighting_db(f), 20 * np.log10(np.abs(h)), atol=1e-3)


def test_power_gain_is_square_of_amplitude_curve():
    f = np.array([100.0, 1000.0, 10_000.0])
    np.testing.assert_allclose(10 * np.log10(weighting_power_gain("A", f)), a_weighting_db(f))
    np.testing.assert_allclose(weighting_power_gain("none", f), 1.0)


def test_unknown_weighting_lists_allowed_names():
    with pytest.raises(ParameterError, match="not one of none, A"):
        weighting_power_gain("B", [1000.0])


def test_band_rules():
    assert BAND_PRESETS["audio"] == Band(20.0, 20_000.0)  # AES17 band (REFERENCES.md)
    assert parse_band("22-22k") == Band(22.0, 22_000.0)
    with pytest.raises(ParameterError, match="not a band"):
        Band(1000.0, 100.0)
    with pytest.raises(ParameterError, match="beyond half the sample rate"):
        Band(20.0, 30_000.0).check_within(48_000.0)
