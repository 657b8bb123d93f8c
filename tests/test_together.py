"""Captures of one measurement taken at another analyzer setting (seeded synthetic bench, INVENTED DATA):
refused where the sidecars say the settings differ, corrected exactly where they state the step in dB."""

import json

import pytest
import soundfile as sf

from benchnf.cli import ExitStatus, main

from synth import Bench

FS = 48_000
STEP_DB = 6.0


@pytest.fixture(scope="module")
def bench(tmp_path_factory):
    d = tmp_path_factory.mktemp("together")
    caps = Bench(seconds=4.0, floor_v_per_rthz=30e-9, seed=4).captures()
    for name in ("floor", "terminated", "tone"):
        x = caps[name].read()
        sf.write(d / f"{name}.wav", x, FS, subtype="FLOAT")
        sf.write(d / f"{name}_hot.wav", x * 10 ** (STEP_DB / 20), FS, subtype="FLOAT")  # the interface 6 dB up
    return d


def _side(path, **meta):
    path.with_suffix(".json").write_text(json.dumps(meta))


def _analyze(d, floor="floor", tone="tone", out="r.json"):
    return main(["analyze", "--terminated", str(d / "terminated.wav"), "--floor", str(d / f"{floor}.wav"),
                 "--tone", str(d / f"{tone}.wav"), "--tone-input-vrms", "1e-3", "--rs", "200", "--volts-per-fs", "2",
                 "--band", "20", "20000", "--quiet", "--overwrite", "--json", str(d / out)])


def _figures(d, out):
    data = json.loads((d / out).read_text())
    return data["ein_dbu"], data["gain_db"], data["notes"]


def test_a_stated_input_gain_step_is_corrected_exactly(bench):
    for name in ("floor", "terminated", "tone"):
        _side(bench / f"{name}.wav", input_gain_db=20.0)
        _side(bench / f"{name}_hot.wav", input_gain_db=20.0 + STEP_DB)
    assert _analyze(bench, out="right.json") == ExitStatus.OK
    assert _analyze(bench, floor="floor_hot", tone="tone_hot", out="hot.json") == ExitStatus.OK
    ein, gain, _ = _figures(bench, "right.json")
    ein_hot, gain_hot, notes = _figures(bench, "hot.json")
    assert gain_hot == pytest.approx(gain, abs=1e-9) and ein_hot == pytest.approx(ein, abs=1e-9)
    assert sum("+6.00 dB input gain" in n for n in notes) == 2  # the floor and the tone, each said


@pytest.mark.parametrize(("floor_meta", "pattern"), [
    ({"gain_setting": "2 o'clock"}, "states gain_setting = \"12 o'clock\" but the floor capture's \"2 o'clock\""),
    ({"calibration": "cal-monday.json"}, "states calibration = 'cal-friday.json' but the floor capture's "
                                         "'cal-monday.json'"),
])
def test_captures_at_another_setting_are_refused(bench, capsys, floor_meta, pattern):
    same = {"gain_setting": "12 o'clock", "calibration": "cal-friday.json"}
    _side(bench / "terminated.wav", **same)
    _side(bench / "tone.wav", **same)
    _side(bench / "floor_hot.wav", **{**same, **floor_meta})
    assert _analyze(bench, floor="floor_hot") == ExitStatus.BAD_INPUT
    err = capsys.readouterr().err
    assert pattern in err and len([ln for ln in err.splitlines() if "error:" in ln]) == 1


def test_an_input_gain_stated_for_some_captures_only_is_refused(bench, capsys):
    _side(bench / "terminated.wav", input_gain_db=20.0)
    _side(bench / "tone.wav", input_gain_db=20.0)
    _side(bench / "floor.wav")
    assert _analyze(bench) == ExitStatus.BAD_INPUT
    assert "the floor capture's does not" in capsys.readouterr().err
