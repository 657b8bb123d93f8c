"""Helpers for the benchmarks: synthetic 24-bit captures (INVENTED DATA) and timing."""

from __future__ import annotations

import math
import os
import time
from pathlib import Path

# As the benchnf command does (benchnf.cli._one_blas_thread): one BLAS thread, set before numpy loads.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import numpy as np  # noqa: E402


def pin_one_core() -> None:
    """Run this process on one core (the targets are per core)."""
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {sorted(os.sched_getaffinity(0))[0]})


def write_noise_wav(path: Path, *, seconds: float, sample_rate_hz: int = 96_000, rms_fs: float = 1e-3,
                    seed: int = 0, tone_hz: float | None = None) -> Path:
    """A 24-bit WAV of seeded white noise (and optionally a tone), written in blocks."""
    import soundfile as sf
    rng = np.random.default_rng(seed)
    n = int(seconds * sample_rate_hz)
    block = 1 << 20
    with sf.SoundFile(path, "w", samplerate=sample_rate_hz, channels=1, subtype="PCM_24",
                      format="RF64" if n * 3 > 2 ** 31 else "WAV") as fh:
        for start in range(0, n, block):
            m = min(block, n - start)
            x = rng.normal(0.0, rms_fs, m)
            if tone_hz is not None:
                t = (start + np.arange(m)) / sample_rate_hz
                x += 0.1 * math.sqrt(2) * np.sin(2 * np.pi * tone_hz * t)
            fh.write(x)
    return path


def best_of(fn, repeat: int = 5) -> float:
    """Best wall time of `repeat` calls, in seconds."""
    best = math.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best
