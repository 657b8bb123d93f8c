"""Capture files, sidecars and calibration files (seeded synthetic data, INVENTED)."""

import json
import math
import warnings

import numpy as np
import pytest
import soundfile as sf

from benchnf.calibration import Calibration, apply_calibration, calibrate_from_tone
from benchnf.capture import Capture, SampleStats
from benchnf.errors import CalibrationError, CalibrationWarning, CaptureError, OutputError, ParameterError
from benchnf.io import open_capture, read_sidecar, write_sidecar


def _stereo(tmp_path, name="two.flac", seconds=2.0):
    rng = np.random.default_rng(0)
    x = np.column_stack((rng.normal(0, 0.01, int(48_000 * seconds)),
                         rng.normal(0, 0.02, int(48_000 * seconds))))
    p = tmp_path / name
    sf.write(p, x, 48_000, subtype="PCM_24")
    return p, sf.read(p)[0]


def test_blocks_read_the_chosen_channel_exactly(tmp_path):
    p, x = _stereo(tmp_path)
    cap = open_capture(p, channel=1)
    assert (cap.n_channels, cap.n_frames, cap.sample_rate_hz) == (2, x.shape[0], 48_000.0)
    blocks = list(cap.blocks(10_000))
    assert max(b.size for b in blocks) == 10_000
    np.testing.assert_array_equal(np.concatenate(blocks), x[:, 1])
    np.testing.assert_array_equal(cap.read(channel=0, max_frames=123), x[:123, 0])


def test_sidecar_supplies_metadata_and_must_agree(tmp_path):
    p, _ = _stereo(tmp_path)
    write_sidecar(p, {"condition": "floor", "volts_per_fs": 1.5, "channel": 1})
    cap = open_capture(p)
    assert (cap.condition, cap.volts_per_fs, cap.channel) == ("floor", 1.5, 1)
    assert cap.metadata["volts_per_fs"] == 1.5
    with pytest.raises(CaptureError, match="given as a 'terminated' capture but its sidecar says"):
        open_capture(p, condition="terminated")
    with pytest.raises(OutputError, match="exists already"):
        write_sidecar(p, {"condition": "floor"})
    (tmp_path / "two.flac.json").write_text("{}")
    with pytest.raises(CaptureError, match="has two sidecars"):
        read_sidecar(p)


@pytest.mark.parametrize(("text", "pattern"), [("{nope", "not readable JSON"), ("[1]", "JSON object"),
                                               ('{"condition": "warm"}', "not one of"),
                                               ('{"rs_ohm": -1}', "must be a number >= 0")])
def test_bad_sidecars_are_refused(tmp_path, text, pattern):
    p, _ = _stereo(tmp_path)
    (tmp_path / "two.json").write_text(text)
    with pytest.raises(CaptureError, match=pattern):
        open_capture(p)


