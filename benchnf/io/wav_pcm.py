"""The layout of a WAV (RIFF or RF64) file, and its sample data read straight with numpy.

libsndfile (through soundfile) reads every format benchnf accepts, and stays the reader for
all of them but one case: uncompressed little-endian PCM or IEEE-float samples in a WAV or
RF64 file whose header agrees with what libsndfile reports.  There the samples are plain
arrays on disk, and numpy converts them about three times faster than libsndfile's per-sample
loop (24-bit PCM at 96 kHz: 19.7 ms against 61.9 ms for three minutes, measured here), which
is a third of a whole analysis.  The values are the same to the bit (the tests compare them
with soundfile for every encoding and several channel counts).

The header is read here for two more reasons: libsndfile quietly shortens a truncated file to
what is there (the data chunk's declared size tells), and a recording whose header was never
finished can still be rescued (:func:`benchnf.acquire.record.recover_wav`).
"""

from __future__ import annotations

import struct
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["WavLayout", "read_wav_layout", "decode_samples", "iter_channel_blocks",
           "libsndfile_subtype"]

_PCM, _FLOAT, _EXTENSIBLE = 1, 3, 0xFFFE
_UNFINISHED_SIZES = (0, 0xFFFFFFFF)  # left by a recorder stopped before it wrote the size

#: (format tag, bits per sample) -> (numpy dtype read, scale to full-scale float, soundfile subtype).
#: 24-bit samples are read as overlapping little-endian int32 and shifted up a byte.
_ENCODINGS = {
    (_PCM, 16): ("<i2", 2.0 ** -15, "PCM_16"),
    (_PCM, 24): ("<i4", 2.0 ** -31, "PCM_24"),
    (_PCM, 32): ("<i4", 2.0 ** -31, "PCM_32"),
    (_FLOAT, 32): ("<f4", 1.0, "FLOAT"),
    (_FLOAT, 64): ("<f8", 1.0, "DOUBLE"),
}


@dataclass(frozen=True)
class WavLayout:
    """Where a WAV file's samples lie and how they are encoded.

    Attributes
    ----------
    format_tag : int
        1 (integer PCM) or 3 (IEEE float); an extensible header's sub-format is resolved.
    channels, sample_rate, block_align, bits
        From the format chunk; `block_align` is the bytes per frame.
    data_offset : int
        Byte offset of the first sample.
    declared_bytes : int or None
        Size of the data chunk as the header states it; None when the header was never
        finished (a size of 0 or 0xFFFFFFFF).
    file_bytes : int
        Size of the file.
    """

    format_tag: int
    channels: int
    sample_rate: int
    block_align: int
    bits: int
    data_offset: int
    declared_bytes: int | None
    file_bytes: int

    @property
    def shortfall_bytes(self) -> int:
        """Bytes the header promises beyond the end of the file (0 if complete or unknown)."""
        if self.declared_bytes is None:
            return 0
        return max(0, self.data_offset + self.declared_bytes - self.file_bytes)

    @property
    def supported(self) -> bool:
        """True if :func:`decode_samples` can read this encoding."""
        return ((self.format_tag, self.bits) in _ENCODINGS and self.channels > 0
                and self.block_align == self.channels * self.bits // 8)


def read_wav_layout(path: str | Path) -> WavLayout | None:
    """Parse a RIFF/WAVE or RF64 header; None if the file is not one, or has no format or data chunk.

    References
    ----------
    .. [1] Microsoft/IBM, "Multimedia Programming Interface and Data Specifications 1.0",
           1991 (RIFF, WAVE ``fmt `` and ``data`` chunks); WAVE_FORMAT_EXTENSIBLE as in
           Microsoft's "Multiple channel audio data and WAVE files", 2001.
    .. [2] EBU Tech 3306, "RF64: An extended File Format for Audio", 2009 (the ``ds64`` chunk).
    """
    path = Path(path)
    size = path.stat().st_size
    with open(path, "rb") as fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] not in (b"RIFF", b"RF64") or head[8:12] != b"WAVE":
            return None
        rf64_data_size = None
        fmt = None
        pos = 12
        while pos + 8 <= size:
            fh.seek(pos)
            chunk_id, chunk_size = struct.unpack("<4sI", fh.read(8))
            if chunk_id == b"ds64":
                body = fh.read(min(chunk_size, 28))
                if len(body) >= 16:
                    rf64_data_size = struct.unpack("<Q", body[8:16])[0]
            elif chunk_id == b"fmt ":
                body = fh.read(min(chunk_size, 40))
                if len(body) < 16:
                    return None
                tag, channels, rate, _byte_rate, align, bits = struct.unpack("<HHIIHH", body[:16])
                if tag == _EXTENSIBLE and len(body) >= 26:
                    tag = struct.unpack("<H", body[24:26])[0]  # first two bytes of the sub-format GUID
                fmt = (tag, channels, rate, align, bits)
            elif chunk_id == b"data":
                if fmt is None:
                    return None
                declared: int | None = chunk_size
                if head[:4] == b"RF64" and chunk_size == 0xFFFFFFFF:
                    declared = rf64_data_size
                elif chunk_size in _UNFINISHED_SIZES:
                    declared = None
                tag, channels, rate, align, bits = fmt
                return WavLayout(tag, channels, rate, align, bits, pos + 8, declared, size)
            pos += 8 + chunk_size + (chunk_size & 1)
    return None


