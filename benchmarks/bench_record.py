"""Recording at 192 kHz, two channels, through the PulseAudio loopback (.ci/pulse-loopback.sh), for
10 minutes: frames received against the clock, overflows, dropouts.  Prints figures; asserts nothing.
Run: PULSE_RUNTIME_PATH=/tmp/benchnf-pulse python benchmarks/bench_record.py [--minutes 10]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from benchnf.acquire.record import record_to_file


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--rate", type=float, default=192_000.0)
    ap.add_argument("--device", default="pulse")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        rep = record_to_file(Path(tmp) / "long.wav", seconds=args.minutes * 60, sample_rate_hz=args.rate, channels=2,
                             device=args.device, condition="floor")
        wall = time.perf_counter() - t0
        size = (Path(tmp) / "long.wav").stat().st_size
    print(f"{args.minutes:g} min at {args.rate:g} Hz x 2 channels from {rep.device!r} ({rep.host_api}): "
          f"{rep.frames} frames ({rep.frames / args.rate:.1f} s) in {wall:.1f} s wall, {size / 1e6:.0f} MB; "
          f"{rep.overflows} overflows, clock mismatch {rep.clock_mismatch_frames} frames, dropouts: {rep.dropouts}")


if __name__ == "__main__":
    main()
