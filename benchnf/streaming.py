"""Reading a capture once into its Welch spectrum and its integrity statistics.

The one loop every noise analysis runs over a file: each block is decoded straight into the
spectrum's buffer (:meth:`benchnf.capture.Capture.blocks` with ``into``), counted for
clipping, silence and damage, and reported to a progress callback.
"""

from __future__ import annotations

from collections.abc import Callable

from .capture import Capture, SampleStats
from .dsp.spectrum import WelchAccumulator

__all__ = ["stream_spectrum"]


def stream_spectrum(capture: Capture, *, segment_length: int, window: str = "hann",
                    progress: Callable[[int], None] | None = None,
                    energy: bool = True) -> tuple[WelchAccumulator, SampleStats]:
    """Welch accumulator and sample statistics of a whole capture, filled in one pass.

    Both are returned unchecked, so that the caller can judge the samples (e.g.
    :meth:`SampleStats.check_noise`) before taking :meth:`WelchAccumulator.result`.
    `energy` keeps the statistics' sum of squares (its RMS level); a caller that needs no
    level saves a pass over the samples without it.
    """
    stats = SampleStats(label=capture.label, energy=energy)
    acc = WelchAccumulator(sample_rate_hz=capture.sample_rate_hz, segment_length=segment_length,
                           window=window)
    for block in capture.blocks(into=acc.reserve):
        stats.update(block)
        acc.commit(block.size)
        if progress is not None:
            progress(block.size)
    return acc, stats
