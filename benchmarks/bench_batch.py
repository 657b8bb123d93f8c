"""100 units of the demo's size checked in batch on this machine's cores (target: under 1 minute).

The units are copies of the demo's repaired units (INVENTED DATA) in a temporary folder.
Run: python benchmarks/bench_batch.py [--units 100]
"""

from __future__ import annotations

import argparse
import os
import shutil
import tempfile
import time
from pathlib import Path

from benchnf.check.batch import UnitSettings, check_batch

DEMO = Path(__file__).resolve().parents[1] / "benchnf" / "captures_demo"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--units", type=int, default=100)
    args = ap.parse_args()
    sources = sorted((DEMO / "units").iterdir())
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "units"
        for i in range(args.units):
            shutil.copytree(sources[i % len(sources)], root / f"SN-{i:04d}")
        t0 = time.perf_counter()
        out = check_batch(root, str(DEMO / "known_good_profile.toml"),
                          settings=UnitSettings(volts_per_fs=2.0, floor=DEMO / "floor.flac"))
        dt = time.perf_counter() - t0
    counts = {v: sum(o.verdict == v for o in out) for v in ("PASS", "MARGINAL", "FAIL", "ERROR")}
    print(f"{args.units} units (5 s terminated + 2 s tone each, 48 kHz) checked in {dt:.1f} s on "
          f"{os.cpu_count()} cores ({dt / args.units * 1e3:.0f} ms per unit); target under 60 s, ratio "
          f"{dt / 60:.2f} of the target; verdicts {counts}")


if __name__ == "__main__":
    main()
