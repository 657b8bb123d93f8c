"""Uncertainty that means what it says: the random part of the stated k=2 intervals covers the truth about
95 % of the time, and its stated standard uncertainty matches the actual spread.

Seeded Monte Carlo over synthetic captures of known truth (INVENTED DATA, tests/synth.py). The bench parts
(calibration, tone level, resistor, temperature) are set to zero here: with a known truth they do not
vary, so only the random (Welch) part is under test. Several hundred runs tell 90 % from 95 %: the
binomial standard error of a coverage near 95 % over 400 runs is 1.1 %.
"""

import math
import re

import numpy as np
import pytest

from benchnf.dsp.psd import window_bin_correlation
from benchnf.dsp.spectrum import welch_psd
from benchnf.dsp.weighting import Band
from benchnf.measure import GainSetup, analyze_gain_method
from benchnf.noise.floor import band_relative_std
from benchnf.noise.uncertainty import StatedUncertainty

from synth import Bench

NO_BENCH_PARTS = StatedUncertainty(calibration_pct=0.0, tone_level_pct=0.0, resistor_pct=0.0, temperature_k=0.0)


def test_hann_bin_correlation_is_computed_from_the_window():
    # REFERENCES.md (computed): for Hann, C(1) = -2/3 and C(2) = 1/6, so |C|^2 = 4/9 and 1/36; 35/18 in all.
    c = window_bin_correlation("hann", 4096)
    assert c == pytest.approx((1.0, 4 / 9, 1 / 36), abs=1e-9)
    assert c[0] + 2 * sum(c[1:]) == pytest.approx(35 / 18, abs=1e-9)
    assert window_bin_correlation("boxcar", 4096) == (1.0,)


@pytest.mark.parametrize("window", ["hann", "blackmanharris", "flattop"])
@pytest.mark.coverage
def test_band_scatter_formula_matches_a_monte_carlo(window):
    # White noise, 50 % overlap: the stated relative std of a 60-bin band power against its actual spread.
    rng = np.random.default_rng(11)
    fs, seg, runs = 8000.0, 256, 600
    band = slice(20, 80)
    sums, stated = [], []
    for _ in range(runs):
        p = welch_psd(rng.normal(0.0, 1.0, 16 * seg), sample_rate_hz=fs, segment_length=seg, window=window)
        w = np.zeros(p.psd_per_hz.size)
        w[band] = 1.0
        sums.append(float(np.dot(w, p.psd_per_hz)))
        stated.append(band_relative_std(w, p.psd_per_hz, dof=p.dof, correlation=p.correlation_kernel))
    actual = float(np.std(sums, ddof=1) / np.mean(sums))
    assert actual / float(np.mean(stated)) == pytest.approx(1.0, abs=0.08)  # 600 runs: std of a std 2.9 %


def _runs(n, *, floor_v_per_rthz, seconds=1.0):
    """Analyse n seeded synthetic benches: (band NF, NF at 1 kHz, EIN) each as (value, stated U k=2, truth)."""
    out = []
    for seed in range(n):
        b = Bench(seconds=seconds, sample_rate_hz=16_000.0, floor_v_per_rthz=floor_v_per_rthz, seed=1000 + seed)
        caps = b.captures()
        r = analyze_gain_method(terminated=caps["terminated"], floor=caps["floor"],
                                gain=GainSetup(tone=caps["tone"], tone_input_vrms=caps["tone_input_vrms"]),
                                rs_ohm=b.rs_ohm, temperature_k=b.temperature_k, band=Band(100.0, 6000.0),
                                segment_length=1024, stated=NO_BENCH_PARTS)
        nf_true = 10 * math.log10(b.noise_factor())
        ein_true = 20 * math.log10(math.sqrt(b.input_density_v2() * 5900.0) / 0.7745966692)
        out.append([(r.noise_figure_db, r.uncertainty["noise_figure_db"], nf_true),
                    (r.nf_at_1khz_db, r.uncertainty["nf_at_1khz_db"], nf_true),
                    (r.ein_dbu, r.uncertainty["ein_db"], ein_true)])
    return np.array(out)


def _coverage_and_ratio(rows):
    value, u95, truth = rows.T
    covered = float(np.mean(np.abs(value - truth) <= u95))
    ratio = float(np.std(value - truth, ddof=1) / np.mean(u95 / 2))
    return covered, ratio


@pytest.mark.parametrize(("floor", "label"), [(20e-9, "22 dB above the floor"), (220e-9, "4 dB above the floor")])
@pytest.mark.coverage
def test_gain_method_intervals_cover_95_percent(floor, label):
    runs = _runs(400, floor_v_per_rthz=floor)
    for i, name in enumerate(("band NF", "NF at 1 kHz", "EIN")):
        covered, ratio = _coverage_and_ratio(runs[:, i, :])
        print(f"{name}, {label}: coverage {100 * covered:.1f} %, spread / stated u = {ratio:.3f}")
        assert 0.93 <= covered <= 0.97, name
        assert 0.9 <= ratio <= 1.1, name


