"""The station file (TOML): station, operator, records URL and calibration for check, batch and records;
the command line and the BENCHNF_* variables come first. Units are the demo's (INVENTED DATA)."""

import json
import sqlite3
from pathlib import Path

import pytest

from benchnf.cli import ExitStatus, main
from benchnf.records import connect

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"


@pytest.fixture
def station(tmp_path, monkeypatch):
    """A station folder with its calibration (2 V per full scale from the demo reference, 0.5 V RMS stated)
    and a station file naming a records file and that calibration by paths relative to itself."""
    for name in ("BENCHNF_RECORDS", "BENCHNF_STATION", "BENCHNF_OPERATOR", "BENCHNF_STATION_FILE"):
        monkeypatch.delenv(name, raising=False)
    folder = tmp_path / "station"
    (folder / "cal").mkdir(parents=True)
    assert main(["calibrate", str(DEMO / "reference.flac"), "--vrms", "0.5", "-o", str(folder / "cal" / "c.json"),
                 "--quiet"]) == 0
    (folder / "station.toml").write_text('station = "bench-7"\noperator = "kim"\nrecords = "rec.db"\n'
                                         'calibration = "cal/c.json"\n')
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)  # relative paths in the file are the file's, not the working folder's
    return folder


def _batch(out, *extra):
    return main(["batch", str(DEMO / "units"), "--profile", str(DEMO / "known_good_profile.toml"), "--floor",
                 str(DEMO / "floor.flac"), "--workers", "1", "--quiet", "-o", str(out), *extra])


def test_batch_takes_station_operator_records_and_calibration_from_the_file(station, tmp_path):
    assert _batch(tmp_path / "out", "--station-file", str(station / "station.toml")) == ExitStatus.CHECK_FAILED
    rows = connect(str(station / "rec.db")).checks()
    # with the file's calibration the demo units give their known verdicts; without one they cannot be analysed
    assert [(r["serial"], r["verdict"], r["station"], r["operator"]) for r in rows] == [
        ("HA-0001", "PASS", "bench-7", "kim"), ("HA-0002", "FAIL", "bench-7", "kim"),
        ("HA-0003", "FAIL", "bench-7", "kim")]
    with sqlite3.connect(station / "rec.db") as db:
        provs = [json.loads(r)["provenance"] for (r,) in db.execute("SELECT results_json FROM checks")]
    assert [(p["station"], p["operator"]) for p in provs] == [("bench-7", "kim")] * 3
    assert all(any(i["file"].endswith("c.json") for i in p["inputs"]) for p in provs)  # the file's calibration

def test_command_line_and_environment_come_before_the_file(station, tmp_path, monkeypatch):
    monkeypatch.setenv("BENCHNF_STATION_FILE", str(station / "station.toml"))
    monkeypatch.setenv("BENCHNF_OPERATOR", "lee")
    assert _batch(tmp_path / "out", "--station", "bench-9") == ExitStatus.CHECK_FAILED
    rows = connect(str(station / "rec.db")).checks()
    assert {(r["station"], r["operator"]) for r in rows} == {("bench-9", "lee")}


def test_records_command_reads_the_file_but_does_not_filter_by_its_station(station, tmp_path, capsys):
    assert _batch(tmp_path / "out", "--station-file", str(station / "station.toml"), "--station", "other") == 1
    capsys.readouterr()
    assert main(["records", "--station-file", str(station / "station.toml"), "list"]) == 0
    assert "3 check(s)" in capsys.readouterr().out


def test_check_json_provenance_names_the_station_and_hashes_the_file(station, tmp_path):
    results = tmp_path / "r.json"
    unit = DEMO / "units" / "HA-0001"
    assert main(["analyze", "--terminated", str(unit / "terminated.flac"), "--tone", str(unit / "tone.flac"),
                 "--floor", str(DEMO / "floor.flac"), "--calibration", str(station / "cal" / "c.json"), "--rs", "20",
                 "--band", "20", "20000", "--json", str(results), "--quiet"]) == 0
    out = tmp_path / "check.json"
    assert main(["check", str(results), "--profile", str(DEMO / "known_good_profile.toml"), "--station-file",
                 str(station / "station.toml"), "--json", str(out)]) == 0
    prov = json.loads(out.read_text())["provenance"]
    assert (prov["station"], prov["operator"]) == ("bench-7", "kim")
    assert any(i["file"].endswith("station.toml") for i in prov["inputs"])
    assert len(connect(str(station / "rec.db")).checks()) == 1


@pytest.mark.parametrize("text, words", [
    ("station = 3\n", "'station' must be a non-empty text"),
    ('stationn = "x"\n', "unknown keys ['stationn']"),
    ('station = "x\n', "is not valid TOML"),
    ('calibration = "cal/none.json"\n', "not found: make one with 'benchnf calibrate'"),
])
def test_a_bad_station_file_is_refused_in_one_line_before_any_output(station, tmp_path, capsys, text, words):
    bad = tmp_path / "bad.toml"
    bad.write_text(text)
    assert _batch(tmp_path / "out", "--station-file", str(bad)) == ExitStatus.BAD_INPUT
    err = capsys.readouterr().err.strip()
    assert words in err and len(err.splitlines()) == 1
    assert not (tmp_path / "out").exists()


def test_a_missing_station_file_is_refused(station, tmp_path, capsys):
    assert main(["records", "--station-file", str(tmp_path / "none.toml"), "list"]) == ExitStatus.BAD_INPUT
    assert "no such file" in capsys.readouterr().err


def test_the_file_can_say_what_inputs_are_named_relative_to(station, tmp_path):
    results = tmp_path / "r.json"
    unit = DEMO / "units" / "HA-0001"
    assert main(["analyze", "--terminated", str(unit / "terminated.flac"), "--tone", str(unit / "tone.flac"),
                 "--floor", str(DEMO / "floor.flac"),
                 "--calibration", str(station / "cal" / "c.json"), "--rs", "20", "--band", "20", "20000",
                 "--json", str(results), "--quiet"]) == 0
    text = (station / "station.toml").read_text()
    (station / "station.toml").write_text(text + 'relative_to = "."\n')  # the station's own folder
    out = tmp_path / "check.json"
    assert main(["check", str(results), "--profile", str(DEMO / "known_good_profile.toml"), "--station-file",
                 str(station / "station.toml"), "--json", str(out)]) == 0
    named = {i["file"] for i in json.loads(out.read_text())["provenance"]["inputs"]}
    assert "station.toml" in named  # named from the station folder, not from the JSON's folder
    out2 = tmp_path / "check2.json"
    assert main(["check", str(results), "--profile", str(DEMO / "known_good_profile.toml"), "--station-file",
                 str(station / "station.toml"), "--relative-to", str(tmp_path), "--json", str(out2)]) == 0
    named = {i["file"] for i in json.loads(out2.read_text())["provenance"]["inputs"]}
    assert "station/station.toml" in named  # the command line comes first
