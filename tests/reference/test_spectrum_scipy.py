"""Streaming Welch PSD against scipy.signal.welch and published window/statistics values."""

import math

import numpy as np
import pytest
from scipy import signal, stats

from benchnf.dsp.spectrum import WelchAccumulator, make_window, welch_dof, welch_psd, window_enbw_bins


@pytest.mark.parametrize("window", ["hann", "flattop", "hamming", "blackmanharris", "boxcar"])
@pytest.mark.parametrize(("segment", "overlap"), [(1024, 0.5), (1000, 0.5), (777, 0.25), (256, 0.75)])
def test_matches_scipy_welch(window, segment, overlap):
    # Oracle: scipy.signal.welch (density scaling, constant detrend, mean average).
    rng = np.random.default_rng(3)
    n = 100_003
    x = rng.normal(0, 1e-3, n) + 0.4 * np.sin(0.05 * np.arange(n)) + 0.25  # tone + DC offset
    noverlap = segment - max(1, segment - int(round(overlap * segment)))
    _, ref = signal.welch(x, fs=48_000.0, window=window, nperseg=segment, noverlap=noverlap)
    got = welch_psd(x, sample_rate_hz=48_000.0, segment_length=segment, window=window,
                    overlap=overlap)
    np.testing.assert_allclose(got.psd_per_hz[1:], ref[1:], rtol=1e-9, atol=0)
    # The DC bin of a mean-detrended segment is zero in exact arithmetic (boxcar) or holds only
    # window leakage; ours is detrended after the transform, so compare it on the spectrum's scale.
    assert abs(got.psd_per_hz[0] - ref[0]) <= 1e-12 * ref.max()


@pytest.mark.parametrize("window", ["hann", "flattop"])
def test_a_large_drifting_dc_offset_is_removed_as_scipy_does(window):
    # Oracle: scipy.signal.welch, which detrends each segment in the time domain.  Half of full
    # scale of DC that drifts by as much again, under noise 100 dB lower (seeded, invented data).
    rng = np.random.default_rng(11)
    n = 200_000
    x = 0.5 + 0.5 * np.linspace(0.0, 1.0, n) + rng.normal(0.0, 1e-5, n)
    _, ref = signal.welch(x, fs=1000.0, window=window, nperseg=4096)
    got = welch_psd((x[i:i + 30_000] for i in range(0, n, 30_000)), sample_rate_hz=1000.0,
                    segment_length=4096, window=window)
    np.testing.assert_allclose(got.psd_per_hz, ref, rtol=1e-9, atol=0)


def test_samples_written_into_reserved_space_equal_update():
    rng = np.random.default_rng(12)
    x = rng.normal(size=100_000) + 0.1
    a = WelchAccumulator(sample_rate_hz=1000.0, segment_length=1024)
    b = WelchAccumulator(sample_rate_hz=1000.0, segment_length=1024)
    for i in range(0, x.size, 7_777):
        a.update(x[i:i + 7_777])
        part = x[i:i + 7_777]
        b.reserve(part.size + 100)[:part.size] = part  # more reserved than used
        b.commit(part.size)
    np.testing.assert_array_equal(a.result().psd_per_hz, b.result().psd_per_hz)
    from benchnf.errors import ParameterError
    b.reserve(10)
    with pytest.raises(ParameterError, match="exceeds"):
        b.commit(11)


def test_blocks_of_any_size_give_the_same_estimate():
    rng = np.random.default_rng(4)
    x = rng.normal(size=200_000)
    whole = welch_psd(x, sample_rate_hz=1000.0, segment_length=512)
    sizes = rng.integers(1, 5000, 200)
    edges = np.concatenate(([0], np.cumsum(sizes)))
    blocks = [x[a:b] for a, b in zip(edges[:-1], edges[1:])] + [x[edges[-1]:]]
    streamed = welch_psd(iter(blocks), sample_rate_hz=1000.0, segment_length=512)
    assert streamed.n_averages == whole.n_averages
    np.testing.assert_allclose(streamed.psd_per_hz, whole.psd_per_hz, rtol=1e-10)


