"""The noise source switched by benchnf: a keying tone on a sound-card output (acquire.source_drive), checked
sample by sample, then played through the real PortAudio/PulseAudio loopback and read back, and driven
during a receiver recording from the stand-in rtl_tcp server (invented data)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from benchnf.acquire.source_drive import DriveSettings, keying_block, parse_drive
from benchnf.cli import main
from benchnf.cli.status import ExitStatus
from benchnf.dsp.switched import block_powers, find_states
from benchnf.errors import ParameterError
from loopback_helpers import DEVICE, loopback_missing

loopback = pytest.mark.skipif(loopback_missing() is not None, reason=str(loopback_missing()))


def test_keying_alternates_cold_silence_and_hot_tone_without_clicks():
    s = DriveSettings(state_s=0.25, tone_hz=1000.0, level_dbfs=-6.0)
    n = s.state_frames
    x = keying_block(0, 4 * n, s)
    assert np.all(x[:n] == 0) and np.all(x[2 * n:3 * n] == 0)  # cold states: silence, the first one cold
    ramp = int(s.ramp_s * s.sample_rate_hz)
    middle = x[n + ramp:2 * n - ramp]
    # A sine's RMS is its peak / sqrt(2) (common practice); the peak is -6 dBFS.
    assert np.sqrt(np.mean(middle.astype(float) ** 2)) == pytest.approx(10 ** (-6 / 20) / np.sqrt(2), rel=1e-3)
    # Ramped in: within the first ramp the tone stays under its raised-cosine envelope, starting from 0.
    i = np.arange(ramp)
    envelope = 10 ** (-6 / 20) * (0.5 - 0.5 * np.cos(np.pi * i / ramp))
    assert x[n] == 0 and np.all(np.abs(x[n:n + ramp]) <= envelope + 1e-6)
    pieces = np.concatenate([keying_block(0, 1000, s), keying_block(1000, 4 * n - 1000, s)])
    assert np.array_equal(pieces, x)  # blocks join seamlessly, whatever the callback's size


@pytest.mark.parametrize("text, expected", [("pulse", ("pulse", 0)), ("pulse:2", ("pulse", 1)),
                                            ("default:2", (None, 1)), ("hw:1,0", ("hw:1,0", 0))])
def test_drive_address(text, expected):
    assert parse_drive(text) == expected


@pytest.mark.parametrize("kw", [dict(state_s=0.0), dict(tone_hz=30_000.0), dict(level_dbfs=3.0)])
def test_drive_settings_refused(kw):
    with pytest.raises(ParameterError):
        DriveSettings(**kw)


@loopback
def test_keying_through_the_loopback_is_found_as_hot_and_cold_states():
    """Played on the loopback's output and recorded from its monitor: a tone envelope a keying circuit would
    see. benchnf's own state finder sees alternating states of the keyed length."""
    import sounddevice as sd

    from benchnf.acquire.source_drive import SourceDrive
    fs, seconds, state_s = 48_000, 4.0, 0.5
    with SourceDrive(DriveSettings(DEVICE, 0, state_s)) as drive:
        rec = sd.rec(int(seconds * fs), samplerate=fs, channels=1, dtype="float32", device=DEVICE, blocking=True)
    assert drive.frames >= seconds * fs
    x = rec[:, 0].astype(float) + np.random.default_rng(1).normal(0, 1e-5, rec.shape[0])  # a detector's own noise
    block = int(0.01 * fs)
    sw = find_states(block_powers([x], block), block_frames=block, rate_hz=fs, guard_s=0.02, min_s=0.2)
    kept = [st for st in sw.states if st.dropped is None]
    assert len(kept) >= 5
    assert all(a.state != b.state for a, b in zip(sw.states, sw.states[1:]))
    spacing = np.diff([st.start for st in sw.states[1:]]) / fs  # start to start: the keyed length (the guards cancel)
    assert np.median(spacing) == pytest.approx(state_s, abs=0.02)


@loopback
def test_record_sdr_keys_the_source_and_says_so(tmp_path):
    from rtl_tcp_standin import Schedule, StandIn
    out = tmp_path / "keyed.sigmf-meta"
    with StandIn(schedule=Schedule(seed=2)) as s:
        rc = main(["record", "--sdr", s.address, "--centre-hz", "145e6", "--rate", "1024000", "--gain", "30",
                   "--condition", "switched", "--seconds", "2", "--drive-source", DEVICE, "--drive-state-s", "0.4",
                   "-o", str(out), "--quiet"])
    assert rc == ExitStatus.OK
    g = json.loads(out.read_text())["global"]
    assert g["benchnf:status"] == "complete"
    assert g["benchnf:drive_state_s"] == 0.4 and g["benchnf:drive_channel"] == 1
    assert g["benchnf:drive_states_played"] >= 4