def _yfactor_runs(n, *, te1_k=100.0, g1=10.0, te2_k=600.0, th_k=373.15, tc_k=273.15, fs=16_000.0, seconds=2.0):
    """Y-factor with a noisy second stage: DUT (gain g1, Te1) into a receiver (Te2), hot/cold resistor source,
    and the calibration pair (source straight into the receiver). Densities in full-scale units, k = 1."""
    from benchnf.capture import Capture
    from benchnf.measure.yfactor import HotColdSource, analyze_yfactor
    out = []
    size = int(fs * seconds)
    scale = 1e-8  # full-scale variance per kelvin of noise temperature
    for seed in range(n):
        rng = np.random.default_rng(5000 + seed)

        def cap(t_k):
            return Capture.from_array(rng.normal(0.0, math.sqrt(scale * t_k), size), sample_rate_hz=fs)
        r = analyze_yfactor(
            hot=cap(g1 * (th_k + te1_k) + te2_k), cold=cap(g1 * (tc_k + te1_k) + te2_k),
            cal_hot=cap(th_k + te2_k), cal_cold=cap(tc_k + te2_k),
            source=HotColdSource(t_hot_k=th_k, t_cold_k=tc_k, temperature_uncertainty_k=0.0),
            band=Band(100.0, 6000.0), segment_length=1024)
        out.append((r.noise_figure_db, r.uncertainty["noise_figure_db"], 10 * math.log10(1 + te1_k / 290.0)))
    return np.array(out)


@pytest.mark.coverage
def test_yfactor_with_a_noisy_second_stage_covers_95_percent():
    covered, ratio = _coverage_and_ratio(_yfactor_runs(400))
    print(f"Y-factor NF, noisy second stage: coverage {100 * covered:.1f} %, spread / stated u = {ratio:.3f}")
    assert 0.93 <= covered <= 0.97
    assert 0.9 <= ratio <= 1.1


def test_a_calibration_pair_that_cannot_resolve_the_receiver_is_refused_with_that_reason():
    from benchnf.errors import MeasurementError
    with pytest.raises(MeasurementError, match="the calibration pair cannot resolve the receiver"):
        _yfactor_runs(1, te2_k=60_000.0, seconds=0.5)  # cal Y = 1.0017: far inside its own scatter


def _eni_runs(n, *, rs_list=(0.0, 1000.0, 20_000.0), en=2e-9, i_n=1e-12, fs=16_000.0, seconds=2.0):
    """en and in at 1 kHz from a seeded source-resistance sweep of a flat amplifier, with stated U (k=2)."""
    from benchnf.capture import Capture
    from benchnf.measure.stages import extract_en_in
    out = []
    for seed in range(n):
        sweep = []
        for j, rs in enumerate(rs_list):
            b = Bench(seconds=seconds, sample_rate_hz=fs, rs_ohm=max(rs, 1e-12), en_v_per_rthz=en, in_a_per_rthz=i_n,
                      floor_v_per_rthz=5e-9, seed=20_000 + 10 * seed + j)
            caps = b.captures()
            x = (caps["shorted"] if rs == 0 else caps["terminated"]).read()
            cap = Capture.from_array(x, sample_rate_hz=fs, volts_per_fs=b.volts_per_fs)
            sweep.append((cap, rs, b.temperature_k, GainSetup(gain_db=b.gain_db)))
        r = extract_en_in(sweep=sweep, band=Band(100.0, 6000.0), segment_length=1024)
        a = r.at_1khz
        out.append([(a.en_v_per_rthz, 2 * a.en_std_v_per_rthz, en),
                    (a.in_a_per_rthz, 2 * a.in_std_a_per_rthz, i_n)])
    return np.array(out, dtype=np.float64)


@pytest.mark.coverage
def test_en_and_in_from_a_sweep_cover_95_percent():
    runs = _eni_runs(300)
    for i, name in enumerate(("en", "in")):
        covered, ratio = _coverage_and_ratio(runs[:, i, :])
        print(f"{name} at 1 kHz from a 0/1k/20k ohm sweep: coverage {100 * covered:.1f} %, "
              f"spread / stated u = {ratio:.3f}")
        assert 0.93 <= covered <= 0.97, name
        assert 0.9 <= ratio <= 1.1, name


