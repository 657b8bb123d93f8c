"""WAV, FLAC and AIFF captures, read in blocks: through soundfile (libsndfile), or for
uncompressed WAV/RF64 straight with numpy (:mod:`benchnf.io.wav_pcm`, bit-identical and faster)."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..capture import BlockSink, Capture, deliver
from ..errors import CaptureError
from .sidecar import read_sidecar
from .wav_pcm import WavLayout, iter_channel_blocks, libsndfile_subtype, read_wav_layout

__all__ = ["open_capture"]


# Encodings refused for noise analysis: lossy codecs and companding/low-resolution formats.
LOSSY_SUBTYPES = frozenset({"ULAW", "ALAW", "PCM_S8", "PCM_U8", "IMA_ADPCM", "MS_ADPCM", "GSM610", "VOX_ADPCM",
                            "G721_32", "G723_24", "G723_40", "NMS_ADPCM_16", "NMS_ADPCM_24", "NMS_ADPCM_32",
                            "DWVW_12", "DWVW_16", "DWVW_24", "DWVW_N", "DPCM_8", "DPCM_16", "VORBIS", "OPUS",
                            "MPEG_LAYER_I", "MPEG_LAYER_II", "MPEG_LAYER_III"})
# One step of each integer PCM encoding in full-scale units.
_QUANTUM_FS = {"PCM_16": 2.0 ** -15, "PCM_24": 2.0 ** -23, "PCM_32": 2.0 ** -31}


def declared_frames(path: Path, file_format: str) -> int | None:
    """The frame count an AIFF or W64 header declares (libsndfile reports what the file holds)."""
    import struct
    try:
        with open(path, "rb") as fh:
            head = fh.read(1 << 16)
    except OSError:
        return None
    if file_format == "AIFF" and head[:4] == b"FORM":
        at = head.find(b"COMM", 12)
        if at >= 0 and at + 14 <= len(head):
            return int(struct.unpack(">I", head[at + 10:at + 14])[0])
    if file_format == "W64" and head[:4] == b"riff":
        fmt_at, data_at = head.find(b"fmt "), head.find(b"data")
        if fmt_at >= 0 and data_at >= 0 and data_at + 24 <= len(head) and fmt_at + 40 <= len(head):
            block_align = struct.unpack("<H", head[fmt_at + 24 + 12:fmt_at + 24 + 14])[0]
            data_bytes = struct.unpack("<Q", head[data_at + 16:data_at + 24])[0] - 24
            return int(data_bytes // block_align) if block_align else None
    return None


def _soundfile():
    # soundfile is a core dependency; imported here to keep `benchnf --help` fast.
    from .._optional import require
    return require("soundfile", extra=None, purpose="reading audio captures")


def _direct_layout(info: Any, layout: WavLayout | None) -> WavLayout | None:
    """The layout if numpy can read the samples directly and libsndfile agrees with the header."""
    if layout is None or layout.declared_bytes is None or libsndfile_subtype(layout) != info.subtype:
        return None
    if (layout.channels, layout.sample_rate) != (info.channels, info.samplerate):
        return None
    if layout.declared_bytes // layout.block_align != info.frames:
        return None
    return layout


def open_capture(path: str | Path, *, channel: int | None = None, condition: str | None = None,
                 volts_per_fs: float | None = None, accept_dropouts: bool = False) -> Capture:
    """Open an audio capture file for block-wise reading.

    Parameters
    ----------
    path : str or pathlib.Path
        A WAV, FLAC, AIFF, W64, RF64 or CAF file.
    channel : int, optional
        Zero-based channel; default the sidecar's ``channel`` or 0.
    condition : str, optional
        The role the caller gives it; must agree with the sidecar's, if any.
    volts_per_fs : float, optional
        Calibration; overrides the sidecar's ``volts_per_fs``.
    accept_dropouts : bool
        Use a capture whose sidecar records dropouts (refused otherwise).

    Returns
    -------
    Capture

    Raises
    ------
    CaptureError
        The file is missing, unreadable, empty, or its sidecar disagrees.
    """
    sf = _soundfile()
    path = Path(path)
    if not path.is_file():
        raise CaptureError(f"{path}: no such file")
    try:
        info = sf.info(str(path))
    except RuntimeError as err:  # soundfile.LibsndfileError derives from RuntimeError
        raise CaptureError(f"{path} cannot be read as audio ({err}); give a complete WAV, FLAC "
                           f"or AIFF file") from err
    if info.frames <= 0:
        hint = (" If it is a recording that was cut off, 'benchnf recover' rescues its samples"
                if path.suffix.lower() in (".wav", ".rf64") else "")
        raise CaptureError(f"{path} holds no samples (its header says so): record it again.{hint}")
    if info.subtype in LOSSY_SUBTYPES:
        raise CaptureError(f"{path} is encoded as {info.subtype_info} ({info.subtype}), a lossy or companded "
                           f"encoding whose own noise and shaping falsify a noise measurement: record or "
                           f"convert from the original as 16/24-bit PCM or float (WAV, FLAC, AIFF)")
    declared = declared_frames(path, info.format)
    if declared is not None and declared > info.frames:
        raise CaptureError(f"{path} is truncated: its header promises {declared} frames but the file holds "
                           f"{info.frames}; copy it again or record it again")
    # libsndfile quietly shortens a truncated WAV to what is there, so its header is judged here.
    layout = read_wav_layout(path)
    missing = layout.shortfall_bytes if layout is not None else 0
    if missing:
        raise CaptureError(f"{path} is truncated: its header promises {missing} more bytes of "
                           f"samples than the file holds; copy it again or record it again")
    meta = read_sidecar(path)
    if meta.get("dropouts") and not accept_dropouts:
        raise CaptureError(f"{path.name} was recorded with dropouts ({meta.get('input_overflows', 0)} overflows, "
                           f"{meta.get('clock_mismatch_frames', 0)} frames off the clock): record it again, or "
                           f"give --accept-dropouts to use it anyway")
    side_condition = meta.get("condition")
    if condition is not None and side_condition is not None and side_condition != condition:
        raise CaptureError(f"{path.name} is given as a {condition!r} capture but its sidecar says "
                           f"{side_condition!r}: check which file is which")
    if channel is None:
        channel = int(meta.get("channel", 0))
    if not 0 <= channel < info.channels:
        raise CaptureError(f"{path.name} has {info.channels} channel(s), numbered from 0; channel {channel} does not "
                           f"exist: choose one with --channel (0 to {info.channels - 1}) or the sidecar's channel")
    if volts_per_fs is None:
        from .sidecar import sidecar_volts_per_fs
        volts_per_fs = sidecar_volts_per_fs(meta, channel)
    n_frames = int(info.frames)

    direct = _direct_layout(info, layout)
    return Capture(float(info.samplerate), n_frames, channel, int(info.channels), volts_per_fs,
                   condition or side_condition, meta, path, quantum_fs=_QUANTUM_FS.get(info.subtype),
                   _reader=_library_reader(path, n_frames) if direct is None else _direct_reader(path, direct, n_frames))


def _direct_reader(path: Path, layout: WavLayout, n_frames: int) -> Any:
    """Blocks of an uncompressed WAV/RF64 decoded by numpy, from any frame."""
    def reader(block_frames: int, ch: int | list[int], into: BlockSink | None, first: int,
               stop: int) -> Iterator[NDArray[np.float64]]:
        try:
            yield from iter_channel_blocks(path, layout, stop - first, ch, block_frames, into, first_frame=first)
        except EOFError as err:
            raise CaptureError(f"{path} is truncated: its header promises {n_frames} frames but "
                               f"only {err} could be read; record it again") from err
    return reader


def _library_reader(path: Path, n_frames: int) -> Any:
    """Blocks of any file libsndfile reads, from any frame."""
    sf = _soundfile()

    def reader(block_frames: int, ch: int | list[int], into: BlockSink | None, first: int,
               stop: int) -> Iterator[NDArray[np.float64]]:
        got = first
        try:
            with sf.SoundFile(str(path)) as fh:
                if first:
                    fh.seek(first)
                while got < stop:
                    data = fh.read(min(block_frames, stop - got), dtype="float64", always_2d=True)
                    if data.shape[0] == 0:
                        break
                    got += data.shape[0]
                    yield deliver(np.ascontiguousarray(data[:, ch]), into)
        except RuntimeError as err:
            raise CaptureError(f"{path} could not be read to the end ({err}): the file is "
                               f"damaged; record it again") from err
        if got < stop:
            raise CaptureError(f"{path} is truncated: its header promises {n_frames} frames but "
                               f"only {got} could be read; record it again")
    return reader
