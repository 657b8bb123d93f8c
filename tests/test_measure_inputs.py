"""The one priority rule for stated values (benchnf.measure.inputs), and one figure from every front end.

Captures are the shipped demo captures (INVENTED DATA).
"""

import json
import shutil
from pathlib import Path

import pytest

from benchnf.cli import ExitStatus, main
from benchnf.errors import ParameterError
from benchnf.measure import agree
from benchnf.measure.requests import GainMethodRequest, run_gain_method

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"


def test_the_first_place_that_states_a_value_names_it_and_others_must_agree():
    assert agree("x", [("a", None), ("b", 2.0), ("c", 2.0)]) == 2.0
    assert agree("x", [("a", None), ("b", None)], default=7.0) == 7.0
    assert agree("vpfs", [("a", 2.0), ("b", 2.019)], rel_tol=0.01) == 2.0
    with pytest.raises(ParameterError, match=r"is 150 ohm in a but 200 ohm in b"):
        agree("source resistance", [("a", 150.0), ("b", 200.0)], unit=" ohm")
    with pytest.raises(ParameterError, match="is 20 20000 Hz in a but 22 22000 Hz in b"):
        agree("band", [("a", (20.0, 20000.0)), ("b", (22.0, 22000.0))], unit=" Hz")


def test_stated_rs_that_contradicts_the_sidecar_is_refused_naming_both(capsys):
    rc = main(["analyze", "--terminated", str(DEMO / "terminated.flac"), "--tone", str(DEMO / "tone.flac"),
               "--volts-per-fs", "2", "--rs", "150", "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == ExitStatus.BAD_INPUT and len(err) == 1
    assert "150 ohm in the stated --rs but 20 ohm in the sidecar of terminated.flac" in err[0]


def test_a_calibration_6_db_from_the_sidecar_is_refused(tmp_path, capsys):
    for name in ("terminated", "tone"):
        shutil.copy(DEMO / f"{name}.flac", tmp_path / f"{name}.flac")
        side = json.loads((DEMO / f"{name}.json").read_text())
        side["volts_per_fs"] = 1.0  # the calibration below says 2.0: 6 dB apart
        (tmp_path / f"{name}.json").write_text(json.dumps(side))
    rc = main(["analyze", "--terminated", str(tmp_path / "terminated.flac"), "--tone", str(tmp_path / "tone.flac"),
               "--volts-per-fs", "2", "--quiet"])
    err = capsys.readouterr().err
    assert rc == ExitStatus.BAD_INPUT and "volts per full scale is 2 V in --volts-per-fs but 1 V" in err


@pytest.mark.parametrize("role", ["--floor", "--shorted"])
def test_one_recording_given_for_two_conditions_is_refused(role, tmp_path, capsys):
    # The same data as terminated and as floor (or shorted) would read the difference between them as zero.
    # A hard link is the same file too.
    others = [DEMO / "terminated.flac", tmp_path / "again.flac"]
    try:
        others[1].hardlink_to(others[0])
    except OSError:  # another file system: the path alone
        others.pop()
    for other in others:
        rc = main(["analyze", "--terminated", str(DEMO / "terminated.flac"), role, str(other),
                   "--tone", str(DEMO / "tone.flac"), "--volts-per-fs", "2", "--quiet"])
        err = capsys.readouterr().err.strip().splitlines()
        assert rc == ExitStatus.BAD_INPUT and len(err) == 1
        assert "are the same file, given twice (as terminated, floor, shorted or background)" in err[0]


def test_batch_and_analyze_give_the_same_figure_for_one_unit(tmp_path, capsys):
    unit = DEMO / "units" / "HA-0001"
    out = tmp_path / "r.json"
    assert main(["analyze", "--terminated", str(unit / "terminated.flac"), "--tone", str(unit / "tone.flac"),
                 "--floor", str(DEMO / "floor.flac"), "--volts-per-fs", "2", "--quiet", "--json", str(out)]) == 0
    from_cli = json.loads(out.read_text())
    req = GainMethodRequest(terminated=(unit / "terminated.flac",), tone=unit / "tone.flac",
                            floor=DEMO / "floor.flac", volts_per_fs=2.0,
                            conditions={"rs_ohm": 20.0, "band_hz": (20.0, 20000.0), "weighting": "none"})
    from_request = run_gain_method(req).to_dict()
    for key in ("gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db"):
        assert from_request[key] == from_cli[key]
    with pytest.raises(ParameterError, match="source resistance is 20 ohm in the sidecar"):
        run_gain_method(GainMethodRequest(terminated=(unit / "terminated.flac",), tone=unit / "tone.flac",
                                          volts_per_fs=2.0, conditions={"rs_ohm": 150.0}))


def test_results_json_carries_its_provenance(tmp_path):
    import hashlib
    import os
    import shutil
    for name in ("terminated", "tone"):
        shutil.copy(DEMO / f"{name}.flac", tmp_path / f"{name}.flac")
        shutil.copy(DEMO / f"{name}.json", tmp_path / f"{name}.json")
    (tmp_path / "out").mkdir()
    out = tmp_path / "out" / "r.json"
    assert main(["analyze", "--terminated", str(tmp_path / "terminated.flac"), "--tone", str(tmp_path / "tone.flac"),
                 "--volts-per-fs", "2", "--quiet", "--json", str(out)]) == 0
    prov = json.loads(out.read_text())["provenance"]
    assert prov["software"].startswith("benchnf ") and prov["created_utc"].endswith("+00:00")
    files = {i["file"]: i["sha256"] for i in prov["inputs"]}
    assert set(files) == {"../terminated.flac", "../terminated.json", "../tone.flac", "../tone.json"}
    for name, digest in files.items():
        assert hashlib.sha256((out.parent / name).read_bytes()).hexdigest() == digest
    assert not any(os.path.isabs(f) for f in files)
