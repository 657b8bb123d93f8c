"""The records store on SQLite and on a real PostgreSQL server: round trip, concurrent writers, a killed
writer, capability, and bad input. Units are the demo's (INVENTED DATA) and seeded synthetic records.

PostgreSQL: BENCHNF_TEST_POSTGRES names a throw-away server (.ci/run starts one with .ci/postgres.sh);
without it the tests start their own where they can (root with the Debian server installed). In CI a
missing server is a failure, not a skip.
"""

import math
import multiprocessing as mp
import os
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from benchnf.cli import ExitStatus, main
from benchnf.records import CheckRecord, LimitRow, capability, connect

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "benchnf" / "captures_demo"


@pytest.fixture(scope="session")
def postgres_url():
    url = os.environ.get("BENCHNF_TEST_POSTGRES")
    if url:
        yield url
        return
    can = os.geteuid() == 0 and shutil.which("runuser") and list(Path("/usr/lib/postgresql").glob("*/bin/initdb"))
    if not can:
        if os.environ.get("CI") == "true":
            raise RuntimeError("CI must run the PostgreSQL tests: set BENCHNF_TEST_POSTGRES (.ci/postgres.sh)")
        pytest.skip("no PostgreSQL server to test against")
    folder = subprocess.run(["bash", str(ROOT / ".ci" / "postgres.sh")], capture_output=True, text=True,
                            check=True).stdout.strip()
    yield f"postgresql://postgres@/benchnf_test?host={folder}"
    subprocess.run(["bash", str(ROOT / ".ci" / "postgres.sh"), "stop", folder], check=False)


@pytest.fixture(params=["sqlite", "postgresql"])
def url(request, tmp_path):
    if request.param == "sqlite":
        return str(tmp_path / "records.db")
    pg = request.getfixturevalue("postgres_url")
    store = connect(pg)  # a fresh set of tables for each test
    with store.engine.begin() as conn:
        for table in ("limits", "checks", "benchnf_info"):
            conn.exec_driver_sql(f"DROP TABLE IF EXISTS {table} CASCADE")
    store.close()
    return pg


def _record(serial, value, *, uid=None, n_limits=3):
    rows = tuple(LimitRow(f"figure_{k}", value + k, "max 10", None, 10.0, 10.0 - value - k, "dB", 0.1, "PASS")
                 for k in range(n_limits))
    extra = {"record_uid": uid} if uid else {}
    return CheckRecord(serial=serial, verdict="PASS", profile_name="p", profile_sha256="0" * 64, station="s1",
                       operator="op", software="benchnf test", limits=rows, results={"gain_db": value}, **extra)


def test_round_trip_through_check_batch_and_records(url, tmp_path, capsys):
    assert main(["batch", str(DEMO / "units"), "--profile", str(DEMO / "known_good_profile.toml"), "--floor",
                 str(DEMO / "floor.flac"), "--volts-per-fs", "2", "--workers", "1", "--quiet", "-o",
                 str(tmp_path / "out"), "--records", url, "--station", "bench-3", "--operator", "ann"]) == 1
    store = connect(url)
    rows = store.checks()
    assert [(r["serial"], r["verdict"], r["station"], r["operator"]) for r in rows] == [
        ("HA-0001", "PASS", "bench-3", "ann"), ("HA-0002", "FAIL", "bench-3", "ann"), ("HA-0003", "FAIL", "bench-3", "ann")]
    limits = store.limits_of([r["id"] for r in rows])
    assert {lim["name"] for lim in limits[rows[0]["id"]]} >= {"gain_db", "ein_dbu", "mask input_density_v_per_rthz"}
    assert main(["records", "--records", url, "show", "HA-0002"]) == 0
    assert "hum ripple" in capsys.readouterr().out
    assert main(["records", "--records", url, "export", "-o", str(tmp_path / "x.csv")]) == 0
    assert len((tmp_path / "x.csv").read_text().splitlines()) == 4
    assert main(["records", "--records", url, "capability"]) == ExitStatus.BAD_INPUT  # 3 units: too few
    assert "at least 10 units" in capsys.readouterr().out


def _writer(url, worker, n):
    store = connect(url)
    for i in range(n):
        rec = _record(f"W{worker}-{i}", float(i % 7), uid=f"{worker:04d}-{i:06d}-0000-0000-000000000000"[:36])
        store.add(rec)
        store.add(rec)  # a retry of the same record: must not duplicate it
    store.close()


