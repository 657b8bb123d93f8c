"""Floor correction and noise-figure equations against published and computed check values."""

import math

import numpy as np
import pytest

from benchnf.noise.floor import floor_correction_db, subtract_floor
from benchnf.noise.gain_method import band_noise_factor, spot_noise_factor
from benchnf.dsp.weighting import Band
from benchnf.units import BOLTZMANN_J_PER_K as K, T0_K


# REFERENCES.md: correction at 3 dB excess -3.021 dB, 6 dB -1.256 dB, 10 dB -0.458 dB (computed; the
# form of the ISO 3744:2010 background correction).  PRACTICE.md: with the DUT alone 0, 5 and 10 dB
# above the floor, the uncorrected reading is +3, +1.2 and +0.41 dB high.
@pytest.mark.parametrize(("excess", "corr"), [(3.0, -3.021), (6.0, -1.256), (10.0, -0.458)])
def test_floor_correction_values(excess, corr):
    assert float(floor_correction_db(excess)) == pytest.approx(corr, abs=0.001)


@pytest.mark.parametrize(("dut_over_floor_db", "reads_high"), [(0.0, 3.0), (5.0, 1.2), (10.0, 0.41)])
def test_correction_removes_the_published_reading_error(dut_over_floor_db, reads_high):
    measured_over_floor_db = 10 * math.log10(10 ** (dut_over_floor_db / 10) + 1.0)
    correction = float(floor_correction_db(measured_over_floor_db))
    assert -correction == pytest.approx(reads_high, abs=0.02)
    assert measured_over_floor_db + correction == pytest.approx(dut_over_floor_db, abs=1e-9)


def test_subtraction_is_linear_power():
    sub = subtract_floor([4.0, 2.0, 1.0], [1.0, 1.0, 1.5])
    np.testing.assert_allclose(sub.difference, [3.0, 1.0, -0.5])
    assert np.isnan(sub.density[2])
    np.testing.assert_allclose(sub.margin_db[:2], [10 * math.log10(4), 10 * math.log10(2)])


def test_en_in_example_noise_figure_at_150_ohm():
    # REFERENCES.md (computed from the en-in model, Motchenbacher and Connelly; memory for the
    # model): en 1 nV/rtHz, in 1 pA/rtHz, NF(150 ohm) = 1.5401 dB at T = T0.
    rs = 150.0
    e2 = (1e-9) ** 2 + (1e-12 * rs) ** 2 + 4 * K * T0_K * rs
    nf = 10 * math.log10(float(spot_noise_factor(e2, rs_ohm=rs, temperature_k=T0_K)))
    assert nf == pytest.approx(1.5401, abs=1e-4)


def test_noiseless_amplifier_has_0_db_whatever_the_resistor_temperature():
    # IEEE definition: F counts only noise added beyond the source's own, at any source temperature.
    for t in (77.0, 290.0, 373.15):
        e2 = 4 * K * t * 200.0
        assert float(spot_noise_factor(e2, rs_ohm=200.0, temperature_k=t)) == pytest.approx(1.0)


def test_band_noise_factor_of_white_noise_equals_spot_value():
    f = np.arange(0, 24_001, 3.0)
    e2 = np.full(f.shape, 2 * 4 * K * T0_K * 50.0)  # twice the source's noise: F = 2
    for weighting in ("none", "A"):
        assert band_noise_factor(f, e2, Band(20.0, 20_000.0), weighting=weighting, rs_ohm=50.0,
                                 temperature_k=T0_K) == pytest.approx(2.0)
