"""Band presets: fixed bands, and 'above-hum' whose lower edge follows the mains frequency found.

The demo captures (50 Hz hum) and a seeded synthetic capture with 60 Hz hum are INVENTED DATA.
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

from benchnf.cli import main
from benchnf.dsp.weighting import BAND_PRESETS, Band, above_hum_band

from synth import Bench

DEMO = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"


def test_fixed_presets():
    assert BAND_PRESETS == {"audio": Band(20.0, 20_000.0), "audio-22k": Band(22.0, 22_000.0)}
    assert above_hum_band(50.0) == Band(400.0, 20_000.0)
    assert above_hum_band(None) == Band(400.0, 20_000.0)  # no family found: 50 Hz assumed (wider band)


def _analyze(tmp_path, terminated, tone, vpfs, extra=()):
    out = tmp_path / "r.json"
    assert main(["analyze", "--terminated", str(terminated), "--tone", str(tone), "--volts-per-fs", str(vpfs),
                 "--band-preset", "above-hum", "--quiet", "--json", str(out), *extra]) == 0
    return json.loads(out.read_text())


def test_above_hum_starts_at_the_8th_harmonic_of_50_hz_mains(tmp_path):
    r = _analyze(tmp_path, DEMO / "terminated.flac", DEMO / "tone.flac", 2.0)
    assert r["mains_hz"] == 50.0 and r["band_hz"] == [400.0, 20_000.0]
    assert any("harmonic 8 of the mains frequency found (50 Hz)" in n for n in r["notes"])


def test_above_hum_follows_60_hz_mains(tmp_path):
    b = Bench(seconds=4.0, floor_v_per_rthz=10e-9, seed=3)
    caps = b.captures()
    x = caps["terminated"].read()
    t = np.arange(x.size) / b.sample_rate_hz
    hum = sum(a * np.sin(2 * math.pi * 60.0 * k * t) for k, a in ((1, 3e-4), (2, 5e-4), (3, 2e-4)))
    sf.write(tmp_path / "term.wav", x + hum / b.volts_per_fs, int(b.sample_rate_hz), subtype="FLOAT")
    sf.write(tmp_path / "tone.wav", caps["tone"].read(), int(b.sample_rate_hz), subtype="FLOAT")
    r = _analyze(tmp_path, tmp_path / "term.wav", tmp_path / "tone.wav", b.volts_per_fs,
                 ["--rs", "200", "--tone-input-vrms", "0.001"])
    assert r["mains_hz"] == pytest.approx(60.0) and r["band_hz"] == [480.0, 20_000.0]
