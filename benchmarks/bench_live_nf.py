"""How fast the live noise figure keeps up with a receiver: seconds of processor time per second of a
2.4 MS/s stream through measure.yfactor_live.YFactorLive, and the time of one hot/cold pair's evaluation.

Seeded synthetic stream (INVENTED DATA): complex noise whose level steps by Y = 12.3 dB every 1.0 s (an NF of
3 dB with a 15 dB ENR source), quantised to 8 bits as an RTL2832U sends it. Prints figures; times nothing in
the tests.

    python benchmarks/bench_live_nf.py [--seconds 20] [--rate 2.4e6]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from benchnf.acquire.sdr import to_complex
from benchnf.measure.yfactor import HotColdSource
from benchnf.measure.yfactor_live import YFactorLive
from benchnf.noise.yfactor import EnrTable


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--seconds", type=float, default=20.0)
    ap.add_argument("--rate", type=float, default=2.4e6)
    args = ap.parse_args()
    rng = np.random.default_rng(0)
    y = 1 + 10 ** 1.5 / 10 ** 0.3
    live = YFactorLive(rate_hz=args.rate, centre_hz=145e6, gain_db=30.0, source=HotColdSource(enr=EnrTable.constant(15.0)))
    chunk = int(0.05 * args.rate)
    n_chunks = int(args.seconds / 0.05)
    busy, pair_times = 0.0, []
    for k in range(n_chunks):
        level = 4.0 * (np.sqrt(y) if (k * 0.05) % 2.0 >= 1.0 else 1.0)
        raw = np.clip(np.round(rng.normal(0, level, 2 * chunk) + 127.5), 0, 255).astype(np.uint8)
        t0 = time.perf_counter()
        pairs = live.feed(to_complex(raw))
        dt = time.perf_counter() - t0
        busy += dt
        if pairs:
            pair_times.append(dt)
    nfs = [p.noise_figure_db for p in live.pairs]
    print(f"stream {args.seconds:.0f} s at {args.rate / 1e6:.2f} MS/s: {busy:.2f} s of processing "
          f"({busy / args.seconds:.3f} s per second of stream, {args.seconds / busy:.1f}x real time)")
    print(f"{len(live.pairs)} pairs (1 s hot + 1 s cold each): a pair is ready {2.0:.1f} s of stream after it "
          f"begins, plus the first block of the next state; the feed call that closes a pair takes "
          f"{1e3 * np.median(pair_times):.0f} ms (median)")
    print(f"NF {np.mean(nfs):.3f} dB, scatter {np.std(nfs, ddof=1):.3f} dB over the pairs, "
          f"U {live.pairs[-1].noise_figure_u95_db:.3f} dB per pair")


if __name__ == "__main__":
    main()
