"""Reading a capture once into its Welch spectrum and its integrity statistics.

The one loop every noise analysis runs over a file: each block is decoded straight into the
spectrum's buffer (:meth:`benchnf.capture.Capture.blocks` with ``into``), counted for
clipping, silence and damage, and reported to a progress callback.

A long capture is read in as many parts as the machine has cores (two threads on two cores): each part
covers whole Welch segments and counts only its own samples, and the parts' sums are added, so the result
is the single pass's to rounding. Decoding, the FFTs and the sums release the GIL, so threads share the work
(measured: two parts on two cores 1.7 times one; benchmarks/bench_startup.py).
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Iterator
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from .capture import Capture, SampleStats
from .dsp.spectrum import WelchAccumulator

if TYPE_CHECKING:
    from .dsp.cross import CrossAccumulator

__all__ = ["stream_spectrum", "stream_cross", "PARALLEL_MIN_SEGMENTS"]

#: Segments below which a capture is read in one part (the split would cost more than it saves).
PARALLEL_MIN_SEGMENTS = 512


def _parts(capture: Capture, segment_length: int, hop: int) -> list[tuple[int, int, int]]:
    """(first frame, last frame read, last frame counted) of each part: whole segments, the parts' counted
    frames adjoining and covering the capture."""
    n_frames = capture.n_frames
    n_seg = (n_frames - segment_length) // hop + 1 if n_frames >= segment_length else 0
    workers = min(os.cpu_count() or 1, 2) if n_seg >= PARALLEL_MIN_SEGMENTS and n_frames else 1
    edges = [round(k * n_seg / workers) for k in range(workers + 1)]
    parts = []
    for k in range(workers):
        first = edges[k] * hop
        last = edges[k + 1] * hop if k < workers - 1 else n_frames
        read_to = (edges[k + 1] - 1) * hop + segment_length if k < workers - 1 else n_frames
        parts.append((first, read_to, last))
    return parts


def _in_parallel(run: Callable[[int], None], n_parts: int) -> None:
    """Run ``run(k)`` for every part, part 0 in this thread, the others in their own; re-raise the first
    error in this thread."""
    errors: list[BaseException] = []

    def guarded(k: int) -> None:
        try:
            run(k)
        except BaseException as err:  # handed to the caller's thread below
            errors.append(err)
    threads = [threading.Thread(target=guarded, args=(k,), name=f"benchnf-part-{k}") for k in range(1, n_parts)]
    for t in threads:
        t.start()
    guarded(0)
    for t in threads:
        t.join()
    if errors:
        raise errors[0]


def _one_part(capture: Capture, acc: WelchAccumulator, stats: SampleStats, first: int, read_to: int,
              counted_to: int, progress: Callable[[int], None] | None) -> None:
    acc.expect(read_to - first)
    at = first
    for block in capture.blocks(into=acc.reserve, start=first, stop=read_to):
        own = block[: max(0, counted_to - at)]
        stats.update(own)
        acc.commit(block.size)
        at += block.size
        if progress is not None:
            progress(own.size)


def stream_spectrum(capture: Capture, *, segment_length: int, window: str = "hann",
                    progress: Callable[[int], None] | None = None,
                    energy: bool = True) -> tuple[WelchAccumulator, SampleStats]:
    """Welch accumulator and sample statistics of a whole capture, filled in one pass.

    Both are returned unchecked, so that the caller can judge the samples (e.g.
    :meth:`SampleStats.check_noise`) before taking :meth:`WelchAccumulator.result`.
    `energy` keeps the statistics' sum of squares (its RMS level); a caller that needs no
    level saves a pass over the samples without it.
    """
    def fresh() -> tuple[WelchAccumulator, SampleStats]:
        return (WelchAccumulator(sample_rate_hz=capture.sample_rate_hz, segment_length=segment_length, window=window),
                SampleStats(label=capture.label, energy=energy))
    acc, stats = fresh()
    parts = _parts(capture, segment_length, acc.hop)
    if len(parts) == 1:
        _one_part(capture, acc, stats, *parts[0], progress)
        return acc, stats
    lock = threading.Lock()

    def tick(n: int) -> None:
        if progress is not None:
            with lock:
                progress(n)
    workers = [fresh() for _ in parts]
    _in_parallel(lambda k: _one_part(capture, *workers[k], *parts[k], tick), len(parts))
    for part_acc, part_stats in workers:
        acc.merge(part_acc)
        stats.merge(part_stats)
    return acc, stats


def _both_channels(x: Capture, y: Capture, start: int, stop: int,
                   reserve: Callable[[int], NDArray[np.floating]]) -> Iterator[NDArray[np.floating]]:
    """(frames, 2) blocks of both channels, written into ``reserve(frames)``: from one read of the file when
    they are two channels of one recording."""
    if x.path is not None and x.path == y.path and x.n_channels == y.n_channels:
        yield from x.frame_blocks((x.channel, y.channel), start=start, stop=stop, into=reserve)
        return
    for bx, by in zip(x.blocks(start=start, stop=stop), y.blocks(start=start, stop=stop)):
        into = reserve(bx.size)
        into[:, 0], into[:, 1] = bx, by
        yield into


def stream_cross(x: Capture, y: Capture, *, segment_length: int,
                 progress: Callable[[int], None] | None = None) -> tuple["CrossAccumulator", SampleStats, SampleStats]:
    """The cross-spectrum accumulator of two channels of one recording (equally long, one sample rate),
    with each channel's sample statistics, filled in one pass (in parts on two cores for a long capture)."""
    from .dsp.cross import CrossAccumulator
    if x.n_frames != y.n_frames or x.sample_rate_hz != y.sample_rate_hz:
        from .errors import CaptureError
        raise CaptureError(f"the two channels differ in length or sample rate ({x.label}: {x.n_frames} frames at "
                           f"{x.sample_rate_hz:g} Hz, {y.label}: {y.n_frames} at {y.sample_rate_hz:g} Hz): take "
                           f"both from one recording")

    def fresh() -> tuple[CrossAccumulator, SampleStats, SampleStats]:
        return (CrossAccumulator(sample_rate_hz=x.sample_rate_hz, segment_length=segment_length),
                SampleStats(label=f"{x.label} channel {x.channel}", energy=False),
                SampleStats(label=f"{y.label} channel {y.channel}", energy=False))
    first = fresh()
    parts = _parts(x, segment_length, first[0].hop)
    workers = [first] + [fresh() for _ in parts[1:]]
    lock = threading.Lock()

    def one(k: int) -> None:
        acc, sx, sy = workers[k]
        start, read_to, counted_to = parts[k]
        acc.expect(read_to - start)
        at = start
        for both in _both_channels(x, y, start, read_to, acc.reserve):
            keep = max(0, counted_to - at)
            SampleStats.update_columns(both[:keep], (sx, sy))
            acc.commit(both.shape[0])
            at += both.shape[0]
            if progress is not None:
                with lock:
                    progress(min(keep, both.shape[0]))
    _in_parallel(one, len(parts))
    acc, sx, sy = workers[0]
    for part_acc, part_x, part_y in workers[1:]:
        acc.merge(part_acc)
        sx.merge(part_x)
        sy.merge(part_y)
    return acc, sx, sy
