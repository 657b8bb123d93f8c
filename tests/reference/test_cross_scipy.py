"""The two-channel cross-spectrum (benchnf/dsp/cross.py) against scipy.signal.csd, welch and coherence
(PyPI, the reference implementation), and its co-spectrum variance against the scatter seen over seeds
(Bendat and Piersol, Random Data, 4th ed., §9.2.2 (section from memory): var C = (Sxx Syy + C² - Q²) / (2 m)). Signals are seeded
noise of known truth (INVENTED DATA)."""

import numpy as np
import pytest

from benchnf.dsp.cross import CrossAccumulator

signal = pytest.importorskip("scipy.signal")
FS = 48_000.0


def _pair(rng, n, common=1.0, own=3.0):
    s = rng.normal(0, common, n)
    return s + rng.normal(0, own, n), s + rng.normal(0, own, n)


@pytest.mark.parametrize(("nperseg", "blocks"), [(1024, [50_000]), (4096, [777, 10_000, 3, 90_000]), (1000, [64_001])])
def test_cross_and_auto_spectra_match_scipy(nperseg, blocks):
    rng = np.random.default_rng(1)
    x, y = _pair(rng, sum(blocks))
    acc = CrossAccumulator(sample_rate_hz=FS, segment_length=nperseg)
    at = 0
    for b in blocks:
        acc.update(x[at:at + b], y[at:at + b])
        at += b
    r = acc.result(scale_x=2.0, scale_y=0.5)
    kw = dict(fs=FS, window="hann", nperseg=nperseg, noverlap=nperseg // 2, detrend="constant")
    f, pxy = signal.csd(2.0 * x, 0.5 * y, **kw)
    np.testing.assert_allclose(r.frequency_hz, f)
    np.testing.assert_allclose(r.s_xy, pxy, rtol=1e-9, atol=1e-12 * np.abs(pxy).max())
    np.testing.assert_allclose(r.s_xx, signal.welch(2.0 * x, **kw)[1], rtol=1e-9)
    np.testing.assert_allclose(r.coherence, signal.coherence(x, y, **kw)[1], rtol=1e-7, atol=1e-12)


def test_merged_parts_equal_one_pass():
    rng = np.random.default_rng(2)
    x, y = _pair(rng, 200_000)
    n, hop = 2048, 1024
    whole = CrossAccumulator(sample_rate_hz=FS, segment_length=n)
    whole.update(x, y)
    cut = 50 * hop  # whole segments in the first part; the second starts where the next segment does
    a, b = CrossAccumulator(sample_rate_hz=FS, segment_length=n), CrossAccumulator(sample_rate_hz=FS, segment_length=n)
    a.update(x[:cut - hop + n], y[:cut - hop + n])
    b.update(x[cut:], y[cut:])
    a.merge(b)
    np.testing.assert_allclose(a.result().s_xy, whole.result().s_xy, rtol=1e-12)
    assert a.n_averages == whole.n_averages


def test_the_co_spectrum_variance_is_the_scatter_seen():
    # Common noise 10 dB under each channel's own; 60 seeds; per-bin z = (C - truth) / sqrt(var): its
    # standard deviation over seeds and bins must be 1 within a few per cent.
    n_seg, nperseg = 40, 512
    common, own = 1.0, np.sqrt(10.0)
    truth = 2 * common ** 2 / FS  # one-sided density of white noise of variance common²
    zs = []
    for seed in range(60):
        rng = np.random.default_rng(100 + seed)
        x, y = _pair(rng, (n_seg + 1) * nperseg // 2, common, own)
        acc = CrossAccumulator(sample_rate_hz=FS, segment_length=nperseg)
        acc.update(x, y)
        r = acc.result()
        sl = slice(5, -5)
        zs.append((r.co[sl] - truth) / np.sqrt(r.co_variance[sl]))
    z = np.concatenate(zs)
    assert np.std(z) == pytest.approx(1.0, abs=0.05)
    assert abs(np.mean(z)) < 0.05


def test_streamed_in_parts_from_a_two_channel_capture_equals_scipy():
    # Long enough to be read in two parts on two cores (PARALLEL_MIN_SEGMENTS segments or more).
    from benchnf.capture import Capture
    from benchnf.streaming import PARALLEL_MIN_SEGMENTS, stream_cross
    rng = np.random.default_rng(3)
    nperseg = 256
    n = (PARALLEL_MIN_SEGMENTS + 100) * nperseg // 2
    x, y = _pair(rng, n, 1e-3, 3e-3)
    both = np.column_stack([x, y])
    cx = Capture.from_array(both, sample_rate_hz=FS, channel=0, volts_per_fs=2.0)
    acc, sx, sy = stream_cross(cx, cx.replace(channel=1), segment_length=nperseg)
    r = acc.result(scale_x=2.0, scale_y=2.0)
    f, pxy = signal.csd(2 * x, 2 * y, fs=FS, window="hann", nperseg=nperseg, noverlap=nperseg // 2)
    np.testing.assert_allclose(r.s_xy, pxy, rtol=1e-9, atol=1e-12 * np.abs(pxy).max())
    assert r.n_averages == (n - nperseg) // (nperseg // 2) + 1


def test_a_long_stream_in_single_precision_matches_scipy():
    """A stream long enough for FFTW is transformed in single precision (float32 in, complex64 out; the sums
    kept in double). Against scipy.signal.csd/welch in double: rounding of about 1e-7 per value, so the
    densities agree to 1e-5 relative (stated tolerance), far inside the estimate's own scatter."""
    pytest.importorskip("pyfftw")
    from benchnf.dsp import fftw_backend
    from benchnf.dsp.spectrum import FFTW_AFTER_SEGMENTS
    assert fftw_backend.module(wait=True) is not None  # FFTW from the first batch (it is imported beside a stream)
    rng = np.random.default_rng(4)
    nperseg = 256
    n = (FFTW_AFTER_SEGMENTS + 50) * nperseg // 2
    x, y = _pair(rng, n, 1e-3, 3e-3)
    x, y = x + 0.02, y - 0.01  # a DC offset 7 times the noise: taken out per segment, as scipy's detrend does
    acc = CrossAccumulator(sample_rate_hz=FS, segment_length=nperseg)
    acc.expect(n)
    for at in range(0, n, 30_000):
        acc.update(x[at:at + 30_000], y[at:at + 30_000])
    assert acc.single and acc._buf.dtype == np.complex64 and acc._fft.backend == "fftw"
    r = acc.result()
    kw = dict(fs=FS, window="hann", nperseg=nperseg, noverlap=nperseg // 2, detrend="constant")
    _f, pxy = signal.csd(x, y, **kw)
    inner = slice(2, None)  # the DC bin and its neighbour hold only what is left of the offset: rounding
    np.testing.assert_allclose(r.s_xy[inner], pxy[inner], rtol=1e-5, atol=1e-5 * np.abs(pxy).max())
    np.testing.assert_allclose(r.s_xx[inner], signal.welch(x, **kw)[1][inner], rtol=1e-5)
    np.testing.assert_allclose(r.s_yy[inner], signal.welch(y, **kw)[1][inner], rtol=1e-5)


@pytest.mark.parametrize("backend", ["numpy", "fftw"])
def test_both_fft_backends_of_the_complex_transform_match_scipy(backend, monkeypatch):
    """x + i y through numpy's and FFTW's complex transform, in double, equal scipy.signal.csd to 1e-9."""
    if backend == "fftw":
        pytest.importorskip("pyfftw")
    monkeypatch.setenv("BENCHNF_FFT", backend)
    rng = np.random.default_rng(8)
    x, y = _pair(rng, 40_000)
    acc = CrossAccumulator(sample_rate_hz=FS, segment_length=512)
    acc.update(x, y)
    assert acc._fft.backend == backend and not acc.single
    kw = dict(fs=FS, window="hann", nperseg=512, noverlap=256, detrend="constant")
    pxy = signal.csd(x, y, **kw)[1]
    np.testing.assert_allclose(acc.result().s_xy, pxy, rtol=1e-9, atol=1e-12 * np.abs(pxy).max())
