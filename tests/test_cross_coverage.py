"""Coverage of the cross-spectrum estimate's stated uncertainty over seeds (INVENTED DATA: seeded noise of
known truth). Two channels see a common white noise (the DUT) and each its own, 0, 10 and 20 dB above it
(the second channel 3.5 dB louder than the first); the band power of the averaged co-spectrum with its
standard uncertainty from var C = (Sxx Syy + C² - Q²) / nu (Bendat and Piersol, Random Data, 4th ed.,
§9.2.2 (section from memory)) and the window's bin correlation must cover the truth at k=2 in 93-97 % of 600 seeds, the
scatter over seeds being 0.9-1.1 times the stated standard uncertainty (the targets of issue 21)."""

import numpy as np
import pytest

from benchnf.dsp.cross import CrossAccumulator
from benchnf.dsp.integrate import band_bin_weights
from benchnf.dsp.weighting import Band
from benchnf.noise.floor import band_relative_std

FS = 48_000.0
SEEDS = 600


@pytest.mark.parametrize(("margin_db", "seconds"), [(0.0, 2.0), (-10.0, 4.0), (-20.0, 32.0)])
def test_k2_intervals_cover_the_truth(margin_db, seconds):
    n = int(FS * seconds)
    band = Band(20.0, 20_000.0)
    z = []
    for seed in range(SEEDS):
        rng = np.random.default_rng([seed, int(-margin_db)])
        own = 10 ** (-margin_db / 20)
        s = rng.standard_normal(n, dtype=np.float32)
        a = rng.standard_normal(n, dtype=np.float32) * own
        b = rng.standard_normal(n, dtype=np.float32) * own * 1.5
        acc = CrossAccumulator(sample_rate_hz=FS, segment_length=4096)
        acc.update(s + a, s + b)
        dut = acc.result().dut_psd()
        w = band_bin_weights(dut.frequency_hz, band, weighting="none")
        estimate = float(np.dot(w, dut.psd_per_hz))
        truth = 2.0 / FS * float(w.sum())  # one-sided density of unit-variance white noise
        rel = band_relative_std(w, dut.psd_per_hz, dof=dut.dof, correlation=dut.correlation_kernel,
                                variance=dut.bin_variance)
        z.append((estimate - truth) / (rel * estimate))
    z = np.asarray(z)
    assert 0.93 <= np.mean(np.abs(z) <= 2.0) <= 0.97
    assert 0.9 <= np.std(z) <= 1.1


def test_the_shorted_inputs_voltage_noise_at_1khz_covers_its_truth():
    """End to end through analyze_gain_method: the DUT's voltage noise (1 nV/√Hz behind 40 dB, its input
    shorted) 6 dB under the first input's own noise and 8 dB under the second's, 10 s per recording; the 1 kHz
    spot's stated U (k=2, the stated limits set to zero so that U is the estimate's statistics alone) covers
    the truth in 92-98 % of 400 seeds, the scatter 0.88-1.12 times the stated standard uncertainty (the
    issue's 93-97 % and 0.9-1.1, widened by the sampling error of 400 seeds: about 1.1 % and 3.5 %)."""
    import math

    from benchnf.capture import Capture
    from benchnf.measure.cross_estimate import CrossSetup
    from benchnf.measure.gain import GainSetup
    from benchnf.measure.gain_method import analyze_gain_method
    from benchnf.noise.uncertainty import StatedUncertainty
    from benchnf.units import BOLTZMANN_J_PER_K, T0_K
    fs, rs, gain, en, vpfs, n = 48_000.0, 200.0, 100.0, 1e-9, 1e-2, 480_000
    out = math.sqrt(4 * BOLTZMANN_J_PER_K * T0_K * rs + en ** 2) * gain
    none = StatedUncertainty(calibration_pct=0, tone_level_pct=0, resistor_pct=0, temperature_k=0)

    def pair(rng, dut):
        common = rng.standard_normal(n) * dut
        own = 2.0 * en * gain
        return np.stack([common + rng.standard_normal(n) * own,
                         common + rng.standard_normal(n) * own * 1.26], axis=1) * math.sqrt(fs / 2) / vpfs

    def cap(samples, channel):
        return Capture.from_array(samples, sample_rate_hz=fs, channel=channel, volts_per_fs=vpfs)
    z = []
    for seed in range(400):
        rng = np.random.default_rng([seed, 77])
        term, short = pair(rng, out), pair(rng, en * gain)
        r = analyze_gain_method(terminated=cap(term, 0), shorted=cap(short, 0), gain=GainSetup(gain_db=40.0),
                                rs_ohm=rs, temperature_k=T0_K, stated=none,
                                cross=CrossSetup(other=cap(term, 1), shorted_other=cap(short, 1)))
        u = r.uncertainty["voltage_noise_at_1khz_db"]
        z.append(20 * math.log10(r.voltage_noise_at_1khz_v_per_rthz / en) / (u / 2))
    z = np.asarray(z)
    assert 0.92 <= np.mean(np.abs(z) <= 2.0) <= 0.98
    assert 0.88 <= np.std(z) <= 1.12
