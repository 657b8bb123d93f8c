"""Start-up time of `benchnf --help` (target under 0.3 s), best of 10 fresh processes.

Run: python benchmarks/bench_help.py
"""

from __future__ import annotations

import subprocess
import sys
import time


def main() -> None:
    cmd = [sys.executable, "-m", "benchnf", "--help"]
    subprocess.run(cmd, capture_output=True, check=True)  # warm the file cache
    times = []
    for _ in range(10):
        t0 = time.perf_counter()
        subprocess.run(cmd, capture_output=True, check=True)
        times.append(time.perf_counter() - t0)
    base = []
    for _ in range(10):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], capture_output=True, check=True)
        base.append(time.perf_counter() - t0)
    print(f"benchnf --help: best {min(times) * 1e3:.0f} ms, median {sorted(times)[5] * 1e3:.0f} ms "
          f"(bare python: {min(base) * 1e3:.0f} ms); target under 300 ms, ratio "
          f"{min(times) / 0.3:.2f} of the target")


if __name__ == "__main__":
    main()
