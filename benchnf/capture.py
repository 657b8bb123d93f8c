"""The Capture: samples in full-scale units plus everything needed to interpret them.

A capture is read in blocks, so that a long recording never has to be held
in memory.  It is made from a file by :func:`benchnf.io.open_capture` or
from an array by :meth:`Capture.from_array`.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import CalibrationError, CaptureError, ParameterError

__all__ = ["CONDITIONS", "Capture", "SampleStats", "CLIP_LEVEL_FS", "BlockSink", "deliver"]

#: Measurement conditions a capture can be made under (see docs/method.md).
CONDITIONS = ("floor", "shorted", "terminated", "tone", "hot", "cold", "tap", "reference")

#: A sample whose magnitude reaches this is counted as clipped.  It lies just
#: below the largest positive 16-bit code, 32767/32768, so that integer files
#: of any width are caught at their rails.
CLIP_LEVEL_FS = 0.99996

#: Frames folded into one row by :meth:`SampleStats.update_columns`.
_FOLD_FRAMES = 2048

DEFAULT_BLOCK_FRAMES = 1 << 16

#: Gives a writable float64 array of the requested length for the next block (see Capture.blocks).
BlockSink = Callable[[int], NDArray[np.float64]]


def deliver(values: NDArray[np.float64], into: BlockSink | None) -> NDArray[np.float64]:
    """`values` written into the array `into` gives (or `values` itself without a sink)."""
    if into is None:
        return values
    out = into(values.shape[0])
    out[...] = values
    return out


def check_condition(condition: str | None) -> str | None:
    """Return `condition` if it is one of :data:`CONDITIONS` (or None), else raise."""
    if condition is not None and condition not in CONDITIONS:
        raise ParameterError(f"condition {condition!r} is not one of {', '.join(CONDITIONS)}")
    return condition


@dataclass(frozen=True)
class Capture:
    """One channel of a recording, with its sample rate, calibration and condition.

    Attributes
    ----------
    sample_rate_hz : float
        Sample rate in Hz.
    n_frames : int
        Number of samples in the channel.
    channel : int
        Zero-based channel of the source this capture reads.
    n_channels : int
        Number of channels in the source.
    volts_per_fs : float or None
        The voltage that a sample value of 1.0 represents at the analyzer
        input (peak volts); None when uncalibrated.
    condition : str or None
        One of :data:`CONDITIONS`.
    metadata : Mapping
        Free metadata (from the sidecar JSON next to a file).
    path : pathlib.Path or None
        The file it came from, if any.
    quantum_fs : float or None
        One step of the file's integer sample format in full-scale units (``2**-(bits-1)``);
        None for float formats and arrays.
    """

    sample_rate_hz: float
    n_frames: int
    channel: int
    n_channels: int
    volts_per_fs: float | None = None
    condition: str | None = None
    metadata: Mapping[str, Any] = field(default_factory=dict)
    path: Path | None = None
    quantum_fs: float | None = None
    # (block frames, channel or list of channels, sink, first frame, stop frame): blocks of one channel, or of
    # several as (frames, channels)
    _reader: Callable[[int, Any, BlockSink | None, int, int], Iterator[NDArray[np.float64]]] | None = field(
        default=None, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not (math.isfinite(self.sample_rate_hz) and self.sample_rate_hz > 0):
            raise ParameterError(f"sample_rate_hz={self.sample_rate_hz!r} must be a positive number")
        if not 0 <= self.channel < self.n_channels:
            raise ParameterError(
                f"channel {self.channel} does not exist: the capture has {self.n_channels} "
                f"channel(s), numbered from 0")
        if self.volts_per_fs is not None and not (math.isfinite(self.volts_per_fs)
                                                  and self.volts_per_fs > 0):
            raise CalibrationError(f"volts_per_fs={self.volts_per_fs!r} must be a positive number")
        check_condition(self.condition)
        object.__setattr__(self, "metadata", MappingProxyType(dict(self.metadata)))

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_array(cls, samples_fs: ArrayLike, *, sample_rate_hz: float, channel: int = 0,
                   volts_per_fs: float | None = None, condition: str | None = None,
                   metadata: Mapping[str, Any] | None = None) -> "Capture":
        """Make a capture from samples in full-scale units, shape (n,) or (n, channels)."""
        data = np.asarray(samples_fs, dtype=np.float64)
        if data.ndim == 1:
            data = data[:, None]
        if data.ndim != 2:
            raise ParameterError(f"samples must be 1-D or 2-D (frames, channels), got shape {data.shape}")
        data = data.copy()
        data.setflags(write=False)

        def reader(block_frames: int, ch: int | list[int], into: BlockSink | None, first: int,
                   stop: int) -> Iterator[NDArray[np.float64]]:
            for start in range(first, stop, block_frames):
                yield deliver(data[start:min(start + block_frames, stop), ch], into)

        return cls(float(sample_rate_hz), int(data.shape[0]), int(channel), int(data.shape[1]),
                   volts_per_fs, condition, dict(metadata or {}), None, _reader=reader)

    def replace(self, **changes: Any) -> "Capture":
        """Return a copy with some fields changed (e.g. ``volts_per_fs``, ``channel``)."""
        return dataclasses.replace(self, **changes)

    def window(self, start: int, stop: int) -> "Capture":
        """Frames `start` to `stop` as a capture of their own (a state of a switched recording)."""
        if not 0 <= start < stop <= self.n_frames:
            raise ParameterError(f"frames {start} to {stop} lie outside {self.label} ({self.n_frames} frames)")
        parent = self._reader
        if parent is None:
            raise CaptureError(f"{self.label} has no samples attached")

        def reader(block_frames: int, ch: int | list[int], into: BlockSink | None, first: int,
                   last: int) -> Iterator[NDArray[np.float64]]:
            return parent(block_frames, ch, into, first + start, last + start)

        return dataclasses.replace(self, n_frames=stop - start, _reader=reader)

    # -- reading --------------------------------------------------------------------
    @property
    def duration_s(self) -> float:
        """Length in seconds."""
        return self.n_frames / self.sample_rate_hz

    @property
    def label(self) -> str:
        """A short name for messages: the file name, or the condition."""
        if self.path is not None:
            return self.path.name
        return f"{self.condition or 'array'} capture"

    def blocks(self, block_frames: int = DEFAULT_BLOCK_FRAMES, *, channel: int | None = None,
               into: BlockSink | None = None, start: int = 0, stop: int | None = None
               ) -> Iterator[NDArray[np.float64]]:
        """Yield the samples of one channel (default: this capture's) in float64 blocks, from frame
        `start` up to `stop` (default the end).

        With `into`, each block is written into the array ``into(n)`` returns (e.g.
        :meth:`benchnf.dsp.spectrum.WelchAccumulator.reserve`) and that array is yielded, so
        a file's samples are decoded straight to where they are used; without it, each
        block is a new array (or a read-only view of the capture's own array).
        """
        ch = self.channel if channel is None else channel
        if not 0 <= ch < self.n_channels:
            raise ParameterError(f"channel {ch} does not exist in {self.label} "
                                 f"({self.n_channels} channel(s), numbered from 0)")
        return self._read(block_frames, ch, into, start, stop)

    def frame_blocks(self, channels: Sequence[int], block_frames: int = DEFAULT_BLOCK_FRAMES, *, start: int = 0,
                     stop: int | None = None, into: Callable[[int], NDArray[Any]] | None = None
                     ) -> Iterator[NDArray[Any]]:
        """Yield several channels of the recording together, blocks of shape (frames, len(channels)), from
        one read of the recording (where :meth:`blocks` reads it once per channel). With `into`, each block
        is written into the (frames, channels) array ``into(frames)`` gives (float64 or float32) and that
        array is yielded."""
        chans = [int(c) for c in channels]
        if not chans or any(not 0 <= c < self.n_channels for c in chans):
            raise ParameterError(f"channels {chans} do not all exist in {self.label} ({self.n_channels} channel(s), "
                                 f"numbered from 0)")
        return self._read(block_frames, chans, into, start, stop)

    def _read(self, block_frames: int, channels: int | list[int], into: Any, start: int,
              stop: int | None) -> Iterator[NDArray[Any]]:
        if self._reader is None:
            raise CaptureError(f"{self.label} has no samples attached")
        stop = self.n_frames if stop is None else min(int(stop), self.n_frames)
        if not 0 <= start <= stop:
            raise ParameterError(f"frames {start} to {stop} lie outside {self.label} ({self.n_frames} frames)")
        return self._reader(int(block_frames), channels, into, int(start), stop)

    def read(self, *, channel: int | None = None, max_frames: int | None = None) -> NDArray[np.float64]:
        """Return the samples of one channel as one array (at most `max_frames`)."""
        parts: list[NDArray[np.float64]] = []
        n = 0
        limit = self.n_frames if max_frames is None else min(self.n_frames, int(max_frames))
        for block in self.blocks(channel=channel):
            parts.append(block[: limit - n])
            n += parts[-1].size
            if n >= limit:
                break
        return np.concatenate(parts) if parts else np.zeros(0)

    def volts_per_fs_or_raise(self, purpose: str) -> float:
        """Return the calibration, or raise a CalibrationError saying how to supply one."""
        if self.volts_per_fs is None:
            raise CalibrationError(
                f"{self.label} is not calibrated, and {purpose} needs volts: give "
                f"--volts-per-fs V or --calibration cal.json (make one with 'benchnf calibrate')")
        return self.volts_per_fs


@dataclass
class SampleStats:
    """Running statistics of a capture's samples, for integrity checks.

    Feed every block with :meth:`update`; then :meth:`check_noise` or
    :meth:`check_tone` raise a :class:`CaptureError` for a capture that is
    clipped, silent or not finite.  With ``energy=False`` the sum of squares
    (for :attr:`rms_fs`) is not kept, which saves a pass over the samples.
    """

    label: str = "capture"
    energy: bool = True
    n: int = 0
    sum_sq_fs2: float = 0.0
    peak_fs: float = 0.0
    n_clipped: int = 0
    n_nonfinite: int = 0

    def merge(self, other: "SampleStats") -> None:
        """Add what another part of the same capture counted (parts read in parallel)."""
        self.n += other.n
        self.sum_sq_fs2 += other.sum_sq_fs2
        self.peak_fs = max(self.peak_fs, other.peak_fs)
        self.n_clipped += other.n_clipped
        self.n_nonfinite += other.n_nonfinite

    def update(self, block: NDArray[np.floating], extremes: tuple[float, float] | None = None) -> None:
        """Add one block of samples (float64, or float32 as a single-precision stream keeps them); its
        (largest, smallest) sample when the caller has them already (:meth:`update_columns`)."""
        if block.size == 0:
            return
        high, low = extremes if extremes is not None else (float(block.max()), float(block.min()))
        peak = max(high, -low)
        if not math.isfinite(peak):  # a NaN carries through max and min; an infinity is its own peak
            finite = np.isfinite(block)
            self.n_nonfinite += int(block.size - np.count_nonzero(finite))
            block = block[finite]
            if block.size == 0:
                return
            peak = max(float(block.max()), -float(block.min()))
        self.n += block.size
        if self.energy:
            self.sum_sq_fs2 += float(np.dot(block, block))
        self.peak_fs = max(self.peak_fs, peak)
        if peak >= CLIP_LEVEL_FS:
            self.n_clipped += int(np.count_nonzero(np.abs(block) >= CLIP_LEVEL_FS))

    @staticmethod
    def update_columns(block: NDArray[np.floating], stats: Sequence["SampleStats"]) -> None:
        """Add a C-contiguous (frames, channels) block, column j to ``stats[j]``.

        The columns' extremes come from contiguous passes: the frames are folded into wide rows whose
        elementwise extremes numpy takes with vector instructions (a column's own reduction steps through
        memory one sample at a time: measured 3.5 times slower on stereo blocks here).
        """
        high, low = _column_extremes(block)
        for j, st in enumerate(stats):
            st.update(block[:, j], (float(high[j]), float(low[j])))

    @property
    def rms_fs(self) -> float:
        """RMS of the samples (mean included) in full-scale units; NaN unless `energy` was kept."""
        if not self.energy:
            return math.nan
        return math.sqrt(self.sum_sq_fs2 / self.n) if self.n else 0.0

    def _check_common(self) -> None:
        if self.n_nonfinite:
            raise CaptureError(f"{self.label} holds {self.n_nonfinite} NaN or infinite samples: "
                               f"the file is damaged; record it again")
        if self.n == 0:
            raise CaptureError(f"{self.label} is empty: record it again")
        if self.peak_fs == 0.0:
            raise CaptureError(f"{self.label} is silent (every sample is zero): check that the "
                               f"input is connected, unmuted and the right channel is chosen")

    def check_noise(self) -> None:
        """Raise unless the samples are fit for noise analysis (none clipped)."""
        self._check_common()
        if self.n_clipped:
            raise CaptureError(
                f"{self.label} is clipped ({self.n_clipped} samples at full scale, "
                f"{100.0 * self.n_clipped / self.n:.3g} %): noise analysis refused; lower the "
                f"input gain and record it again")

    def check_tone(self) -> None:
        """Raise unless the samples are fit for a tone level (none clipped)."""
        self._check_common()
        if self.n_clipped:
            raise CaptureError(
                f"{self.label} is clipped ({self.n_clipped} samples at full scale): the tone "
                f"level would be wrong; lower the tone or the input gain and record it again")


def _column_extremes(block: NDArray[np.floating]) -> tuple[NDArray[np.floating], NDArray[np.floating]]:
    """Each column's largest and smallest value (NaN where a column holds one) of a C-contiguous 2-D block,
    from frames folded into wide rows (see :meth:`SampleStats.update_columns`)."""
    frames, width = block.shape
    whole = frames - frames % _FOLD_FRAMES
    wide, rest = block[:whole].reshape(-1, _FOLD_FRAMES * width), block[whole:]
    out = []
    for reduce, start in ((np.maximum, -np.inf), (np.minimum, np.inf)):
        folded = reduce.reduce(wide, axis=0, initial=start)
        columns = np.array([reduce.reduce(folded[j::width], initial=start) for j in range(width)])
        out.append(reduce(columns, reduce.reduce(rest, axis=0, initial=start)))
    return out[0], out[1]
