"""Records written per second (one writer, eight concurrent writers) on SQLite and PostgreSQL, and the time
of a capability figure over 100,000 checks. Prints figures; asserts nothing.

PostgreSQL: set BENCHNF_TEST_POSTGRES (e.g. from .ci/postgres.sh); otherwise only SQLite is measured.
"""

import multiprocessing as mp
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from benchnf.records import capability, connect  # noqa: E402
from test_records import _record  # noqa: E402


def _write(url, worker, n):
    store = connect(url)
    for i in range(n):
        store.add(_record(f"B{worker}-{i}", float(i % 7)))
    store.close()


def _fresh(url):
    store = connect(url)
    with store.engine.begin() as conn:
        for table in ("limits", "checks", "benchnf_info"):
            conn.exec_driver_sql(f"DROP TABLE IF EXISTS {table}" + (" CASCADE" if "postgresql" in url else ""))
    store.close()
    connect(url).close()


def rate(url, writers, n):
    _fresh(url)
    ctx = mp.get_context("spawn")
    procs = [ctx.Process(target=_write, args=(url, w, n)) for w in range(writers)]
    t0 = time.perf_counter()
    for p in procs:
        p.start()
    for p in procs:
        p.join()
    return writers * n / (time.perf_counter() - t0)


def _bulk(url, n):
    """n checks of distinct serials with one bounded limit each, inserted in bulk (setup, not timed)."""
    store = connect(url)
    checks = [dict(record_uid=f"{i:036d}", serial=f"S{i}", verdict="PASS", checked_at=f"2026-01-01T00:00:{i:09d}",
                   station="s", operator=None, profile_name="p", profile_sha256=None, software="bench",
                   results_json=None, check_json=None) for i in range(n)]
    with store.engine.begin() as conn:
        conn.execute(store._checks.insert(), checks)
        ids = [r[0] for r in conn.exec_driver_sql("SELECT id FROM checks ORDER BY id")]
        conn.execute(store._limits.insert(), [dict(check_id=c, name="gain_db", measured=36.0 + (c % 97) * 1e-3,
                                                   limit_text="36 +/- 1", lower=35.0, upper=37.0, margin=0.5,
                                                   unit="dB", uncertainty=0.1, verdict="PASS") for c in ids])
    store.close()


def main():
    with tempfile.TemporaryDirectory() as d:
        urls = {"SQLite": str(Path(d) / "bench.db")}
        if os.environ.get("BENCHNF_TEST_POSTGRES"):
            urls["PostgreSQL"] = os.environ["BENCHNF_TEST_POSTGRES"]
        for name, url in urls.items():
            print(f"{name}: 1 writer {rate(url, 1, 400):7.0f} records/s; "
                  f"8 writers {rate(url, 8, 100):7.0f} records/s (3 limits each, process start-up included)")
        big = str(Path(d) / "big.db")
        _bulk(big, 100_000)
        store = connect(big)
        t0 = time.perf_counter()
        rows = store.measured_values("gain_db")
        capability([r["measured"] for r in rows], lsl=rows[-1]["lower"], usl=rows[-1]["upper"])
        t1 = time.perf_counter()
        print(f"capability of one limit over 100000 checks (query + figures): {t1 - t0:.2f} s")


if __name__ == "__main__":
    main()
