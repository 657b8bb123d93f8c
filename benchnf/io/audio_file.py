"""WAV, FLAC and AIFF captures through soundfile (libsndfile), read in blocks."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from ..capture import Capture
from ..errors import CaptureError
from .sidecar import read_sidecar

__all__ = ["open_capture", "AUDIO_SUFFIXES"]

AUDIO_SUFFIXES = (".wav", ".flac", ".aif", ".aiff", ".w64", ".rf64", ".caf")


def _soundfile():
    # soundfile is a core dependency; imported here to keep `benchnf --help` fast.
    from .._optional import require
    return require("soundfile", extra=None, purpose="reading audio captures")


def _wav_data_shortfall(path: Path) -> int | None:
    """Bytes missing from a RIFF/WAVE file's data chunk (0 if complete; None if not a RIFF WAV).

    libsndfile quietly shortens a truncated WAV to what is there, so the header
    is read here: a data chunk that declares more bytes than the file holds is
    a truncated recording.  A size of 0 or 0xFFFFFFFF (left by a recorder that
    was stopped before it could finish the header) is not judged.
    """
    import struct
    size = path.stat().st_size
    with open(path, "rb") as fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] != b"RIFF" or head[8:12] != b"WAVE":
            return None
        pos = 12
        while pos + 8 <= size:
            fh.seek(pos)
            chunk_id, chunk_size = struct.unpack("<4sI", fh.read(8))
            if chunk_id == b"data":
                if chunk_size in (0, 0xFFFFFFFF):
                    return 0
                return max(0, pos + 8 + chunk_size - size)
            pos += 8 + chunk_size + (chunk_size & 1)
    return 0


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
    missing = _wav_data_shortfall(path)
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

    def reader(block_frames: int, ch: int) -> Iterator[NDArray[np.float64]]:
        got = 0
        try:
            with sf.SoundFile(str(path)) as fh:
                while True:
                    data = fh.read(block_frames, dtype="float64", always_2d=True)
                    if data.shape[0] == 0:
                        break
                    got += data.shape[0]
                    yield np.ascontiguousarray(data[:, ch])
        except RuntimeError as err:
            raise CaptureError(f"{path} could not be read to the end ({err}): the file is "
                               f"damaged; record it again") from err
        if got < n_frames:
            raise CaptureError(f"{path} is truncated: its header promises {n_frames} frames but "
                               f"only {got} could be read; record it again")

    return Capture(float(info.samplerate), n_frames, channel, int(info.channels), volts_per_fs,
                   condition or side_condition, meta, path, reader)