def test_eight_concurrent_writers_lose_nothing_and_duplicate_nothing(url):
    connect(url).close()
    ctx = mp.get_context("spawn")
    procs = [ctx.Process(target=_writer, args=(url, w, 25)) for w in range(8)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(120)
        assert p.exitcode == 0
    store = connect(url)
    rows = store.checks()
    assert len(rows) == 200 and len({r["record_uid"] for r in rows}) == 200
    limits = store.limits_of([r["id"] for r in rows])
    assert all(len(v) == 3 for v in limits.values())


def _first_writer(url, worker, go):
    go.wait(60)
    store = connect(url)  # a new database: every process makes the tables at the same moment
    store.add(_record(f"N{worker}", 1.0))
    store.close()


def test_sixteen_stations_starting_a_new_store_at_once_keep_sixteen_checks(url):
    ctx = mp.get_context("spawn")
    go = ctx.Event()
    procs = [ctx.Process(target=_first_writer, args=(url, w, go)) for w in range(16)]
    for p in procs:
        p.start()
    time.sleep(2.0)  # let every process import and wait at the start line
    go.set()
    for p in procs:
        p.join(120)
    assert [p.exitcode for p in procs] == [0] * 16
    rows = connect(url).checks()
    assert sorted(r["serial"] for r in rows) == sorted(f"N{w}" for w in range(16))


def test_a_killed_writer_leaves_no_half_record(url, tmp_path):
    connect(url).close()
    code = ("import sys\nsys.path.insert(0, %r)\nfrom test_records import _record\nfrom benchnf.records import connect\n"
            "s = connect(%r)\ni = 0\nwhile True:\n    s.add(_record(f'K{i}', 1.0, n_limits=40)); i += 1\n"
            % (str(Path(__file__).parent), url))
    proc = subprocess.Popen([sys.executable, "-c", code])
    time.sleep(3.0)
    proc.send_signal(signal.SIGKILL)
    proc.wait(10)
    store = connect(url)
    rows = store.checks()
    assert rows, "the writer wrote nothing before it was killed"
    assert all(len(v) == 40 for v in store.limits_of([r["id"] for r in rows]).values())


def test_capability_against_a_hand_computed_example():
    # Computed by hand here: values in time order, LSL 0, USL 10.
    x = [4.0, 5.0, 6.0, 5.0, 4.0, 6.0, 5.0, 5.0, 4.0, 6.0]
    s = float(np.std(x, ddof=1))
    mr = float(np.mean(np.abs(np.diff(x))))
    c = capability(x, lsl=0.0, usl=10.0)
    assert c.mean == pytest.approx(5.0) and c.sigma_overall == pytest.approx(s)
    assert c.cp == pytest.approx(10 / (6 * mr / 1.128)) and c.ppk == pytest.approx(5.0 / (3 * s))
    assert c.cpk_lower95 == pytest.approx(c.cpk - 1.645 * math.sqrt(1 / 90 + c.cpk ** 2 / 18))
    # NIST/SEMATECH e-Handbook 6.1.6 worked case (from memory, REFERENCES.md): USL 20, LSL 8, mean 16, s 2.
    from benchnf.records import capability_from
    nist = capability_from(mean=16.0, sigma_within=2.0, sigma_overall=2.0, n=100, lsl=8.0, usl=20.0)
    assert (round(nist.cp, 3), round(nist.cpk, 3)) == (1.0, 0.667)


def test_bad_records_urls_and_a_newer_schema_are_refused_in_one_line(tmp_path, capsys):
    for url in ("postgresql://nobody@/nodb?host=/nonexistent", str(tmp_path / "no" / "r.db"), "sqlite:///",
                "sqlite://", "sqlite:///:memory:", ":memory:"):
        rc = main(["records", "--records", url, "list"])
        err = capsys.readouterr().err.strip().splitlines()
        assert rc == ExitStatus.BAD_INPUT and len(err) == 1 and err[0].startswith("benchnf: error:"), (url, err)
        assert "in-memory" in err[0] or "://" not in url[:9] or "postgresql" in url
    for url in ("mysql://u@h/db", "mysql+nothing://x/y", "oracle://x"):  # not supported: like a missing part, 3
        rc = main(["records", "--records", url, "list"])
        err = capsys.readouterr().err.strip().splitlines()
        assert rc == ExitStatus.MISSING_DEPENDENCY and len(err) == 1 and "SQLite" in err[0], (url, err)
    good = str(tmp_path / "good.db")
    for args, words in ((["list", "--since", "last tuesday"], "not an ISO 8601 date"),
                        (["list", "--until", "2026-02-30"], "not a date that exists"),
                        (["export", "-o", str(tmp_path / "e.xlsx")], "the suffix names the format")):
        assert main(["records", "--records", good, *args]) == ExitStatus.BAD_INPUT
        assert words in capsys.readouterr().err
    assert not (tmp_path / "e.xlsx").exists()
    db = tmp_path / "r.db"
    store = connect(db)
    with store.engine.begin() as conn:
        conn.exec_driver_sql("UPDATE benchnf_info SET value = '99' WHERE key = 'schema_version'")
    store.close()
    assert main(["records", "--records", str(db), "list"]) == ExitStatus.BAD_INPUT
    assert "schema version 99, newer than" in capsys.readouterr().err


def test_control_chart_limits_and_run_rules():
    # Limits by the standard constants (E2 = 2.660, D4 = 3.267; ASTM E2587, common practice), computed by hand:
    # values 10, 12, 11, 13, 12: x-bar 11.6, moving ranges 2, 1, 2, 1 -> MR-bar 1.5, limits 11.6 +/- 3.99.
    from benchnf.records.charts import control_chart
    c = control_chart([10, 12, 11, 13, 12])
    assert c.centre == pytest.approx(11.6) and c.mr_centre == pytest.approx(1.5)
    assert (c.lower, c.upper, c.mr_upper) == pytest.approx((11.6 - 3.99, 11.6 + 3.99, 4.9005))
    assert c.signals == ()
    # A point far out (rule 1), and eight in a row above the centre (rule 4), on seeded noise.
    rng = np.random.default_rng(2)
    x = list(rng.normal(0, 1, 30))
    x[10] = 8.0
    x[18:26] = [abs(v) + 0.5 for v in x[18:26]]
    rules = {rule for i, rule in control_chart(x).signals}
    idx = {i for i, rule in control_chart(x).signals if rule == 1}
    assert 1 in rules and 4 in rules and 10 in idx


def test_chart_and_history_import_through_the_command(tmp_path, capsys):
    db = str(tmp_path / "r.db")
    history = tmp_path / "history.csv"
    rng = np.random.default_rng(9)
    lines = ["checked_at,profile,serial,verdict,gain_db,ein_dbu,noise_figure_db,nf_at_1khz_db,flicker_corner_hz"]
    lines += [f"2026-11-{1 + i // 10:02d}T08:{i % 60:02d}:00+00:00,p,U{i},PASS,36,{-136 + rng.normal(0, 0.3):.3f},"
              f"2.9,3.0,40" for i in range(20)]
    history.write_text("\n".join(lines) + "\n")
    assert main(["records", "--records", db, "import-history", str(history)]) == 0
    assert main(["records", "--records", db, "import-history", str(history)]) == 0  # again: nothing added
    assert "20 record(s) imported" in capsys.readouterr().out
    assert len(connect(db).checks()) == 20
    assert main(["records", "--records", db, "chart", "--figure", "ein_dbu", "-o", str(tmp_path / "charts")]) == 0
    png = tmp_path / "charts" / "control_ein_dbu.png"
    assert png.stat().st_size > 10_000
    assert main(["records", "--records", db, "chart", "--figure", "nothing", "-o", str(tmp_path / "c2")]) == 2


def test_the_chart_page_shows_the_chart_its_limits_and_each_broken_rule(tmp_path):
    """Seeded synthetic values (INVENTED DATA): 12 in control, then the last 8 shifted up by 3 sigma."""
    from benchnf.records.charts import control_chart
    db = tmp_path / "r.db"
    store = connect(str(db))
    rng = np.random.default_rng(4)
    values = list(rng.normal(0.0, 0.1, 12)) + list(rng.normal(0.3, 0.1, 8))
    for k, v in enumerate(values):
        store.add(_record(f"C-{k:02d}", v, n_limits=1))
        time.sleep(0.002)  # distinct times keep the order
    store.close()
    assert main(["records", "--records", str(db), "chart", "--figure", "figure_0", "-o", str(tmp_path / "c")]) == 0
    page = (tmp_path / "c" / "control_figure_0.html").read_text()
    assert "data:image/png;base64," in page and "RULES BROKEN" in page
    chart = control_chart(values)
    assert chart.signals  # the shift breaks at least one rule
    listed = re.findall(r"<td>\d+</td><td>(C-\d\d)</td>", page)
    assert listed == [f"C-{i:02d}" for i, _rule in chart.signals]
    assert f"<td>{chart.upper:.6g}</td>" in page and f"<td>{chart.mr_upper:.6g}</td>" in page
    (tmp_path / "d").mkdir()
    (tmp_path / "d" / "control_figure_0.html").write_text("the user's own page")
    assert main(["records", "--records", str(db), "chart", "--figure", "figure_0", "-o", str(tmp_path / "d")]) == 2
    assert sorted(p.name for p in (tmp_path / "d").iterdir()) == ["control_figure_0.html"]  # nothing half-written
    assert (tmp_path / "d" / "control_figure_0.html").read_text() == "the user's own page"


@pytest.fixture()
def read_only_folder(mount_tmpfs):
    """A small tmpfs (root only), remounted read-only by the test once it holds what it should."""
    return mount_tmpfs("archive", "4m")


def _remount_read_only(folder):
    subprocess.run(["mount", "-o", "remount,ro", str(folder)], check=True)


def test_a_read_only_database_is_read_but_never_written(read_only_folder, tmp_path, capsys):
    db = read_only_folder / "records.db"
    store = connect(str(db))
    for k in range(3):
        store.add(_record(f"RO-{k}", 1.0 + k))
    store.close()  # the last connection closes: the write-ahead log is folded in and removed
    _remount_read_only(read_only_folder)
    assert main(["records", "--records", str(db), "list"]) == 0
    assert "3 check(s)" in capsys.readouterr().out
    assert main(["records", "--records", str(db), "export", "-o", str(tmp_path / "x.csv")]) == 0
    assert len((tmp_path / "x.csv").read_text().splitlines()) == 4
    before = db.read_bytes()
    for argv in (["records", "--records", str(db), "import-history", str(tmp_path / "x.csv")],
                 ["batch", str(DEMO / "units"), "--profile", str(DEMO / "known_good_profile.toml"),
                  "--volts-per-fs", "2", "--workers", "1", "--quiet", "-o", str(tmp_path / "out"),
                  "--records", str(db)]):
        capsys.readouterr()
        assert main(argv) == ExitStatus.BAD_INPUT
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and "cannot be written" in err[0] and "writable place" in err[0], err
    assert not (tmp_path / "out").exists()  # refused before any unit was analysed
    assert db.read_bytes() == before


def test_a_read_only_database_with_writes_left_in_its_log_is_refused(read_only_folder, tmp_path, capsys):
    src = tmp_path / "live.db"
    store = connect(str(src))
    store.add(_record("WAL-1", 1.0))
    with store.engine.connect():  # copy while a connection holds the log open (as a copied live file)
        shutil.copy(src, read_only_folder / "records.db")
        shutil.copy(src.with_name("live.db-wal"), read_only_folder / "records.db-wal")
    store.close()
    _remount_read_only(read_only_folder)
    assert main(["records", "--records", str(read_only_folder / "records.db"), "list"]) == ExitStatus.BAD_INPUT
    assert "still in records.db-wal" in capsys.readouterr().err


def test_capability_with_too_few_units_says_so(tmp_path, capsys):
    db = tmp_path / "r.db"
    store = connect(str(db))
    for k in range(3):
        store.add(_record(f"F-{k}", 1.0 + k))
    store.close()
    assert main(["records", "--records", str(db), "capability"]) == ExitStatus.BAD_INPUT
    captured = capsys.readouterr()
    assert "needs at least 10 units, the records hold 3" in captured.out
    assert "no limit has records of 10 or more units" in captured.err


def test_parquet_export_holds_what_the_csv_holds_at_full_precision(tmp_path, monkeypatch):
    """Read back with pyarrow (the reference reader of the format)."""
    pq = pytest.importorskip("pyarrow.parquet")
    db = tmp_path / "r.db"
    store = connect(str(db))
    for k in range(4):
        store.add(_record(f"PQ-{k}", 1.0 + k / 3, n_limits=2 + k % 2))  # some checks lack figure_2
    store.close()
    assert main(["records", "--records", str(db), "export", "-o", str(tmp_path / "x.csv")]) == 0
    assert main(["records", "--records", str(db), "export", "-o", str(tmp_path / "x.parquet")]) == 0
    table = pq.read_table(tmp_path / "x.parquet")
    import csv
    with open(tmp_path / "x.csv", newline="") as f:
        rows = list(csv.DictReader(f))
    assert table.column_names == list(rows[0])
    assert str(table.schema.field("checked_at").type) == "timestamp[us, tz=UTC]"
    got = table.to_pylist()
    assert [r["serial"] for r in got] == [r["serial"] for r in rows] == ["PQ-0", "PQ-1", "PQ-2", "PQ-3"]
    assert [r["figure_0"] for r in got] == [1.0 + k / 3 for k in range(4)]  # not rounded as the CSV is
    assert [r["figure_2"] is None for r in got] == [True, False, True, False]
    assert [r["checked_at"].isoformat() for r in got] == [r["checked_at"] for r in rows]
    monkeypatch.setitem(sys.modules, "pyarrow", None)  # as on a machine without it
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    assert main(["records", "--records", str(db), "export", "-o", str(tmp_path / "y.parquet")]) \
        == ExitStatus.MISSING_DEPENDENCY
    assert not (tmp_path / "y.parquet").exists()