def libsndfile_subtype(layout: WavLayout) -> str | None:
    """The soundfile subtype name of this encoding (``"PCM_24"``, ...), None if not supported."""
    enc = _ENCODINGS.get((layout.format_tag, layout.bits))
    return enc[2] if enc is not None and layout.supported else None


def decode_samples(raw: bytes | bytearray | memoryview, layout: WavLayout, n_frames: int,
                   channel: int | None = None, out: NDArray[np.float64] | None = None, *,
                   native: bool = False) -> NDArray[Any]:
    """Samples of whole frames in `raw` as full-scale float64.

    Integer PCM is scaled by 2^-(bits-1), as libsndfile does, so a full-scale code reads -1.0.
    With ``native=True`` the stored values are returned unscaled instead (int16, float32, ...;
    24-bit samples as int32 holding the sample in their top three bytes), which soundfile
    writes back exactly.

    Parameters
    ----------
    raw : bytes-like
        At least ``n_frames * block_align`` bytes of the data chunk; for 24-bit samples one
        byte more is read if present (it is shifted out and never used).
    layout : WavLayout
        The file's layout (must be :attr:`WavLayout.supported`).
    n_frames : int
        Frames to decode.
    channel : int, optional
        One channel, shape (n_frames,); all channels, shape (n_frames, channels), if None.
    out : numpy.ndarray, optional
        A 1-D float64 array of all the samples decoded, to write into (a new one by default); float32 is
        taken too (exact for 16- and 24-bit samples, rounded for wider ones).
    """
    dtype, scale, _ = _ENCODINGS[(layout.format_tag, layout.bits)]
    width = layout.bits // 8
    if channel is None:
        count, offset, stride = n_frames * layout.channels, 0, width
    else:
        count, offset, stride = n_frames, channel * width, layout.block_align
    need = n_frames * layout.block_align
    buf = memoryview(raw).cast("B")
    if len(buf) < need:
        raise ValueError(f"{len(buf)} bytes hold fewer than {n_frames} frames")
    if native:
        if out is not None:
            raise ValueError("out receives full-scale float64 samples; native values come back new")
        out = np.empty(count, dtype="<i4" if layout.bits == 24 else dtype)
    elif out is None:
        out = np.empty(count)
    elif out.dtype not in (np.float64, np.float32) or out.shape != (count,):
        raise ValueError(f"out must be a 1-D float64 (or float32) array of {count} samples")
    if count == 0:
        return out if channel is not None else out.reshape(0, layout.channels)
    if layout.bits == 24:
        if len(buf) < need + 1:  # the last overlapping int32 reads one byte past the data
            padded = bytearray(need + 1)
            padded[:need] = buf[:need]
            buf = memoryview(padded)
        words = np.ndarray((count,), dtype=dtype, buffer=buf, offset=offset, strides=(stride,))
        if native:
            np.left_shift(words, 8, out=out)  # the top byte is the next sample's: shifted out
        else:
            np.multiply(np.left_shift(words, 8), scale, out=out, dtype=out.dtype)
    else:
        values = np.ndarray((count,), dtype=dtype, buffer=buf, offset=offset, strides=(stride,))
        if native:
            out[...] = values
        else:
            np.multiply(values, scale, out=out, dtype=out.dtype)
    return out if channel is not None else out.reshape(n_frames, layout.channels)


def _decode_channels(view: memoryview, layout: WavLayout, k: int, channels: list[int],
                     into: Callable[[int], NDArray[Any]] | None) -> NDArray[Any]:
    """`k` frames of the listed channels as (k, len(channels)); straight into ``into(k)`` when they are every
    channel in order."""
    every = list(range(layout.channels))
    if into is not None and channels == every:
        out = into(k)
        decode_samples(view, layout, k, None, out.reshape(-1))
        return out
    picked = decode_samples(view, layout, k)
    picked = picked if channels == every else picked[:, channels]
    if into is None:
        return picked
    out = into(k)
    out[...] = picked
    return out


def iter_channel_blocks(path: str | Path, layout: WavLayout, n_frames: int, channel: int | list[int],
                        block_frames: int, into: Callable[[int], NDArray[np.float64]] | None = None,
                        *, first_frame: int = 0) -> Iterator[NDArray[np.float64]]:
    """Yield one channel (or a list of channels, as (frames, channels) blocks) of `n_frames` frames from
    `first_frame` in blocks of `block_frames`.

    Each block is decoded into ``into(k)`` when given (and that array yielded), else into a
    new array.

    Raises
    ------
    EOFError
        The file ends before `n_frames` frames (the caller words the message).
    """
    align = layout.block_align
    block_frames = max(1, int(block_frames))
    raw = bytearray(block_frames * align + 1)
    view = memoryview(raw)
    with open(path, "rb") as fh:
        fh.seek(layout.data_offset + int(first_frame) * align)
        left = int(n_frames)
        while left > 0:
            k = min(block_frames, left)
            got = fh.readinto(view[:k * align])
            if got < k * align:
                raise EOFError(f"{n_frames - left + got // align} of {n_frames} frames")
            if isinstance(channel, list):  # several channels: every one decoded, the wanted ones kept
                yield _decode_channels(view, layout, k, channel, into)
            else:
                yield decode_samples(view, layout, k, channel, None if into is None else into(k))
            left -= k
