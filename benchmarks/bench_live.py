"""Live view at 96 kHz: how often it can refresh, and what share of one core it takes at 5 per second.

Feeds the live analyzer with 96 kHz blocks at real-time pace (synthetic noise, INVENTED DATA) for a
while, refreshing 5 times a second; prints the refresh rate reached and the CPU share (process time over
wall time).  Targets: at least 5 updates per second, under 50 % of one core.
Run: python benchmarks/bench_live.py [--seconds 20]
"""

from __future__ import annotations

import argparse
import time

from _common import pin_one_core  # first: it sets the BLAS thread count before numpy loads

import numpy as np  # noqa: E402

from benchnf.acquire.live import LiveAnalyzer  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seconds", type=float, default=20.0)
    args = ap.parse_args()
    pin_one_core()
    fs, block = 96_000.0, 1024
    rng = np.random.default_rng(0)
    data = rng.normal(0, 1e-3, int(fs * 4))
    live = LiveAnalyzer(sample_rate_hz=fs, segment_length=16384)
    updates, fed, pos = 0, 0, 0
    snap_times = []
    t0, c0 = time.perf_counter(), time.process_time()
    next_update = t0
    while time.perf_counter() - t0 < args.seconds:
        due = t0 + fed / fs  # real time: wait for the next block to "arrive"
        now = time.perf_counter()
        if due > now:
            time.sleep(due - now)
        live.feed(data[pos:pos + block])
        pos = (pos + block) % (data.size - block)
        fed += block
        if time.perf_counter() >= next_update:
            s0 = time.perf_counter()
            live.snapshot()
            snap_times.append(time.perf_counter() - s0)
            updates += 1
            next_update += 0.2
    wall, cpu = time.perf_counter() - t0, time.process_time() - c0
    print(f"96 kHz live view for {wall:.1f} s: {updates / wall:.2f} updates per second (target >= 5), CPU "
          f"{100 * cpu / wall:.1f} % of one core (target < 50 %); one refresh takes "
          f"{1e3 * float(np.median(snap_times)):.1f} ms median, {1e3 * max(snap_times):.1f} ms worst "
          f"(so at most {1 / float(np.median(snap_times)):.0f} refreshes per second)")


if __name__ == "__main__":
    main()
