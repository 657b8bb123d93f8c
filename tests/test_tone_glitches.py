"""Why calibrate-output plays its tone again when the sine fit's residual is within 30 dB of the tone.

A tone that came back through a sound system that dropped or repeated samples reads low: the one-phase
sine fit (IEEE 1057, dsp.tones.fit_sine) averages the parts either side of a phase jump. Signals are
synthetic (INVENTED DATA, seeded): a clean sine with noise 60 dB down, the same with a 20 ms gap of
zeros, and with 10 ms of it played twice.
"""

import numpy as np
import pytest

from benchnf.dsp.tones import fit_sine

FS, F, A = 48_000, 1000.0, 0.3
THRESHOLD_DB = 30.0  # benchnf/cli/calibrate_output.py _MIN_SNR_DB


def _tone():
    t = np.arange(int(1.8 * FS)) / FS
    return A * np.sin(2 * np.pi * F * t) + np.random.default_rng(2).normal(0, A / np.sqrt(2) * 1e-3, t.size)


def test_the_threshold_is_the_module_s():
    from benchnf.cli import calibrate_output
    assert calibrate_output._MIN_SNR_DB == THRESHOLD_DB


def test_a_clean_tone_passes_with_its_amplitude():
    fit = fit_sine(_tone(), sample_rate_hz=FS, frequency_hz=F)
    assert fit.snr_db > 55 and fit.amplitude == pytest.approx(A, rel=1e-3)


@pytest.mark.parametrize("jump", [12, 24, 36])  # a quarter, half and three quarters of the 48-sample period
def test_a_repeated_buffer_reads_low_and_is_caught(jump):
    x = _tone()
    glitch = np.concatenate([x[:40_000], x[40_000 - 480 - jump:]])  # 10 ms and `jump` samples played twice
    fit = fit_sine(glitch, sample_rate_hz=FS, frequency_hz=F)
    assert fit.amplitude < 0.99 * A  # what the output calibration would have reported
    assert fit.snr_db < THRESHOLD_DB


def test_a_gap_of_zeros_is_caught():
    x = _tone()
    x[40_000:40_960] = 0.0
    assert fit_sine(x, sample_rate_hz=FS, frequency_hz=F).snr_db < THRESHOLD_DB


class _Loop:
    """A stand-in for the sound card's loop (INVENTED DATA): returns the takes it is given, in turn."""

    def __init__(self, takes):
        self.takes, self.calls = list(takes), 0
        self.input = type("Dev", (), {"name": "test loop"})()

    def __call__(self, *args, **kwargs):
        return self

    def play_and_record(self, signal, *, sample_rate_hz, channels=1, output_device=None):
        self.calls += 1
        take = self.takes.pop(0)
        return take(signal[:, :channels].copy())


def _calibration(tmp_path):
    import json
    cal = tmp_path / "cal.json"
    cal.write_text(json.dumps({"schema": "benchnf.calibration/1", "volts_per_fs": 2.0, "channel": 0,
                               "sample_rate_hz": 48000.0, "reference_vrms": 0.5, "reference_frequency_hz": 1000.0,
                               "reference_level_dbfs": -9.0, "tone_snr_db": 90.0, "made_at": "2026-12-02T00:00:00Z"}))
    return cal


def _glitched(x):
    x = x.copy()
    x[20_000:] = np.concatenate([x[20_000 - 492:-492]])  # 10.25 ms played twice from here on
    return x


@pytest.mark.parametrize("takes, calls, ok", [
    ([lambda x: x], 1, True),
    ([_glitched, lambda x: x], 2, True),
    ([lambda x: 0 * x] * 3, 3, False),
])
def test_calibrate_output_plays_again_and_then_refuses(tmp_path, monkeypatch, capsys, takes, calls, ok):
    import json

    import benchnf.acquire.record as record
    from benchnf.cli import main
    loop = _Loop(takes)
    monkeypatch.setattr(record, "SoundcardRecorder", loop)
    out = tmp_path / "out.json"
    rc = main(["calibrate-output", "--calibration", str(_calibration(tmp_path)), "-o", str(out), "--tone-hz", "1000"])
    err = capsys.readouterr().err
    assert loop.calls == calls and (rc == 0) == ok
    if ok:
        assert json.loads(out.read_text())["output_volts_per_fs"] == pytest.approx(2.0, rel=1e-6)
        assert err.count("played again") == calls - 1
    else:
        assert not out.exists() and "in 3 tries, the 2 s tone did not come back whole" in err


@pytest.mark.parametrize("broken, asked", [(False, 0), (True, 1)])
def test_a_guided_tone_step_with_a_glitch_asks_to_record_again(tmp_path, broken, asked):
    import soundfile as sf

    from benchnf.acquire.plan import PlanStep, check_capture
    x = _tone()
    if broken:
        x = _glitched(x)
    path = tmp_path / "tone.wav"
    sf.write(str(path), x.astype(np.float32), FS, subtype="FLOAT")
    problems = check_capture(path, step=PlanStep("tone", 1.8, tone_hz=F), floor_path=None)
    assert sum("record it again" in p for p in problems) == asked
