"""Peak memory of an analysis against capture length (24-bit 96 kHz WAV, up to 60 minutes).

Target: under 300 MB for a 60-minute capture, and independent of length.  Each length runs in a
fresh process; the figure is that process's peak resident set (ru_maxrss).  The captures are seeded
synthetic noise (INVENTED DATA) written to a temporary folder (about 1 GB for 60 minutes).
Run: python benchmarks/bench_memory.py [--minutes 1 10 60]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

from _common import write_noise_wav

CHILD = r"""
import resource, sys, time
sys.path.insert(0, {root!r})
from benchnf.measure import GainSetup, analyze_gain_method
from benchnf.io import open_capture
t0 = time.perf_counter()
r = analyze_gain_method(terminated=open_capture({path!r}, volts_per_fs=2.0),
                        gain=GainSetup(gain_db=40.0), rs_ohm=150.0)
dt = time.perf_counter() - t0
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, dt)
"""


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--minutes", type=float, nargs="+", default=[1.0, 10.0, 60.0])
    args = ap.parse_args()
    root = str(Path(__file__).resolve().parents[1])
    with tempfile.TemporaryDirectory() as tmp:
        for minutes in args.minutes:
            path = write_noise_wav(Path(tmp) / f"cap{minutes:g}.wav", seconds=60 * minutes)
            out = subprocess.run([sys.executable, "-c", CHILD.format(root=root, path=str(path))],
                                 capture_output=True, text=True, check=True).stdout.split()
            peak_mb, seconds = float(out[0]), float(out[1])
            print(f"{minutes:5g} min at 96 kHz ({path.stat().st_size / 1e6:7.0f} MB file): peak RSS "
                  f"{peak_mb:6.1f} MB, analysis {seconds:6.1f} s ({60 * minutes / seconds:5.0f}x real time)")
            path.unlink()
    print("target: under 300 MB at 60 minutes, and not growing with length")


if __name__ == "__main__":
    main()
