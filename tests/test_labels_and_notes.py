"""Every figure says its detector and weighting and is compared only with like; the notes about what was
assumed come from one place for every measurement. Demo captures and seeded synthetic ones (INVENTED DATA)."""

import json
import re
from pathlib import Path

import soundfile as sf

from benchnf.cli import main
from benchnf.measure.assumptions import NO_FLOOR, temperature_assumed

from synth import Bench

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"
ANALYZE = ["analyze", "--terminated", str(DEMO / "terminated.flac"), "--floor", str(DEMO / "floor.flac"),
           "--tone", str(DEMO / "tone.flac"), "--volts-per-fs", "2", "--quiet"]


def test_quasi_peak_ein_is_labelled_and_the_thermal_limit_is_compared_with_the_rms_ein(capsys):
    assert main([*ANALYZE, "--weighting", "468", "--detector", "qp"]) == 0
    out = capsys.readouterr().out
    qp = re.search(r"EIN \(quasi-peak, 468-weighted\)\s+(-?\d+\.\d+) dBu", out)
    rms = re.search(r"EIN \(RMS, 468-weighted\)\s+(-?\d+\.\d+) dBu", out)
    thermal = re.search(r"thermal limit of Rs \(RMS, 468-weighted\)\s+(-?\d+\.\d+) dBu\s+\(the RMS EIN is "
                        r"(\d+\.\d+) dB above it\)", out)
    assert qp and rms and thermal
    assert float(thermal.group(2)) == round(float(rms.group(1)) - float(thermal.group(1)), 2)
    assert float(qp.group(1)) > float(rms.group(1))  # a quasi-peak meter reads noise higher than RMS
    assert "before floor subtraction, hum and spurs included" in out


def _sweep_files(tmp_path):
    paths = []
    for rs in (0.0, 200.0, 2000.0):
        b = Bench(seconds=2.0, rs_ohm=max(rs, 1e-9), floor_v_per_rthz=5e-9, seed=int(rs) + 1)
        caps = b.captures()
        p = tmp_path / f"r{int(rs)}.wav"
        sf.write(p, (caps["shorted"] if rs == 0 else caps["terminated"]).read(), 48_000, subtype="FLOAT")
        paths.append(f"{p}@{rs:g}")
    return paths


def test_eni_without_floor_or_temperature_says_so_as_analyze_does(tmp_path, capsys):
    out = tmp_path / "e.json"
    assert main(["eni", *_sweep_files(tmp_path), "--gain-db", "40", "--volts-per-fs", "2", "--quiet",
                 "--json", str(out)]) == 0
    notes = json.loads(out.read_text())["notes"]
    assert NO_FLOOR in notes and temperature_assumed(290.0) in notes
    b = Bench(seconds=2.0)
    caps = b.captures()
    sf.write(tmp_path / "t.wav", caps["terminated"].read(), 48_000, subtype="FLOAT")
    assert main(["analyze", "--terminated", str(tmp_path / "t.wav"), "--gain-db", "40", "--rs", "200",
                 "--volts-per-fs", "2", "--quiet", "--json", str(tmp_path / "a.json")]) == 0
    a_notes = json.loads((tmp_path / "a.json").read_text())["notes"]
    assert NO_FLOOR in a_notes and temperature_assumed(290.0) in a_notes
