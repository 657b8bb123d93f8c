"""Streaming Welch spectrum against scipy.signal.welch on the same in-memory data (one core).

Target: at least 3x the throughput of scipy.signal.welch.  Prints figures; asserts nothing.
Run: python benchmarks/bench_spectrum.py
"""

from __future__ import annotations

from _common import best_of, pin_one_core  # first: it sets the BLAS thread count before numpy loads

import numpy as np  # noqa: E402
from scipy import signal  # noqa: E402

from benchnf.dsp.spectrum import WelchAccumulator  # noqa: E402


def main() -> None:
    pin_one_core()
    for fs, seg, seconds in ((48_000, 4096, 60), (48_000, 16384, 60), (96_000, 32768, 60)):
        x = np.random.default_rng(0).normal(0, 1e-3, fs * seconds)

        def ours():
            acc = WelchAccumulator(sample_rate_hz=fs, segment_length=seg)
            for i in range(0, x.size, 1 << 16):
                acc.update(x[i:i + (1 << 16)])
            return acc.result()

        def theirs():
            return signal.welch(x, fs=fs, nperseg=seg)

        ours(), theirs()  # warm up
        t_ours, t_theirs = best_of(ours, 7), best_of(theirs, 7)
        print(f"fs {fs} Hz, segment {seg}, {seconds} s: streaming {t_ours * 1e3:7.1f} ms "
              f"({seconds / t_ours:6.0f}x real time), scipy.signal.welch {t_theirs * 1e3:7.1f} ms; "
              f"ratio {t_theirs / t_ours:.2f}x (target >= 3x)")


if __name__ == "__main__":
    main()
