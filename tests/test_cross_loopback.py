"""The cross-spectrum estimate through the real sounddevice/PortAudio path: a two-channel recording of the
PulseAudio null-sink loopback (started by .ci/run). What is played comes back losslessly on its monitor, so
the "inputs' own noise" is played too: a common noise (the DUT, INVENTED DATA) plus an independent noise on
each channel 10 dB above it. Skipped without the loopback, never in CI."""

import json
import math
import threading
import time

import numpy as np
import pytest

from benchnf.cli import main
from loopback_helpers import DEVICE, loopback_missing, run_plan_stepping

FS = 48_000
_WHY = loopback_missing()
pytestmark = pytest.mark.skipif(_WHY is not None, reason=_WHY or "")


def _play(stereo: np.ndarray) -> threading.Thread:
    import sounddevice as sd

    def run():
        with sd.OutputStream(samplerate=FS, channels=2, dtype="float32", device=DEVICE) as stream:
            stream.write(stereo.astype(np.float32))
    t = threading.Thread(target=run, daemon=True)
    t.start()
    return t


def test_two_channel_recording_measures_under_each_input(tmp_path):
    rng = np.random.default_rng(21)
    sigma = 1e-3  # the common ("DUT") noise, full-scale units = volts here
    n = int(9 * FS)
    common = rng.normal(0, sigma, n)
    stereo = np.column_stack([common + rng.normal(0, sigma * math.sqrt(10), n),
                              common + rng.normal(0, sigma * math.sqrt(10), n)])
    player = _play(stereo)
    time.sleep(1.0)  # the whole recording lies inside what is played
    out = tmp_path / "split.wav"
    assert main(["record", "--device", DEVICE, "--seconds", "6", "--channels", "2", "--condition", "terminated",
                 "--volts-per-fs", "1", "-o", str(out), "--quiet"]) == 0
    player.join()
    r_json = tmp_path / "r.json"
    assert main(["analyze", "--terminated", str(out), "--cross", "--cross-volts-per-fs", "1", "--gain-db", "0",
                 "--rs", "200", "--temperature-k", "290", "--json", str(r_json), "--quiet"]) == 0
    r = json.loads(r_json.read_text())
    # White noise of variance s² reads 2 s²/fs one-sided (REFERENCES.md, common practice): over 20 Hz-20 kHz
    # the output noise is s sqrt(2 * 19980 / fs).
    truth_db = 20 * math.log10(sigma * math.sqrt(2 * 19_980 / FS))
    got_db = 20 * math.log10(r["output_noise_vrms"])
    assert abs(got_db - truth_db) <= r["uncertainty"]["output_noise_db"] + 0.05
    assert r["cross"]["channel_margin_db"] == pytest.approx(-10.0, abs=0.6)
    assert r["cross"]["channels"] == [0, 1]


PLAN = '''name = "cross plan"
device = "{device}"
sample_rate_hz = {fs}
channels = 2
out_dir = "{out}"

[analysis]
rs_ohm = 200
temperature_k = 290
volts_per_fs = 1.0
cross = true
cross_volts_per_fs = 1.0

[[step]]
condition = "floor"
name = "background"
seconds = 3
prompt = "Terminate both analyzer inputs."

[[step]]
condition = "terminated"
seconds = 4
prompt = "Split the amplifier's output to both inputs; terminate its input in 200 ohm."
cautions = ["split"]

[[step]]
condition = "tone"
seconds = 2
tone_hz = 1000
tone_input_vrms = 0.001
'''


def test_a_guided_plan_measures_with_the_cross_spectrum(tmp_path, capsys):

    plan = tmp_path / "plan.toml"
    plan.write_text(PLAN.format(device=DEVICE, fs=FS, out=tmp_path / "run"))
    rng = np.random.default_rng(22)
    state = {"mode": 0, "n": 0}
    own = 1e-3  # each input's own noise; the "DUT" 10 dB under it; then a 1 kHz tone over it (INVENTED DATA)

    def source(outdata, frames, _t, _status):
        common = rng.normal(0, (0.0, own / math.sqrt(10), own / math.sqrt(10))[state["mode"]], frames)
        if state["mode"] == 2:
            common += 0.1 * np.sin(2 * np.pi * 1000 * (state["n"] + np.arange(frames)) / FS)
        state["n"] += frames
        outdata[:] = np.column_stack([common + rng.normal(0, own, frames),
                                      common + rng.normal(0, own, frames)]).astype(np.float32)

    rc = run_plan_stepping(plan, source, state, fs=FS)
    assert rc == 0
    assert "Split the DUT output to both inputs" in capsys.readouterr().out  # the caution is shown
    r = json.loads((tmp_path / "run" / "results.json").read_text())
    assert r["output_estimator"] == "cross-spectrum" and r["files"]["background"].endswith("background.wav")
    # Gain: 0.1 FS amplitude out for 1 mV RMS in: 20 lg(0.0707 / 0.001) = 36.99 dB (common practice).
    assert r["gain_db"] == pytest.approx(36.99, abs=0.05)
    assert r["cross"]["channel_margin_db"] == pytest.approx(-10.0, abs=1.0)


def test_record_states_each_inputs_calibration(tmp_path):
    from benchnf.calibration import calibrate_from_tone
    from benchnf.capture import Capture
    # Two calibrations of our own making (INVENTED DATA): a 0.5 V RMS tone read as 0.5 and as 0.25 of full scale.
    t = np.arange(int(2 * FS)) / FS
    for ch, amplitude in ((0, 0.5), (1, 0.25)):
        tone = np.column_stack([amplitude * np.sin(2 * np.pi * 400 * t)] * 2)
        calibrate_from_tone(Capture.from_array(tone, sample_rate_hz=FS, channel=ch), vrms=0.5).save(
            tmp_path / f"cal{ch}.json")
    out = tmp_path / "two.wav"
    assert main(["record", "--device", DEVICE, "--seconds", "1", "--channels", "2", "--condition", "terminated",
                 "--calibration", str(tmp_path / "cal0.json"), "--input-calibration", str(tmp_path / "cal1.json"),
                 "-o", str(out), "--quiet"]) == 0
    side = json.loads(out.with_suffix(".json").read_text())
    assert side["channel_volts_per_fs"]["0"] == pytest.approx(math.sqrt(2), rel=1e-6)  # sqrt(2) 0.5 / 0.5
    assert side["channel_volts_per_fs"]["1"] == pytest.approx(2 * math.sqrt(2), rel=1e-6)
