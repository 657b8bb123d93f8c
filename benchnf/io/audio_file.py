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

__all__ = ["open_capture", "AUDIO_SUFFIXES"]

AUDIO_SUFFIXES = (".wav", ".flac", ".aif", ".aiff", ".w64", ".rf64", ".caf")


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
        raise CaptureError(f"{path} holds no samples: record it again")
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
        raise CaptureError(f"{path.name} has {info.channels} channel(s), numbered from 0; "
                           f"channel {channel} does not exist")
    if volts_per_fs is None:
        volts_per_fs = meta.get("volts_per_fs")
    n_frames = int(info.frames)

    direct = _direct_layout(info, layout)

    def direct_reader(block_frames: int, ch: int, into: BlockSink | None) -> Iterator[NDArray[np.float64]]:
        try:
            yield from iter_channel_blocks(path, direct, n_frames, ch, block_frames, into)
        except EOFError as err:
            raise CaptureError(f"{path} is truncated: its header promises {n_frames} frames but "
                               f"only {err} could be read; record it again") from err

    def reader(block_frames: int, ch: int, into: BlockSink | None) -> Iterator[NDArray[np.float64]]:
        got = 0
        try:
            with sf.SoundFile(str(path)) as fh:
                while True:
                    data = fh.read(block_frames, dtype="float64", always_2d=True)
                    if data.shape[0] == 0:
                        break
                    got += data.shape[0]
                    yield deliver(np.ascontiguousarray(data[:, ch]), into)
        except RuntimeError as err:
            raise CaptureError(f"{path} could not be read to the end ({err}): the file is "
                               f"damaged; record it again") from err
        if got < n_frames:
            raise CaptureError(f"{path} is truncated: its header promises {n_frames} frames but "
                               f"only {got} could be read; record it again")

    return Capture(float(info.samplerate), n_frames, channel, int(info.channels), volts_per_fs,
                   condition or side_condition, meta, path,
                   reader if direct is None else direct_reader)
