"""The golden-output cases: the demo and seeded command-line runs that cover the branches it skips.

`make_inputs` writes seeded synthetic captures (INVENTED DATA, from tests/synth.py) beside the
demo captures; `CASES` names each run's arguments with ``{demo}`` and ``{tmp}`` placeholders.
`run_case` runs one in-process and returns its outputs as text, with machine paths replaced by
``<DEMO>`` and ``<TMP>``, so the recorded files compare exactly on any clone.

Regenerate only in a commit labelled as changing numbers: ``python tests/golden/record.py``.
"""

from __future__ import annotations

import contextlib
import io
import math
import re
import sys
from pathlib import Path

import numpy as np
import soundfile as sf

HERE = Path(__file__).resolve().parent
DEMO = HERE.parent.parent / "benchnf" / "captures_demo"
sys.path.insert(0, str(HERE.parent))

from synth import Bench  # noqa: E402

_ANALYZE = ["analyze", "--terminated", "{demo}/terminated.flac", "--floor", "{demo}/floor.flac",
            "--tone", "{demo}/tone.flac", "--volts-per-fs", "2.0", "--quiet"]

# name: (argv, output files the run writes, relative to {tmp})
CASES: dict[str, tuple[list[str], list[str]]] = {
    "analyze_repeats": (["analyze", "--terminated", "{tmp}/term_a.wav", "{tmp}/term_b.wav", "--floor",
                         "{tmp}/floor.wav", "--tone", "{tmp}/tone.wav", "--tone-input-vrms", "0.001",
                         "--rs", "200", "--volts-per-fs", "2.0", "--quiet", "--json", "{tmp}/out/rep.json"],
                        ["out/rep.json"]),
    "analyze_468_qp": ([*_ANALYZE, "--weighting", "468", "--detector", "qp", "--json", "{tmp}/out/qp.json"],
                       ["out/qp.json"]),
    "analyze_a_weighted_wide": ([*_ANALYZE, "--weighting", "A", "--band-preset", "audio-22k"], []),
    "analyze_stated_gain": (["analyze", "--terminated", "{demo}/terminated.flac", "--floor", "{demo}/floor.flac",
                             "--gain-db", "36", "--volts-per-fs", "2.0", "--quiet"], []),
    "analyze_two_channel_tone": (["analyze", "--terminated", "{tmp}/term_a.wav", "--floor", "{tmp}/floor.wav",
                                  "--tone", "{tmp}/tone2.wav", "--tone-input-channel", "1", "--channel", "0",
                                  "--rs", "200", "--volts-per-fs", "2.0", "--quiet"], []),
    "analyze_zin": ([*_ANALYZE, "--zin-ohm", "2000", "--tone-input-vrms", "0.001"], []),
    "analyze_csv_trace": (["analyze", "--terminated", "{tmp}/trace.csv", "--gain-db", "40", "--rs", "200",
                           "--quiet"], []),
    "analyze_snr_explain": ([*_ANALYZE, "--reference-dbu", "4", "--explain", "--shorted",
                             "{demo}/shorted.flac"], []),
    "yfactor_losses": (["yfactor", "--hot", "{demo}/bath_hot.flac", "--cold", "{demo}/bath_cold.flac",
                        "--floor", "{demo}/bath_floor.flac", "--t-hot-k", "373.15", "--t-cold-k", "273.15",
                        "--source-side", "0.5", "296", "--source-side", "0.2", "77",  "--rows", "4", "--quiet",
                        "--json", "{tmp}/out/y.json"], ["out/y.json"]),
    "eni_three_rs": (["eni", "{demo}/shorted.flac@0", "{demo}/terminated.flac@20", "{demo}/rs_100.flac@100",
                      "{demo}/rs_1000.flac@1000", "--tone", "{demo}/tone.flac", "--floor", "{demo}/floor.flac",
                      "--volts-per-fs", "2.0", "--quiet", "--json", "{tmp}/out/eni.json"], ["out/eni.json"]),
    "cascade_what_if": (["cascade", "{demo}/head_amp_chain.toml", "--what-if", "1", "nf_db=1.2",
                         "--json", "{tmp}/out/cascade.json"], ["out/cascade.json"]),
    "check_unit": (["check", "--profile", "{demo}/known_good_profile.toml", "{tmp}/unit.json",
                    "--unit", "U-1", "--json", "{tmp}/out/check.json"], ["out/check.json"]),
    "batch_units": (["batch", "{demo}/units", "--profile", "{demo}/known_good_profile.toml",
                     "--floor", "{demo}/floor.flac", "--volts-per-fs", "2.0", "--workers", "1",
                     "-o", "{tmp}/batch", "--quiet"], ["batch/summary.csv", "batch/junit.xml"]),
    "bias_jfet_weighted": (["bias", "jfet", "--id", "2m", "--idss", "8m", "--vp", "-1.5", "--ig", "5p",
                            "--corner-hz", "200", "--rs", "10k", "--weighting", "A", "--optimise",
                            "--json", "{tmp}/out/jfet.json"], ["out/jfet.json"]),
    "bias_parts": (["bias", "parts", "{tmp}/parts.toml", "--rs", "200", "--json", "{tmp}/out/parts.json"],
                   ["out/parts.json"]),
    "bias_from_eni": (["bias", "bjt", "--from", "{tmp}/eni.json", "--ic", "1m", "--rs", "20", "--re", "1",
                       "--turns", "3", "--winding-ohm", "15"], []),
}

