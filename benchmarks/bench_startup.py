"""Whole-process figures a bench user waits for, side by side in one run (printed, not asserted).

1. Start-up: ``benchnf analyze`` of the demo's 10-second captures (terminated, floor, tone), whole process,
   against ``python -c "import numpy, soundfile"`` measured the same way. Target: at most 2.5 times.
2. A long capture: ``benchnf analyze`` of a 10-minute 96 kHz 24-bit WAV (seeded noise, INVENTED DATA) with a
   3-second tone, whole process, as capture seconds per wall second. Target: at least 1000 times real time
   on 2 cores.

Each figure is the median of --runs runs after one warm-up run (the page cache and the bytecode cache
filled, as on a bench after the first use; PYTHONDONTWRITEBYTECODE is cleared for the children).
Run: python benchmarks/bench_startup.py [--runs 7] [--minutes 10]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
DEMO = HERE.parent / "benchnf" / "captures_demo"
sys.path.insert(0, str(HERE))


def _median_seconds(argv: list[str], runs: int) -> float:
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    subprocess.run(argv, env=env, check=True, capture_output=True)  # warm-up
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(argv, env=env, check=True, capture_output=True)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=7)
    ap.add_argument("--minutes", type=float, default=10.0, help="length of the long capture")
    args = ap.parse_args()
    benchnf = [sys.executable, "-m", "benchnf"]
    imports = _median_seconds([sys.executable, "-c", "import numpy, soundfile"], args.runs)
    demo = _median_seconds([*benchnf, "analyze", "--terminated", str(DEMO / "terminated.flac"), "--floor",
                            str(DEMO / "floor.flac"), "--tone", str(DEMO / "tone.flac"), "--volts-per-fs", "2",
                            "--quiet"], args.runs)
    print(f"python -c 'import numpy, soundfile'      {imports:6.3f} s")
    print(f"benchnf analyze, demo 10 s captures       {demo:6.3f} s  = {demo / imports:.2f}x the imports "
          f"(target <= 2.5x)")
    from _common import write_noise_wav
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        seconds = args.minutes * 60
        term = write_noise_wav(d / "terminated.wav", seconds=seconds, rms_fs=1e-3, seed=1)
        tone = write_noise_wav(d / "tone.wav", seconds=3.0, rms_fs=1e-4, seed=9, tone_hz=1000.0)
        long = _median_seconds([*benchnf, "analyze", "--terminated", str(term), "--tone", str(tone),
                                "--tone-input-vrms", "0.001", "--rs", "150", "--volts-per-fs", "2", "--quiet"],
                               max(3, args.runs // 2))
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    print(f"benchnf analyze, {args.minutes:g} min at 96 kHz 24-bit   {long:6.3f} s  = {seconds / long:.0f}x real time "
          f"on {cores} core(s) (target >= 1000x on 2 cores)")


if __name__ == "__main__":
    main()
