"""The real sounddevice/PortAudio path through a PulseAudio null-sink loopback (started by .ci/run).

What is played into the null sink comes back on its monitor source, so levels, alignment, sample
counts and crash safety can be checked against what was played.  These tests are skipped on a machine
without the loopback, but never in CI (CI=true makes a missing loopback a failure).
"""

import json
import math
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

from benchnf.cli import ExitStatus, main
from loopback_helpers import DEVICE, loopback_missing, loopback_plan, run_plan_stepping

FS = 48_000


_WHY = loopback_missing()
pytestmark = pytest.mark.skipif(_WHY is not None, reason=_WHY or "")


def _play_in_background(signal_fs: np.ndarray, delay_s: float = 0.0) -> threading.Thread:
    import sounddevice as sd

    def run():
        time.sleep(delay_s)
        with sd.OutputStream(samplerate=FS, channels=2, dtype="float32", device=DEVICE) as stream:
            stream.write(np.column_stack([signal_fs, signal_fs]).astype(np.float32))

    t = threading.Thread(target=run, daemon=True)
    t.start()
    return t


def test_devices_lists_the_loopback(capsys):
    assert main(["devices"]) == 0
    assert DEVICE in capsys.readouterr().out


def test_recorded_sample_count_and_sidecar(tmp_path):
    out = tmp_path / "floor.wav"
    assert main(["record", "--device", DEVICE, "--seconds", "1.5", "--condition", "floor", "-o", str(out),
                 "--quiet"]) == 0
    info = sf.info(str(out))
    assert info.frames == int(1.5 * FS) and info.samplerate == FS
    side = json.loads((tmp_path / "floor.json").read_text())
    assert side["condition"] == "floor" and side["frames"] == int(1.5 * FS) and side["host_api"]
    assert side["dropouts"] is False
    assert main(["record", "--device", DEVICE, "--seconds", "1", "--condition", "floor", "-o", str(out),
                 "--quiet"]) == ExitStatus.BAD_INPUT  # never overwritten


def test_play_and_record_level_and_alignment(tmp_path):
    from benchnf.acquire.signals import align_lag, make_signal
    from benchnf.dsp.tones import fit_sine
    for take in (1, 2, 3):  # a take the loopback broke (dropped or repeated samples) shows as a big residual
        out = tmp_path / f"tone{take}.wav"
        assert main(["excite", "--device", DEVICE, "--signal", "tone", "--tone-hz", "997", "--level-dbfs", "-20",
                     "--seconds", "2", "--channels", "2", "-o", str(out), "--quiet"]) == 0
        x, fs = sf.read(str(out))
        fit = fit_sine(x[4800:-4800, 0], sample_rate_hz=fs)  # the middle: the ends depend on the stream's timing
        if fit.snr_db > 60:  # a whole take: float32 and lossless, nothing left but rounding
            break
    # Played: -20 dBFS RMS (AES17), i.e. amplitude 0.1 FS; the null sink is float32 and lossless.
    assert 20 * math.log10(fit.amplitude) == pytest.approx(-20.0, abs=0.05)
    assert fit.frequency_hz == pytest.approx(997.0, abs=0.01)
    ref = make_signal("tone", sample_rate_hz=fs, seconds=2, level_dbfs=-20, frequency_hz=997)
    assert abs(align_lag(x[:, 0], ref)) <= 1  # aligned: what was played starts at sample 0
    assert json.loads(out.with_suffix(".json").read_text())["latency_frames"] > 0


def test_noise_level_through_the_loopback(tmp_path):
    from benchnf.dsp.spectrum import welch_psd
    rng = np.random.default_rng(3)
    sigma = 0.003
    noise = rng.normal(0, sigma, int(4 * FS)).astype(np.float32)
    player = _play_in_background(noise, delay_s=0.3)
    out = tmp_path / "noise.wav"
    assert main(["record", "--device", DEVICE, "--seconds", "3", "--condition", "terminated", "-o", str(out),
                 "--quiet"]) == 0
    player.join()
    x, _ = sf.read(str(out))
    psd = welch_psd(x[int(0.8 * FS):int(2.8 * FS)], sample_rate_hz=FS, segment_length=4096)
    sel = (psd.frequency_hz > 100) & (psd.frequency_hz < 20_000)
    # White noise of variance s^2 reads 2 s^2/fs one-sided (REFERENCES.md, common practice).
    assert np.median(psd.psd_per_hz[sel]) == pytest.approx(2 * sigma ** 2 / FS, rel=0.08)


