"""The provenance block of a results JSON: each calibration used with its identity, and file names
relative to the root the user states. Captures are the demo's (INVENTED DATA)."""

import hashlib
import json
from pathlib import Path

from benchnf.cli import main

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"


def _analyze(tmp_path, *extra):
    cal = tmp_path / "cal" / "c.json"
    if not cal.exists():
        cal.parent.mkdir()
        assert main(["calibrate", str(DEMO / "reference.flac"), "--vrms", "0.5", "-o", str(cal), "--quiet"]) == 0
    out = tmp_path / "res" / f"r{len(list(tmp_path.glob('res/*.json')))}.json"
    out.parent.mkdir(exist_ok=True)
    assert main(["analyze", "--terminated", str(DEMO / "terminated.flac"), "--tone", str(DEMO / "tone.flac"),
                 "--calibration", str(cal), "--json", str(out), "--quiet", *extra]) == 0
    return json.loads(out.read_text())["provenance"], cal, out


def test_the_calibration_is_named_with_its_hash_date_and_scale(tmp_path):
    prov, cal, _ = _analyze(tmp_path)
    stated = json.loads(cal.read_text())
    assert prov["calibrations"] == [{"file": "../cal/c.json", "sha256": hashlib.sha256(cal.read_bytes()).hexdigest(),
                                     "made_at": stated["made_at"], "volts_per_fs": stated["volts_per_fs"]}]


def test_without_a_calibration_file_there_is_no_calibration_block(tmp_path):
    out = tmp_path / "r.json"
    assert main(["analyze", "--terminated", str(DEMO / "terminated.flac"), "--tone", str(DEMO / "tone.flac"),
                 "--volts-per-fs", "2", "--json", str(out), "--quiet"]) == 0
    assert "calibrations" not in json.loads(out.read_text())["provenance"]


def test_names_are_relative_to_the_stated_root_and_lead_back_to_the_same_files(tmp_path):
    root = DEMO.parent.parent
    prov, _, _ = _analyze(tmp_path, "--relative-to", str(root))
    names = [i["file"] for i in prov["inputs"]]
    assert "benchnf/captures_demo/terminated.flac" in names and "benchnf/captures_demo/tone.json" in names
    for item in prov["inputs"]:
        assert not Path(item["file"]).is_absolute()
        assert hashlib.sha256((root / item["file"]).read_bytes()).hexdigest() == item["sha256"]


def test_a_stated_root_that_is_not_a_folder_is_refused(tmp_path, capsys):
    rc = main(["analyze", "--terminated", str(DEMO / "terminated.flac"), "--tone", str(DEMO / "tone.flac"),
               "--volts-per-fs", "2", "--json", str(tmp_path / "r.json"), "--relative-to", str(tmp_path / "no")])
    assert rc == 2 and "is not an existing folder" in capsys.readouterr().err
    assert not (tmp_path / "r.json").exists()
