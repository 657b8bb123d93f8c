"""Base files for the fault suite: a small, valid bench (seeded synthetic captures, INVENTED DATA) that
each fault case copies and then spoils in one way."""

from __future__ import annotations

import json
import math
import shutil
import sys
from pathlib import Path

import numpy as np
import soundfile as sf

HERE = Path(__file__).resolve().parent
DEMO = HERE.parent.parent / "benchnf" / "captures_demo"
sys.path.insert(0, str(HERE.parent))

from synth import Bench  # noqa: E402

FS = 48_000


def make_base(folder: Path) -> None:
    """Write the valid bench into `folder`."""
    from benchnf.cli import main
    b = Bench(seconds=2.0, floor_v_per_rthz=10e-9, seed=11)
    caps = b.captures()
    for name in ("floor", "terminated", "shorted", "tone"):
        sf.write(folder / f"{name}.wav", caps[name].read(), FS, subtype="PCM_24")
    (folder / "terminated.json").write_text(json.dumps({"condition": "terminated", "rs_ohm": 200.0}))
    (folder / "tone.json").write_text(json.dumps({"condition": "tone", "tone_input_vrms": 0.001}))
    t = np.arange(2 * FS) / FS
    sf.write(folder / "ref.wav", 0.25 * math.sqrt(2) / b.volts_per_fs * np.sin(2 * np.pi * 400 * t), FS,
             subtype="PCM_24")
    assert main(["calibrate", str(folder / "ref.wav"), "--vrms", "0.25", "-o", str(folder / "cal.json")]) == 0
    assert main(["analyze", "--terminated", str(folder / "terminated.wav"), "--floor", str(folder / "floor.wav"),
                 "--tone", str(folder / "tone.wav"), "--calibration", str(folder / "cal.json"), "--quiet",
                 "--json", str(folder / "results.json")]) == 0
    data = json.loads((folder / "results.json").read_text())
    for i, name in enumerate(("good2.json", "good3.json"), 1):  # two more good units for a profile (INVENTED)
        (folder / name).write_text(json.dumps({**data, "gain_db": data["gain_db"] + 0.02 * i}))
    for name in ("head_amp_chain.toml", "known_good_profile.toml", "noise_source_enr.toml"):
        shutil.copy(DEMO / name, folder / name)
    for stem in ("vhf_hot", "vhf_cold"):
        for ext in (".sigmf-meta", ".sigmf-data"):
            shutil.copy(DEMO / f"{stem}{ext}", folder / f"{stem}{ext}")
    unit = folder / "units" / "U-1"
    unit.mkdir(parents=True)
    for name in ("terminated", "tone"):
        shutil.copy(folder / f"{name}.wav", unit / f"{name}.wav")
        shutil.copy(folder / f"{name}.json", unit / f"{name}.json")
    (folder / "plan.toml").write_text(
        'name = "fault plan"\nsample_rate_hz = 48000\n[analysis]\nrs_ohm = 200\nvolts_per_fs = 2.0\n'
        '[[step]]\ncondition = "floor"\nseconds = 1\nprompt = "terminate the input"\n')
    (folder / "out").mkdir()
