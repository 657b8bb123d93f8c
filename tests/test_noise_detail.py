"""Hum and spur lines, the 1/f fit, SNR, repeats and the uncertainty budget's coverage.

All captures here are seeded synthetic data (INVENTED), with known truth.
"""

import math

import numpy as np
import pytest

from benchnf.measure import GainSetup, analyze_gain_method
from benchnf.capture import Capture
from benchnf.dsp.spectrum import welch_psd
from benchnf.dsp.spurs import find_lines, hum_hints
from benchnf.noise.flicker import fit_flicker
from benchnf.noise.uncertainty import StatedUncertainty
from benchnf.units import vrms_to_dbu

from synth import Bench

FS = 48_000.0


def _noise_with_lines(seed=0, seconds=10.0, lines=((50.0, 2e-6), (100.0, 5e-6), (150.0, 1e-6),
                                                    (7300.0, 3e-6))):
    rng = np.random.default_rng(seed)
    n = int(seconds * FS)
    t = np.arange(n) / FS
    x = rng.normal(0, math.sqrt((50e-9) ** 2 * FS / 2), n)  # 50 nV/rtHz white
    for f, vrms in lines:
        x += vrms * math.sqrt(2) * np.sin(2 * np.pi * f * t + rng.uniform(0, 6))
    return x


def test_lines_of_known_amplitude_are_found_measured_and_classified():
    psd = welch_psd(_noise_with_lines(), sample_rate_hz=FS, segment_length=16384, unit="V")
    search = find_lines(psd)
    got = {round(ln.freq_hz): ln for ln in search.lines}
    assert search.mains_hz == 50.0
    assert set(got) == {50, 100, 150, 7300}
    for f, vrms, family in ((50, 2e-6, "mains"), (100, 5e-6, "ripple"), (150, 1e-6, "mains"),
                            (7300, 3e-6, "unclassified")):
        assert got[f].vrms == pytest.approx(vrms, rel=0.05)  # Parseval over the lobe (common practice)
        assert got[f].family == family
    hints = hum_hints(search.lines)
    assert any("rectifier ripple" in h for h in hints)
    assert any("switch-mode" in h for h in hints)
    assert not any("lift" in h and "never" not in h for h in hints)


def test_sixty_hz_mains_is_recognised():
    x = _noise_with_lines(lines=((60.0, 3e-6), (180.0, 1e-6)))
    assert find_lines(welch_psd(x, sample_rate_hz=FS, segment_length=16384)).mains_hz == 60.0


def test_noise_alone_gives_no_lines():
    # Designed false-alarm rate 1e-3 per spectrum; 30 seeded spectra should give none.
    total = sum(len(find_lines(welch_psd(np.random.default_rng(s).normal(size=int(4 * FS)),
                                         sample_rate_hz=FS, segment_length=8192)).lines)
                for s in range(30))
    assert total == 0


def test_broadband_figures_exclude_the_lines():
    b = Bench(floor_v_per_rthz=5e-9)
    caps = b.captures()
    term = caps["terminated"]
    x = term.read() * term.volts_per_fs
    t = np.arange(x.size) / FS
    hum = 20e-6 * math.sqrt(2) * np.sin(2 * np.pi * 100 * t)  # a strong line at the output
    with_hum = Capture.from_array((x + hum) / term.volts_per_fs, sample_rate_hz=FS,
                                  volts_per_fs=term.volts_per_fs)
    kw = dict(gain=GainSetup(tone=caps["tone"], tone_input_vrms=caps["tone_input_vrms"]),
              rs_ohm=b.rs_ohm, floor=caps["floor"])
    clean = analyze_gain_method(terminated=term, **kw)
    hummy = analyze_gain_method(terminated=with_hum, **kw)
    assert hummy.ein_dbu == pytest.approx(clean.ein_dbu, abs=0.02)
    assert hummy.ein_with_spurs_dbu > clean.ein_dbu + 0.5
    line = next(s for s in hummy.spurs if round(s.freq_hz) == 100)
    assert line.output_vrms == pytest.approx(20e-6, rel=0.05)
    assert line.input_vrms == pytest.approx(20e-6 / b.gain, rel=0.05)