def test_truncated_flac_is_reported_when_read(tmp_path):
    p, _ = _stereo(tmp_path, seconds=4.0)
    data = p.read_bytes()
    cut = tmp_path / "cut.flac"
    cut.write_bytes(data[: len(data) // 3])
    cap = open_capture(cut)
    with pytest.raises(CaptureError, match="could not be read to the end|truncated"):
        for _ in cap.blocks():
            pass


def test_array_captures_are_read_only_and_checked():
    cap = Capture.from_array(np.ones(10), sample_rate_hz=10.0)
    block = next(cap.blocks())
    assert not block.flags.writeable
    with pytest.raises(ValueError, match="channel 2 does not exist"):
        Capture.from_array(np.ones((10, 2)), sample_rate_hz=10.0, channel=2)
    with pytest.raises(CalibrationError, match="must be a positive number"):
        Capture.from_array(np.ones(10), sample_rate_hz=10.0, volts_per_fs=0.0)


def test_sample_stats_counts_clipping_at_16_and_24_bit_rails():
    stats = SampleStats(label="x")
    stats.update(np.array([0.1, 32767 / 32768, -1.0, (2 ** 23 - 1) / 2 ** 23, 0.5]))
    assert stats.n_clipped == 3
    with pytest.raises(CaptureError, match="clipped"):
        stats.check_noise()


@pytest.mark.parametrize("energy", [True, False])
@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_sample_stats_find_damaged_samples_with_or_without_the_energy(bad, energy):
    stats = SampleStats(label="x", energy=energy)
    block = np.full(1000, 0.25)
    block[[3, 500]] = bad
    stats.update(block)
    stats.update(np.full(10, -0.5))
    assert (stats.n_nonfinite, stats.n, stats.peak_fs) == (2, 1008, 0.5)
    # RMS of 998 samples at 0.25 and 10 at -0.5 (arithmetic); NaN when the energy is not kept.
    expected = math.sqrt((998 * 0.0625 + 10 * 0.25) / 1008)
    assert stats.rms_fs == pytest.approx(expected, rel=1e-15) if energy else math.isnan(stats.rms_fs)
    with pytest.raises(CaptureError, match="NaN or infinite"):
        stats.check_noise()


@pytest.mark.parametrize("frames", [0, 7, 2048, 5000, 59_392])
def test_sample_stats_of_columns_equal_each_column_alone(frames):
    """update_columns (extremes from folded rows) counts what update counts column by column: peaks,
    clipped samples (at the rails, in the folded part and the tail) and damaged samples."""
    rng = np.random.default_rng(frames)
    block = rng.normal(0, 0.1, (frames, 2)).astype(np.float32)
    if frames > 10:
        block[3, 0], block[-2, 1] = -1.0, np.nan  # a rail in the first column, damage in the tail of the second
        block[frames // 2, 1] = 0.99999
    together = [SampleStats(label="x", energy=False), SampleStats(label="y", energy=False)]
    SampleStats.update_columns(block, together)
    for j, st in enumerate(together):
        alone = SampleStats(label="xy"[j], energy=False)
        alone.update(block[:, j])
        assert (st.n, st.peak_fs, st.n_clipped, st.n_nonfinite) == (alone.n, alone.peak_fs, alone.n_clipped,
                                                                    alone.n_nonfinite)
    if frames > 10:
        assert [st.n_clipped for st in together] == [1, 1] and together[1].n_nonfinite == 1


def _tone_file(tmp_path, f_hz, vpfs=1.7, vrms=0.3, name="ref.wav"):
    t = np.arange(96_000) / 48_000.0
    x = vrms * math.sqrt(2) / vpfs * np.sin(2 * np.pi * f_hz * t)
    x += np.random.default_rng(0).normal(0, 1e-5, t.size)
    p = tmp_path / name
    sf.write(p, x, 48_000, subtype="PCM_24")
    return p


def test_calibration_recovers_volts_per_fs_and_round_trips(tmp_path):
    cal = calibrate_from_tone(open_capture(_tone_file(tmp_path, 400.0)), vrms=0.3)
    assert cal.volts_per_fs == pytest.approx(1.7, rel=1e-5)
    path = cal.save(tmp_path / "cal.json")
    assert Calibration.load(path) == cal
    with pytest.raises(OutputError, match="exists already"):
        cal.save(path)


def test_calibration_warns_outside_the_meter_band(tmp_path):
    cap = open_capture(_tone_file(tmp_path, 10_000.0))
    with pytest.warns(CalibrationWarning, match="outside the meter's trusted band"):
        calibrate_from_tone(cap, vrms=0.3)
    with warnings.catch_warnings():
        warnings.simplefilter("error", CalibrationWarning)
        calibrate_from_tone(cap, vrms=0.3, meter_band_hz=(20.0, 20_000.0))


def test_calibration_applies_only_to_its_rate_and_channel(tmp_path):
    cal = calibrate_from_tone(open_capture(_tone_file(tmp_path, 400.0)), vrms=0.3)
    other = Capture.from_array(np.ones(100), sample_rate_hz=44_100.0)
    with pytest.raises(CalibrationError, match="calibration was made at 48000 Hz"):
        apply_calibration(other, cal)
    two = Capture.from_array(np.ones((100, 2)), sample_rate_hz=48_000.0, channel=1)
    with pytest.raises(CalibrationError, match="calibration is for channel 0"):
        apply_calibration(two, cal)


def test_foreign_json_is_not_a_calibration(tmp_path):
    p = tmp_path / "x.json"
    p.write_text(json.dumps({"volts_per_fs": 1.0}))
    with pytest.raises(CalibrationError, match="not a benchnf calibration file"):
        Calibration.load(p)


@pytest.mark.parametrize("kind", ["wav24", "wav16", "flac", "array", "window"])
def test_frame_blocks_give_every_channel_as_blocks_does(kind, tmp_path):
    """Several channels read together (one pass over the file) equal each channel read on its own (seeded
    noise, INVENTED DATA); the values themselves are checked against soundfile's decoding elsewhere."""
    rng = np.random.default_rng(6)
    data = rng.uniform(-0.5, 0.5, (70_001, 3))
    if kind == "array":
        cap = Capture.from_array(data, sample_rate_hz=48_000.0)
    else:
        suffix, subtype = {"wav24": (".wav", "PCM_24"), "wav16": (".wav", "PCM_16"), "flac": (".flac", "PCM_24"),
                           "window": (".wav", "PCM_24")}[kind]
        path = tmp_path / f"three{suffix}"
        sf.write(path, data, 48_000, subtype=subtype)
        cap = open_capture(path)
        if kind == "window":
            cap = cap.window(1_000, 60_000)
    for chans in ((0, 1), (2, 0), (1,)):
        joined = np.concatenate(list(cap.frame_blocks(chans, 4096, start=10, stop=cap.n_frames - 5)))
        for k, ch in enumerate(chans):
            alone = np.concatenate(list(cap.blocks(4096, channel=ch, start=10, stop=cap.n_frames - 5)))
            np.testing.assert_array_equal(joined[:, k], alone)
    with pytest.raises(ParameterError):
        cap.frame_blocks((0, 3))