# Harris, Proc. IEEE 66(1), 1978, Table 1 (Hann 1.50 bins; flat-top per REFERENCES.md, computed
# for scipy's flattop: 3.7702); boxcar 1.0000, Hamming 1.3628, Blackman-Harris 2.0044 (computed).
@pytest.mark.parametrize(("window", "bins"), [("boxcar", 1.0), ("hann", 1.5), ("hamming", 1.3628),
                                              ("blackmanharris", 2.0044), ("flattop", 3.7702)])
def test_window_enbw_bins(window, bins):
    assert window_enbw_bins(make_window(window, 4096)) == pytest.approx(bins, abs=5e-4)


def test_white_noise_reads_two_sigma_squared_over_fs():
    # Unit-variance white noise reads 2/fs one-sided (common practice; REFERENCES.md).
    x = np.random.default_rng(1).normal(0.0, 0.01, 2 ** 18)
    psd = welch_psd(x, sample_rate_hz=48e3, segment_length=4096, scale=2.0, unit="V")
    assert np.mean(psd.psd_v2_per_hz[1:-1]) == pytest.approx(2 * 0.02 ** 2 / 48e3, rel=0.01)


def test_on_bin_sine_reads_a_squared_over_two_in_its_peak_bin():
    # Parseval for a tone: amplitude A reads A^2/2 with 'spectrum' scaling (REFERENCES.md).
    n, fs, k = 4096, 48_000.0, 100
    t = np.arange(16 * n) / fs
    x = 0.7 * np.cos(2 * np.pi * k * fs / n * t)
    psd = welch_psd(x, sample_rate_hz=fs, segment_length=n)
    assert psd.power_per_bin[k] == pytest.approx(0.7 ** 2 / 2, rel=1e-9)


# Welch equivalent degrees of freedom, Hann 50 %: 36K^2/(19K-1) (computed in REFERENCES.md from
# Welch 1967 / Percival and Walden 1993).
@pytest.mark.parametrize(("k", "nu"), [(2, 3.892), (5, 9.574), (10, 19.048), (31, 58.837),
                                       (100, 189.573)])
def test_hann_half_overlap_dof_matches_published_formula(k, nu):
    w = make_window("hann", 1024)
    assert welch_dof(w, 512, k) == pytest.approx(nu, abs=2e-3)
    assert welch_dof(w, 512, k) == pytest.approx(36 * k * k / (19 * k - 1), rel=1e-3)