def test_ropt_nfmin_and_correlation_carry_uncertainty_or_say_they_are_not_determined():
    from benchnf.noise.twoport import fit_en_in
    # Exact densities (computed) of an uncorrelated amplifier, en 2 nV, in 1 pA: Ropt = 2000 ohm.
    k_t = 4 * 1.380649e-23 * 290.0
    rs = np.array([0.0, 1000.0, 5000.0, 20_000.0])
    d = (4e-18 + (1e-12 * rs) ** 2 + k_t * rs)[:, None]
    fit = fit_en_in(rs, d, (0.05 * d) ** 2, temperature_k=290.0, frequency_hz=[1000.0])
    a = fit.at(1000.0)
    assert a["ropt_ohm"] == pytest.approx(2000.0, rel=1e-6) and a["ropt_u95_ohm"] > 0
    assert a["nfmin_u95_db"] > 0 and a["correlation"] == pytest.approx(0.0, abs=1e-6)
    # The same amplifier swept only at 0, 50 and 200 ohm: Ropt lies outside, and is not reported as a number.
    rs2 = np.array([0.0, 50.0, 200.0])
    d2 = (4e-18 + (1e-12 * rs2) ** 2 + k_t * rs2)[:, None]
    a2 = fit_en_in(rs2, d2, (0.05 * d2) ** 2, temperature_k=290.0, frequency_hz=[1000.0]).at(1000.0)
    assert a2["ropt_ohm"] is None and any("Ropt" in u for u in a2["undetermined"])
    assert a2["correlation"] is None  # three points this close cannot tell the correlation


def test_welch_satterthwaite_effective_degrees_of_freedom():
    # GUM (JCGM 100:2008) G.4.1: nu_eff = u_c^4 / sum(u_i^4 / nu_i); computed: u = 0.3 (nu 10) and 0.4 (inf)
    # give u_c = 0.5 and nu_eff = 0.0625 / (0.0081 / 10) = 77.16.
    from benchnf.noise.uncertainty import Budget, Contribution, welch_dof
    b = Budget("x", 0.0, (Contribution("random", 0.3, "", 10.0), Contribution("stated", 0.4, "")))
    assert b.combined_db == pytest.approx(0.5) and b.effective_dof == pytest.approx(77.16, abs=0.01)
    assert welch_dof(0.1) == pytest.approx(200.0)  # relative variance 2/nu of a chi-square power estimate


def test_explain_lists_each_part_with_its_degrees_of_freedom(capsys):
    from pathlib import Path

    from benchnf.cli import main
    demo = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"
    assert main(["analyze", "--terminated", str(demo / "terminated.flac"), "--floor", str(demo / "floor.flac"),
                 "--tone", str(demo / "tone.flac"), "--volts-per-fs", "2", "--quiet", "--explain"]) == 0
    out = capsys.readouterr().out
    assert "effective degrees of freedom" in out and "inf  tone level at the source" in out
    assert re.search(r"\d+\s+Welch statistics with floor subtraction", out)


def test_spot_nf_uncertainty_agrees_with_the_1khz_budget_and_the_rs_curve_has_one():
    from pathlib import Path

    from benchnf.measure.requests import GainMethodRequest, run_gain_method
    demo = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"
    r = run_gain_method(GainMethodRequest(terminated=(demo / "terminated.flac",), floor=demo / "floor.flac",
                                          tone=demo / "tone.flac", volts_per_fs=2.0))
    spot = next(s for s in r.spot if s.freq_hz == 1000.0)
    welch = r.budgets["nf_at_1khz_db"].contributions[0]
    assert spot.noise_figure_expanded_db == pytest.approx(2 * welch.u_db, rel=1e-3)
    u95 = [_eni_curve_u95()]
    assert all(np.all(np.isfinite(u)) and np.all(np.asarray(u) > 0) for u in u95)


def _eni_curve_u95():
    from pathlib import Path

    from benchnf.measure.stage_requests import CaptureOptions, SweepRequest, run_en_in
    demo = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"
    eni = run_en_in(SweepRequest(captures=((demo / "shorted.flac", 0.0, None), (demo / "terminated.flac", 20.0, None),
                                           (demo / "rs_100.flac", 100.0, None), (demo / "rs_1000.flac", 1000.0, None)),
                                 tone=demo / "tone.flac", floor=demo / "floor.flac",
                                 options=CaptureOptions(volts_per_fs=2.0)))
    return eni.nf_vs_rs.curves["1000"].noise_figure_u95_db


def test_noise_near_one_step_of_a_16_bit_capture_is_refused_and_24_bit_is_not(tmp_path):
    # Rounding to steps q adds q^2/12 only while the noise spans several steps (Widrow and Kollar,
    # Quantization Noise, 2008, ch. 4-5): below about one step the floor subtraction would under-correct.
    import soundfile as sf

    from benchnf.cli import main
    rng = np.random.default_rng(4)
    for subtype in ("PCM_16", "PCM_24"):
        sf.write(tmp_path / f"floor_{subtype}.wav", rng.normal(0, 4e-6, 96_000), 48_000, subtype=subtype)
        sf.write(tmp_path / f"term_{subtype}.wav", rng.normal(0, 3e-5, 96_000), 48_000, subtype=subtype)
    args = ["--gain-db", "40", "--rs", "200", "--volts-per-fs", "2", "--quiet"]
    rc16 = main(["analyze", "--terminated", str(tmp_path / "term_PCM_16.wav"), "--floor",
                 str(tmp_path / "floor_PCM_16.wav"), *args])
    rc24 = main(["analyze", "--terminated", str(tmp_path / "term_PCM_24.wav"), "--floor",
                 str(tmp_path / "floor_PCM_24.wav"), *args])
    assert (rc16, rc24) == (2, 0)