def _coloured(rng, n, density):
    f = np.fft.rfftfreq(n, 1 / FS)
    spec = np.sqrt(density(np.maximum(f, 1e-3)) * FS * n / 4) * (
        rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    spec[0] = 0
    return np.fft.irfft(spec, n)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_flicker_fit_recovers_a_seeded_corner(seed):
    white, corner = 1.2e-9, 180.0
    x = _coloured(np.random.default_rng(seed), int(20 * FS), lambda f: white ** 2 * (1 + corner / f))
    psd = welch_psd(x, sample_rate_hz=FS, segment_length=16384)
    fit = fit_flicker(psd.frequency_hz, psd.psd_per_hz, dof=psd.dof, enbw_bins=1.5, range_hz=(10, 20_000))
    assert abs(fit.corner_hz - corner) < 3 * fit.corner_std_hz
    assert fit.corner_hz == pytest.approx(corner, rel=0.1)
    assert fit.white_density_v_per_rthz == pytest.approx(white, rel=0.005)
    free = fit_flicker(psd.frequency_hz, psd.psd_per_hz, dof=psd.dof, enbw_bins=1.5,
                       range_hz=(10, 20_000), free_slope=True)
    assert free.slope == pytest.approx(1.0, abs=4 * free.slope_std + 0.02)


def test_snr_and_reference_level():
    b = Bench(floor_v_per_rthz=5e-9)
    c = b.captures()
    r = analyze_gain_method(terminated=c["terminated"], floor=c["floor"], rs_ohm=b.rs_ohm,
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]),
                            reference_output_vrms=1.0)
    assert r.snr_db == pytest.approx(20 * math.log10(1.0 / r.output_noise_vrms))
    assert r.snr_db == pytest.approx(-float(vrms_to_dbu(r.output_noise_vrms)) + float(vrms_to_dbu(1.0)))


def test_repeats_are_pooled_and_drift_is_reported():
    caps = []
    for i, gain_db in enumerate((40.0, 40.3, 40.6, 40.9)):  # the DUT warms up: gain creeps
        caps.append(Bench(seed=10 + i, gain_db=gain_db, floor_v_per_rthz=5e-9, seconds=4.0).captures())
    tone = caps[0]
    r = analyze_gain_method(terminated=[c["terminated"] for c in caps], floor=tone["floor"],
                            gain=GainSetup(tone=tone["tone"], tone_input_vrms=tone["tone_input_vrms"]),
                            rs_ohm=200.0)
    assert r.repeats.n == 4
    assert r.repeats.noise_figure_drift_db_per_capture > 0.2
    assert any("drifts" in n for n in r.notes)
    assert r.n_averages == sum(1 + (int(4 * FS) - 16384) // 8192 for _ in caps)


def test_uncertainty_interval_covers_the_truth_about_95_percent_of_the_time():
    # Monte Carlo over seeded synthetic measurements (invented data).  Only the Welch scatter and the
    # sine fit are random here, so the user-stated limits are set to zero.
    zero = StatedUncertainty(calibration_pct=0, tone_level_pct=0, resistor_pct=0, temperature_k=0)
    hits_nf = hits_1k = 0
    runs = 120
    for seed in range(runs):
        b0 = Bench()
        dut_out = b0.gain * math.sqrt(b0.input_density_v2())
        b = Bench(seed=1000 + seed, seconds=1.5, floor_v_per_rthz=dut_out / 2.0)  # about 7 dB margin
        c = b.captures()
        r = analyze_gain_method(terminated=c["terminated"], floor=c["floor"], rs_ohm=b.rs_ohm,
                                gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]),
                                stated=zero, segment_length=2048)
        truth = 10 * math.log10(b.noise_factor())
        hits_nf += abs(r.noise_figure_db - truth) <= r.uncertainty["noise_figure_db"]
        hits_1k += abs(r.nf_at_1khz_db - truth) <= r.uncertainty["nf_at_1khz_db"]
    assert 0.88 <= hits_nf / runs <= 1.0
    assert 0.88 <= hits_1k / runs <= 1.0


def test_stated_limits_enter_the_budget():
    b = Bench(floor_v_per_rthz=5e-9)
    c = b.captures()
    kw = dict(terminated=c["terminated"], floor=c["floor"], rs_ohm=b.rs_ohm,
              gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]))
    small = analyze_gain_method(stated=StatedUncertainty(tone_level_pct=0.1), **kw)
    large = analyze_gain_method(stated=StatedUncertainty(tone_level_pct=5.0), **kw)
    assert large.uncertainty["ein_db"] > small.uncertainty["ein_db"] + 0.3
    names = [x.name for x in large.budgets["noise_figure_db"].contributions]
    assert {"resistor temperature", "resistor tolerance", "tone level at the source"} <= set(names)