#: Candidate parts for the parts case (INVENTED DATA: made-up devices, no maker's part).
PARTS_TOML = """
[[part]]
name = "low-rbb' NPN"
kind = "bjt"
beta = 250
rbb_ohm = 4
vaf_v = 80
vce_v = 5

[[part]]
name = "general-purpose NPN"
kind = "bjt"
ic_a = 0.5e-3
beta = 300
rbb_ohm = 60

[[part]]
name = "audio JFET"
kind = "jfet"
idss_a = 10e-3
vp_v = -0.8
ig_a = 10e-12
"""


def make_inputs(tmp: Path) -> None:
    """Seeded synthetic captures for the cases (INVENTED DATA)."""
    b = Bench(seconds=3.0, floor_v_per_rthz=10e-9, seed=7)
    caps = b.captures()
    fs = int(b.sample_rate_hz)
    for name in ("floor", "tone"):
        sf.write(tmp / f"{name}.wav", caps[name].read(), fs, subtype="PCM_24")
    sf.write(tmp / "term_a.wav", caps["terminated"].read(), fs, subtype="PCM_24")
    sf.write(tmp / "term_b.wav", Bench(seconds=3.0, floor_v_per_rthz=10e-9, seed=8).captures()["terminated"].read(),
             fs, subtype="PCM_24")
    t = np.arange(2 * fs) / fs
    vin = 1e-3 * math.sqrt(2) * np.sin(2 * np.pi * 1000.0 * t)
    two = np.column_stack([b.gain * vin, vin * 100.0]) / b.volts_per_fs  # input channel through a x100 probe
    two[:, 1] /= 100.0
    sf.write(tmp / "tone2.wav", two, fs, subtype="FLOAT")
    f = np.arange(10.0, 30_000.0, 5.0)
    level = 10 * np.log10((100 * 3e-9) ** 2 * 10.0)
    rows = ["# rbw_hz = 10", "# detector = rms", "frequency (Hz),level (dBV)"]
    rows += [f"{a:.3f},{level + 0.5 * math.sin(a / 900):.6f}" for a in f]
    (tmp / "trace.csv").write_text("\n".join(rows) + "\n")
    import json
    from benchnf.cli import main
    with contextlib.redirect_stdout(io.StringIO()):
        main([*[a.format(demo=DEMO, tmp=tmp) for a in _ANALYZE], "--shorted", str(DEMO / "shorted.flac"),
              "--json", str(tmp / "unit.json")])
    json.loads((tmp / "unit.json").read_text())
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        main([a.format(demo=DEMO, tmp=tmp) for a in CASES["eni_three_rs"][0][:-1]] + [str(tmp / "eni.json")])
    (tmp / "parts.toml").write_text(PARTS_TOML)
    (tmp / "out").mkdir()


_STAMP = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?([+-]\d\d:\d\d|Z)?")


def normalise(text: str, tmp: Path) -> str:
    """Machine paths, the host name and clock times replaced by placeholders; nothing else is touched."""
    import socket
    # a file named relative to the results folder: the way up to the demo folder depends on the machine
    text = re.sub(r'"file": "[^"]*?captures_demo/', '"file": "<DEMO>/', text)
    text = text.replace(str(tmp), "<TMP>").replace(str(DEMO), "<DEMO>")
    # a results JSON made during the run carries its own creation time, so its hash changes from run to run
    text = re.sub(r'("file": "(?!<DEMO>)[^"]*\.json",\s*"sha256": ")[0-9a-f]{64}', r"\1<HASH>", text)
    text = text.replace(f'"station": "{socket.gethostname()}"', '"station": "<HOST>"')
    text = text.replace(f'hostname="{socket.gethostname()}"', 'hostname="<HOST>"')
    text = re.sub(r' time="\d+\.\d{3}"', ' time="<SECONDS>"', text)  # JUnit: how long each unit took
    return _STAMP.sub("<TIME>", text)


def run_case(name: str, tmp: Path) -> dict[str, str]:
    """Run one case in-process; its stdout, stderr and exit status, and each output file's text."""
    from benchnf.cli import main
    argv, outputs = CASES[name]
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = main([a.format(demo=DEMO, tmp=tmp) for a in argv])
    texts = {"console": f"exit {status}\n--- stdout\n{out.getvalue()}--- stderr\n{err.getvalue()}"}
    for rel in outputs:
        texts[rel.replace("/", "_")] = (tmp / rel).read_text(encoding="utf-8")
    return {k: normalise(v, tmp) for k, v in texts.items()}


DEMO_FILES = ["results.json", "summary.txt", "calibration.json", "budget.json", "eni.json", "bias.json",
              "yfactor_vhf.json", "yfactor_bath.json", "yfactor_vhf.txt", "yfactor_bath.txt",
              "check/summary.csv", "check/junit.xml"]


def run_demo(tmp: Path) -> dict[str, str]:
    """The demo's console output and its text outputs."""
    from benchnf.cli import main
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = main(["demo", "-o", str(tmp / "demo"), "--quiet"])
    texts = {"console": f"exit {status}\n--- stdout\n{out.getvalue()}--- stderr\n{err.getvalue()}"}
    for rel in DEMO_FILES:
        texts[rel.replace("/", "_")] = (tmp / "demo" / rel).read_text(encoding="utf-8")
    return {k: normalise(v, tmp) for k, v in texts.items()}