def test_dof_agrees_with_monte_carlo():
    # nu = 2 mean^2 / variance of the estimate, over many seeded runs (REFERENCES: 19.02 at K=10).
    rng = np.random.default_rng(7)
    n, k = 256, 10
    runs = np.array([welch_psd(rng.normal(size=n + (k - 1) * n // 2), sample_rate_hz=1.0,
                               segment_length=n).psd_per_hz[5:120] for _ in range(2000)])
    nu_mc = float(np.mean(2 * runs.mean(0) ** 2 / runs.var(0)))
    assert nu_mc == pytest.approx(19.048, rel=0.04)


def test_chi_square_interval_matches_reference_values():
    # REFERENCES.md: nu = 19.05 gives -2.375 / +3.285 dB (95 %), from scipy.stats.chi2.
    acc = WelchAccumulator(sample_rate_hz=1.0, segment_length=256)
    acc.update(np.random.default_rng(0).normal(size=256 + 9 * 128))
    psd = acc.result()
    assert psd.dof == pytest.approx(19.05, abs=0.01)
    lo, hi = psd.confidence_factors(0.95)
    assert 10 * math.log10(lo) == pytest.approx(-2.375, abs=0.005)
    assert 10 * math.log10(hi) == pytest.approx(3.285, abs=0.005)
    assert lo == pytest.approx(psd.dof / stats.chi2.ppf(0.975, psd.dof))


def test_too_short_a_capture_is_refused():
    from benchnf.errors import MeasurementError
    with pytest.raises(MeasurementError, match="shorter than one analysis segment"):
        welch_psd(np.ones(100), sample_rate_hz=1000.0, segment_length=256)


@pytest.mark.parametrize("backend", ["numpy", "fftw"])
def test_both_fft_backends_match_scipy(backend, monkeypatch):
    if backend == "fftw":
        pytest.importorskip("pyfftw")
    monkeypatch.setenv("BENCHNF_FFT", backend)
    x = np.random.default_rng(9).normal(0, 1e-4, 300_000) + 0.3 * np.sin(np.arange(300_000) * 0.2)
    acc = WelchAccumulator(sample_rate_hz=96_000.0, segment_length=8192)
    assert acc.fft_backend == backend
    for i in range(0, x.size, 50_000):
        acc.update(x[i:i + 50_000])
    _, ref = signal.welch(x, fs=96_000.0, nperseg=8192)
    np.testing.assert_allclose(acc.result().psd_per_hz[1:], ref[1:], rtol=1e-9)


def test_a_long_stream_moves_to_fftw_and_stays_on_scipys_spectrum(monkeypatch):
    """Past FFTW_AFTER_SEGMENTS segments a stream starts importing FFTW (pyFFTW installed) and moves to it at
    the first batch after the import; the spectrum is scipy.signal.welch's to rounding across the move."""
    pytest.importorskip("pyfftw")
    from benchnf.dsp import fftw_backend, spectrum
    monkeypatch.delenv("BENCHNF_FFT", raising=False)
    monkeypatch.setattr(spectrum, "FFTW_AFTER_SEGMENTS", 20)
    x = np.random.default_rng(4).normal(0, 1e-4, 300_000)
    acc = WelchAccumulator(sample_rate_hz=48_000.0, segment_length=4096)
    assert acc.fft_backend == "numpy"
    for i in range(0, x.size, 30_000):
        if i == 150_000:
            assert acc._fft._segments >= 20  # the import has been started: let it finish
            fftw_backend.module(wait=True)
        acc.update(x[i:i + 30_000])
    assert acc.fft_backend == "fftw"
    _, ref = signal.welch(x, fs=48_000.0, nperseg=4096)
    np.testing.assert_allclose(acc.result().psd_per_hz[1:], ref[1:], rtol=1e-9)


@pytest.mark.parametrize("kind", ["array", "wav", "flac"])
def test_a_long_capture_read_in_parts_gives_scipys_spectrum_and_every_sample_counted(kind, tmp_path, monkeypatch):
    """A capture long enough to be read in two parts (threads): the spectrum is scipy.signal.welch's of the whole
    to rounding, and the sample statistics count each sample once (a few clipped samples placed across the
    split are each counted once). Seeded noise (INVENTED DATA)."""
    import soundfile as sf

    from benchnf import streaming
    from benchnf.capture import Capture
    from benchnf.io import open_capture
    monkeypatch.setattr(streaming, "PARALLEL_MIN_SEGMENTS", 4)
    monkeypatch.setattr(streaming.os, "cpu_count", lambda: 2)
    x = np.random.default_rng(11).normal(0, 1e-2, 100_003)
    x[[10, 50_000, 50_001, 99_999]] = 1.0  # clipped, on both sides of the split
    if kind == "array":
        cap = Capture.from_array(x, sample_rate_hz=48_000.0)
    else:
        sf.write(tmp_path / f"x.{kind}", x, 48_000, subtype="PCM_24" if kind == "flac" else "DOUBLE")
        cap = open_capture(tmp_path / f"x.{kind}")
        x = cap.read()
    assert len(streaming._parts(cap, 1024, 512)) == 2
    acc, stats = streaming.stream_spectrum(cap, segment_length=1024)
    _, ref = signal.welch(x, fs=48_000.0, nperseg=1024)
    np.testing.assert_allclose(acc.result().psd_per_hz[1:], ref[1:], rtol=1e-9)
    assert stats.n == x.size and stats.n_clipped == 4
    assert stats.sum_sq_fs2 == pytest.approx(float(np.dot(x, x)), rel=1e-12)
