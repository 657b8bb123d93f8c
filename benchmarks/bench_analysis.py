"""A whole gain-method analysis read from 24-bit 96 kHz WAV files, on one core.

Targets: at least 800x real time (capture seconds per wall second), and at least 3x faster than
loading each file whole and calling scipy.signal.welch on it.  Decoding alone is measured as the
ceiling, both by libsndfile (soundfile) and by benchnf's own numpy reader of uncompressed WAV (which
the analysis uses).  Prints figures; asserts nothing.  The captures are seeded synthetic noise (INVENTED DATA).
Run: python benchmarks/bench_analysis.py [--seconds 60] [--segment N]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from _common import pin_one_core, write_noise_wav  # first: BLAS threads before numpy loads

import numpy as np  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seconds", type=float, default=60.0, help="length of each noise capture")
    ap.add_argument("--segment", type=int, default=None, help="Welch segment (default: benchnf's)")
    args = ap.parse_args()
    pin_one_core()
    import soundfile as sf
    from scipy import signal

    from benchnf.measure import GainSetup, analyze_gain_method
    from benchnf.dsp.spectrum import default_segment_length
    from benchnf.io import open_capture

    fs = 96_000
    seg = args.segment or default_segment_length(fs)
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        files = {name: write_noise_wav(d / f"{name}.wav", seconds=args.seconds, rms_fs=rms, seed=i)
                 for i, (name, rms) in enumerate((("floor", 1e-4), ("terminated", 1e-3),
                                                  ("shorted", 6e-4)))}
        tone = write_noise_wav(d / "tone.wav", seconds=3.0, rms_fs=1e-4, seed=9, tone_hz=1000.0)
        noise_seconds = 3 * args.seconds

        def decode_only():
            for p in files.values():
                with sf.SoundFile(p) as fh:
                    for _ in fh.blocks(1 << 16, dtype="float64"):
                        pass

        def decode_numpy():
            for p in files.values():
                for _ in open_capture(p).blocks():
                    pass

        def benchnf_analysis():
            cap = lambda name, cond: open_capture(files[name], condition=cond, volts_per_fs=2.0)  # noqa: E731
            return analyze_gain_method(
                terminated=cap("terminated", "terminated"), floor=cap("floor", "floor"),
                shorted=cap("shorted", "shorted"),
                gain=GainSetup(tone=open_capture(tone, volts_per_fs=2.0), tone_input_vrms=1e-3),
                rs_ohm=150.0, segment_length=seg)

        def load_whole_and_welch():
            for p in files.values():
                x, rate = sf.read(p, dtype="float64")
                signal.welch(x, fs=rate, nperseg=seg)

        results = {}
        for name, fn in (("decode only (libsndfile)", decode_only), ("decode only (benchnf)", decode_numpy),
                         ("benchnf analysis", benchnf_analysis),
                         ("load whole + scipy welch", load_whole_and_welch)):
            fn()  # warm the page cache
            best = np.inf
            for _ in range(5):
                t0 = time.perf_counter()
                fn()
                best = min(best, time.perf_counter() - t0)
            results[name] = best
            print(f"{name:26s} {best:7.3f} s  {noise_seconds / best:7.0f}x real time")
    analysis = results["benchnf analysis"]
    print(f"segment {seg} samples ({fs / seg:.2f} Hz bins), 3 x {args.seconds:g} s at {fs} Hz, 24-bit WAV, "
          f"one core")
    print(f"benchnf analysis vs load whole + scipy welch: "
          f"{results['load whole + scipy welch'] / analysis:.2f}x faster (target >= 3x)")
    print(f"benchnf analysis: {noise_seconds / analysis:.0f}x real time (target >= 800x; decoding alone "
          f"{noise_seconds / results['decode only (libsndfile)']:.0f}x by libsndfile, "
          f"{noise_seconds / results['decode only (benchnf)']:.0f}x by benchnf's WAV reader)")


if __name__ == "__main__":
    main()