def test_killed_recording_is_readable_and_recoverable(tmp_path):
    from benchnf.acquire.record import recover_wav
    from benchnf.io import open_capture
    out = tmp_path / "long.wav"
    proc = subprocess.Popen([sys.executable, "-m", "benchnf", "record", "--device", DEVICE, "--seconds", "60",
                             "--condition", "terminated", "--rs", "150", "-o", str(out), "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    time.sleep(4.0)
    proc.kill()
    proc.wait(timeout=10)
    # The sidecar was written before the first sample: the condition, the device and Rs survive kill -9.
    side = json.loads((tmp_path / "long.json").read_text())
    assert (side["status"], side["condition"], side["rs_ohm"], side["device"]) == ("recording", "terminated",
                                                                                    150.0, DEVICE)
    cap = open_capture(out)  # the header was kept valid: no recovery needed
    assert cap.n_frames > FS // 2 and sum(b.size for b in cap.blocks()) == cap.n_frames
    # A stale header (as older recorders leave it): recover rescues every frame, the file untouched.
    raw = bytearray(out.read_bytes())
    i = raw.index(b"data")
    raw[i + 4:i + 8] = (0).to_bytes(4, "little")
    stale = tmp_path / "stale.wav"
    stale.write_bytes(bytes(raw))
    before = stale.read_bytes()
    assert main(["recover", str(stale), "-o", str(tmp_path / "rescued.wav")]) == 0
    assert stale.read_bytes() == before
    assert sf.info(str(tmp_path / "rescued.wav")).frames == cap.n_frames
    assert recover_wav is not None


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM], ids=["Ctrl-C", "SIGTERM"])
def test_ctrl_c_and_sigterm_keep_what_was_recorded(tmp_path, sig):
    out = tmp_path / "stopped.wav"
    proc = subprocess.Popen([sys.executable, "-m", "benchnf", "record", "--device", DEVICE, "--seconds", "60",
                             "--condition", "floor", "-o", str(out), "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    time.sleep(4.0)  # the interpreter's start-up and the stream's take a second or two
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=20)
    assert proc.returncode == ExitStatus.INTERRUPTED, err
    side = json.loads((tmp_path / "stopped.json").read_text())
    assert side["interrupted"] is True and side["frames"] > FS // 2 and side["status"] == "interrupted"
    assert sf.info(str(out)).frames == side["frames"]


def test_guided_plan_runs_non_interactively(tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text(loopback_plan(seconds=2.5, out_dir=str(tmp_path / 'run'), fs=FS))

    rng = np.random.default_rng(4)
    # What the loopback carries follows the plan (invented data): a floor, then a louder "DUT" noise, then
    # a 1 kHz tone over it.  The source moves on each time a capture has been checked.
    state = {"mode": 0, "n": 0}

    def source(outdata, frames, _t, _status):
        noise = rng.normal(0, (1e-5, 3e-4, 3e-4)[state["mode"]], frames)
        if state["mode"] == 2:
            noise += 0.1 * np.sin(2 * np.pi * 1000 * (state["n"] + np.arange(frames)) / FS)
        state["n"] += frames
        outdata[:] = np.column_stack([noise, noise]).astype(np.float32)

    seen: list[str] = []
    rc = run_plan_stepping(plan, source, state, fs=FS, seen=seen)
    assert rc == 0
    assert seen == ["floor.wav", "terminated.wav", "tone.wav"]
    results = json.loads((tmp_path / "run" / "results.json").read_text())
    assert results["floor_corrected"] is True and results["gain_db"] > 30
    named = {i["file"] for i in results["provenance"]["inputs"]}  # the plan and each capture with its sidecar
    assert {"floor.wav", "terminated.wav", "tone.wav", "tone.json"} <= named and plan.name in {Path(n).name for n in named}


def test_missing_portaudio_gives_exit_3(monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "sounddevice", None)
    assert main(["devices"]) == ExitStatus.MISSING_DEPENDENCY
    assert "pip install 'benchnf[audio]'" in capsys.readouterr().err


def test_live_calibration_and_output_calibration(tmp_path):
    # A 400 Hz sine of amplitude 0.3 FS played into the loopback, "read on a meter" as 0.5 V RMS: the input
    # then gives 0.5 sqrt(2) / 0.3 V per full scale; the lossless loopback output must give the same.
    t = np.arange(int(6 * FS)) / FS
    player = _play_in_background((0.3 * np.sin(2 * np.pi * 400 * t)).astype(np.float32), delay_s=0.0)
    time.sleep(1.0)
    cal = tmp_path / "cal.json"
    assert main(["calibrate", "--device", DEVICE, "--vrms", "0.5", "--seconds", "2", "-o", str(cal)]) == 0
    player.join()
    vpfs = json.loads(cal.read_text())["volts_per_fs"]
    assert vpfs == pytest.approx(0.5 * math.sqrt(2) / 0.3, rel=1e-3)
    out = tmp_path / "out_cal.json"
    assert main(["calibrate-output", "--calibration", str(cal), "--device", DEVICE, "-o", str(out)]) == 0
    assert json.loads(out.read_text())["output_volts_per_fs"] == pytest.approx(vpfs, rel=2e-3)


def test_live_view_updates_several_times_a_second(tmp_path):
    from benchnf.acquire.live import run_live
    from benchnf.dsp.weighting import Band
    import io
    buf = io.StringIO()
    n = run_live(device=DEVICE, host_api=None, sample_rate_hz=FS, volts_per_fs=None, band=Band(20, 20000),
                 update_hz=5, seconds=4.0, out=buf)
    assert n >= 8  # about 5 per second once the stream is up and the first segment is in (the rate: benchmarks)
    assert "band noise" in buf.getvalue()


def test_no_matching_device_gives_exit_3(tmp_path, capsys):
    rc = main(["record", "--device", "no-such-card-xyz", "--seconds", "1", "--condition", "floor",
               "-o", str(tmp_path / "x.wav")])
    assert rc == ExitStatus.MISSING_DEPENDENCY
    assert "no input device matches 'no-such-card-xyz'" in capsys.readouterr().err
    assert not (tmp_path / "x.wav").exists()


def test_impossible_channel_count_is_refused(tmp_path, capsys):
    rc = main(["record", "--device", DEVICE, "--seconds", "1", "--channels", "64", "--condition", "floor",
               "-o", str(tmp_path / "x.wav")])
    assert rc == ExitStatus.BAD_INPUT and "input channels" in capsys.readouterr().err


def test_a_start_that_fails_leaves_no_file(tmp_path, capsys):
    rc = main(["record", "--device", DEVICE, "--rate", "9999999", "--seconds", "1", "--condition", "floor",
               "-o", str(tmp_path / "never.wav")])
    err = capsys.readouterr().err.strip().splitlines()  # "recording from ..." then the one error line
    assert rc == ExitStatus.BAD_INPUT and err[-1].startswith("benchnf: error:") and "Invalid sample rate" in err[-1]
    assert list(tmp_path.iterdir()) == []
