"""Two-channel cross-spectrum throughput (printed, not asserted): benchnf's streamed estimate of a stereo
96 kHz 24-bit WAV (seeded noise, INVENTED DATA) against scipy.signal.csd on the whole file loaded, side by
side in one run. Target (issue 21): at least 1000 times real time on 2 cores, an hour in under 4 s.

Two timings: in-process, the estimate alone (open, decode, both channels' Welch sums, cross sums); and the
whole process of `benchnf analyze --cross` on the same file (start-up, imports, the estimate and every figure
after it), which the target is about. Peak memory is the in-process run's.
Run: python benchmarks/bench_cross.py [--minutes 10] [--segment 32768]
"""

from __future__ import annotations

import argparse
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
import _common  # noqa: E402,F401  (one BLAS thread)


def _stereo_wav(path: Path, seconds: float, fs: int) -> Path:
    import soundfile as sf
    rng = np.random.default_rng(5)
    n, block = int(seconds * fs), 1 << 20
    with sf.SoundFile(path, "w", samplerate=fs, channels=2, subtype="PCM_24",
                      format="RF64" if n * 6 > 2 ** 31 else "WAV") as fh:
        for start in range(0, n, block):
            m = min(block, n - start)
            s = rng.normal(0, 1e-4, m)
            fh.write(np.column_stack([s + rng.normal(0, 1e-3, m), s + rng.normal(0, 1e-3, m)]))
    return path


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--segment", type=int, default=32768)
    args = ap.parse_args()
    from benchnf.io import open_capture
    from benchnf.streaming import stream_cross
    fs, seconds = 96_000, args.minutes * 60
    with tempfile.TemporaryDirectory() as tmp:
        path = _stereo_wav(Path(tmp) / "two.wav", seconds, fs)
        x, y = open_capture(path, channel=0), open_capture(path, channel=1)
        stream_cross(x, y, segment_length=args.segment)  # warm the page cache
        t0 = time.perf_counter()
        acc, _sx, _sy = stream_cross(x, y, segment_length=args.segment)
        r = acc.result()
        ours = time.perf_counter() - t0
        peak_ours = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        import subprocess
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "benchnf", "analyze", "--terminated", str(path), "--cross",
                        "--volts-per-fs", "1", "--cross-volts-per-fs", "1", "--gain-db", "40", "--rs", "200",
                        "--temperature-k", "290", "--segment", str(args.segment), "--quiet"],
                       check=True, stdout=subprocess.DEVNULL)
        whole = time.perf_counter() - t0
        import soundfile as sf
        from scipy import signal
        t0 = time.perf_counter()
        data, _ = sf.read(path, dtype="float64")
        signal.csd(data[:, 0], data[:, 1], fs=fs, nperseg=args.segment, noverlap=args.segment // 2)
        theirs = time.perf_counter() - t0
    print(f"{args.minutes:g} min, 2 channels at {fs} Hz, 24-bit, segment {args.segment}: benchnf streamed "
          f"{ours:.2f} s = {seconds / ours:.0f}x real time ({r.n_averages} averages, peak RSS {peak_ours:.0f} MB "
          f"before scipy loaded the file); load whole + scipy.signal.csd {theirs:.2f} s; ratio {theirs / ours:.2f}x; "
          f"target >= 1000x real time, an hour in under 4 s (would take {3600 / (seconds / ours):.1f} s)")
    print(f"whole process 'benchnf analyze --cross': {whole:.2f} s = {seconds / whole:.0f}x real time (an hour: "
          f"about {3600 / (seconds / whole):.1f} s at this rate)")


if __name__ == "__main__":
    main()
