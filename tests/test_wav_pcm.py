"""WAV samples read straight with numpy, against soundfile (libsndfile) reading the same files.

Oracle: soundfile.read, i.e. libsndfile's decoding and its full-scale scaling.  The files are
seeded random samples (invented data) written by soundfile.
"""

import numpy as np
import pytest
import soundfile as sf

from benchnf.acquire.record import recover_wav
from benchnf.errors import CaptureError, OutputError
from benchnf.io import open_capture
from benchnf.io.audio_file import _direct_layout
from benchnf.io.wav_pcm import WavLayout, decode_samples, read_wav_layout

SUBTYPES = ["PCM_16", "PCM_24", "PCM_32", "FLOAT", "DOUBLE"]


def _write(path, subtype, channels, frames=20_011, fmt="WAV", seed=0):
    rng = np.random.default_rng(seed)
    x = np.clip(rng.normal(0.0, 0.3, (frames, channels)), -1.0, 1.0)
    x[:3, 0] = (-1.0, 1.0, 0.0)  # both rails and zero
    sf.write(path, x, 48_000, subtype=subtype, format=fmt)
    return sf.read(path, always_2d=True)[0]


@pytest.mark.parametrize("subtype", SUBTYPES)
@pytest.mark.parametrize("channels", [1, 2, 3])
def test_direct_reading_is_bit_identical_to_libsndfile(tmp_path, subtype, channels):
    p = tmp_path / f"{subtype}.wav"
    ref = _write(p, subtype, channels)
    assert _direct_layout(sf.info(str(p)), read_wav_layout(p)) is not None  # the numpy path is taken
    for ch in range(channels):
        cap = open_capture(p, channel=ch)
        got = np.concatenate(list(cap.blocks(4099)))  # a block size that divides nothing
        np.testing.assert_array_equal(got, ref[:, ch])


def test_blocks_decoded_into_given_arrays_are_the_same(tmp_path):
    p = tmp_path / "into.wav"
    ref = _write(p, "PCM_24", 2)
    store = np.zeros(ref.shape[0])
    filled = 0

    def into(k):
        return store[filled:filled + k]

    for block in open_capture(p, channel=1).blocks(5000, into=into):
        assert np.shares_memory(block, store)
        filled += block.size
    assert filled == ref.shape[0]
    np.testing.assert_array_equal(store, ref[:, 1])


def test_rf64_and_extra_chunks_are_read_directly(tmp_path):
    p = tmp_path / "big.rf64.wav"
    ref = _write(p, "PCM_24", 1, fmt="RF64")
    layout = read_wav_layout(p)
    assert layout is not None and layout.declared_bytes == ref.shape[0] * 3
    np.testing.assert_array_equal(open_capture(p).read(), ref[:, 0])
    q = tmp_path / "tagged.wav"
    with sf.SoundFile(q, "w", samplerate=48_000, channels=1, subtype="PCM_16") as fh:
        fh.title = "bench capture"  # libsndfile writes a LIST chunk
        fh.write(ref[:, 0])
    assert b"LIST" in q.read_bytes()
    np.testing.assert_array_equal(open_capture(q).read(), sf.read(q)[0])


@pytest.mark.parametrize("subtype", ["PCM_U8", "ULAW", "ALAW", "IMA_ADPCM"])
def test_lossy_and_companded_encodings_are_refused(tmp_path, subtype):
    # Their own noise and shaping falsify a noise figure (a Vorbis capture read 2.3 dB better than truth).
    p = tmp_path / f"{subtype}.wav"
    _write(p, subtype, 1)
    assert _direct_layout(sf.info(str(p)), read_wav_layout(p)) is None  # not decoded by benchnf's reader
    with pytest.raises(CaptureError, match="lossy or companded encoding"):
        open_capture(p)


def test_a_file_cut_short_while_open_is_reported(tmp_path):
    p = tmp_path / "cut.wav"
    _write(p, "PCM_24", 1)
    cap = open_capture(p)
    data = p.read_bytes()
    p.write_bytes(data[: len(data) // 2])
    with pytest.raises(CaptureError, match="truncated"):
        for _ in cap.blocks():
            pass


def test_a_truncated_rf64_is_refused_on_opening(tmp_path):
    p = tmp_path / "cut.wav"
    _write(p, "PCM_16", 1, fmt="RF64")
    data = p.read_bytes()
    cut = tmp_path / "short.wav"
    cut.write_bytes(data[: len(data) - 1000])
    with pytest.raises(CaptureError, match="truncated"):
        open_capture(cut)
    assert p.read_bytes() == data


def test_decode_checks_the_buffer_and_the_output():
    # 24-bit little-endian two's complement (RIFF WAVE PCM), scaled by 2^-23 as libsndfile does.
    layout = WavLayout(1, 1, 48_000, 3, 24, 44, 9, 53)
    raw = bytes([0x00, 0x00, 0x80, 0xFF, 0xFF, 0x7F, 0x01, 0x00, 0x00])  # -1, +max, +1 LSB
    np.testing.assert_array_equal(decode_samples(raw, layout, 3, channel=0),
                                  [-1.0, (2 ** 23 - 1) / 2 ** 23, 1 / 2 ** 23])
    assert decode_samples(raw, layout, 3).shape == (3, 1)
    with pytest.raises(ValueError, match="fewer than"):
        decode_samples(raw, layout, 4)
    with pytest.raises(ValueError, match="1-D float64"):
        decode_samples(raw, layout, 3, out=np.zeros(2))
    with pytest.raises(ValueError, match="native values"):
        decode_samples(raw, layout, 3, out=np.zeros(3), native=True)


@pytest.mark.parametrize("subtype", SUBTYPES)
@pytest.mark.parametrize("channels", [1, 2])
def test_recovery_rescues_every_frame_exactly_in_the_same_encoding(tmp_path, subtype, channels):
    p = tmp_path / "rec.wav"
    ref = _write(p, subtype, channels)
    raw = bytearray(p.read_bytes())
    i = raw.index(b"data")
    raw[i + 4:i + 8] = (0).to_bytes(4, "little")  # a header left unfinished by a crash
    stale = tmp_path / "stale.wav"
    stale.write_bytes(bytes(raw))
    assert recover_wav(stale, tmp_path / "rescued.wav") == ref.shape[0]
    assert stale.read_bytes() == bytes(raw)
    assert sf.info(str(tmp_path / "rescued.wav")).subtype == subtype
    np.testing.assert_array_equal(sf.read(tmp_path / "rescued.wav", always_2d=True)[0], ref)
    with pytest.raises(OutputError, match="exists already"):
        recover_wav(stale, tmp_path / "rescued.wav")
