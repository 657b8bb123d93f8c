"""The fault cases: each spoils the base bench in one way and names the command that must refuse it.

A case is ``(name, spoil, argv)``: `spoil(folder)` changes files in a copy of the base bench, and
`argv` is the command with ``{d}`` for that folder. Every case must end with exit status 2 (3 where
noted), exactly one line on stderr, no traceback, and no file changed, added or removed.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Callable
from pathlib import Path

import numpy as np
import soundfile as sf

Spoil = Callable[[Path], None]
Case = tuple[str, Spoil, list[str], int]

ANALYZE = ["analyze", "--terminated", "{d}/terminated.wav", "--floor", "{d}/floor.wav", "--tone", "{d}/tone.wav",
           "--calibration", "{d}/cal.json", "--quiet"]
YFACTOR = ["yfactor", "--hot", "{d}/vhf_hot.sigmf-meta", "--cold", "{d}/vhf_cold.sigmf-meta", "--enr-table",
           "{d}/noise_source_enr.toml", "--quiet"]
ENI = ["eni", "{d}/shorted.wav@0", "{d}/terminated.wav@200", "--tone", "{d}/tone.wav", "--volts-per-fs", "2",
       "--quiet"]
BUDGET = ["budget", "{d}/head_amp_chain.toml", "--tap", "{d}/terminated.wav", "{d}/tone.wav", "--rs", "200",
          "--volts-per-fs", "2", "--quiet"]
GOODS = ["{d}/results.json", "{d}/good2.json", "{d}/good3.json"]  # three known-good units for a profile
CHECK = ["check", "--profile", "{d}/known_good_profile.toml", "{d}/results.json"]
BATCH = ["batch", "{d}/units", "--profile", "{d}/known_good_profile.toml", "--volts-per-fs", "2", "--quiet",
         "--workers", "1", "-o", "{d}/out/batch"]


def nothing(d: Path) -> None:
    """No spoiling: the command line itself is the fault."""


def write(name: str, data: bytes | str) -> Spoil:
    def spoil(d: Path) -> None:
        p = d / name
        if p.is_symlink() or p.is_file():
            p.unlink()
        p.write_bytes(data.encode() if isinstance(data, str) else data)
    return spoil


def json_edit(name: str, **changes: object) -> Spoil:
    def spoil(d: Path) -> None:
        data = json.loads((d / name).read_text())
        for key, value in changes.items():
            if value is _DELETE:
                data.pop(key, None)
            else:
                data[key] = value
        (d / name).write_text(json.dumps(data))
    return spoil


_DELETE = object()


def truncate(name: str, keep: float) -> Spoil:
    def spoil(d: Path) -> None:
        data = (d / name).read_bytes()
        (d / name).write_bytes(data[: int(len(data) * keep)])
    return spoil


def audio(name: str, *, fmt: str, subtype: str, seconds: float = 1.0, level: float = 1e-3,
          sidecar: dict | None = None) -> Spoil:
    def spoil(d: Path) -> None:
        x = np.random.default_rng(3).normal(0, level, int(seconds * 48_000))
        sf.write(d / name, x, 48_000, format=fmt, subtype=subtype)
        if sidecar is not None:
            (d / Path(name).with_suffix(".json")).write_text(json.dumps(sidecar))
    return spoil


def symlink(name: str, target: str) -> Spoil:
    def spoil(d: Path) -> None:
        os.symlink(d / target, d / name)
    return spoil


def both(*spoils: Spoil) -> Spoil:
    def spoil(d: Path) -> None:
        for s in spoils:
            s(d)
    return spoil


def _corrupt_formats(role: str, argv: list[str], file: str) -> list[Case]:
    """Every way a capture file can be unreadable, for one role of one command."""
    return [
        (f"{role}: empty file", write(file, b""), argv, 2),
        (f"{role}: random bytes", write(file, np.random.default_rng(1).bytes(5000)), argv, 2),
        (f"{role}: text in a .wav", write(file, "time,volts\n0,1\n"), argv, 2),
        (f"{role}: header only", truncate(file, 0.0001), argv, 2),
        *([] if role == "recover input" else [(f"{role}: cut in half", truncate(file, 0.5), argv, 2)]),
        (f"{role}: a folder", lambda d: ((d / file).unlink(), (d / file).mkdir()), argv, 2),
        (f"{role}: missing", lambda d: (d / file).unlink(), argv, 2),
    ]


def _lossy(role: str, argv_for: Callable[[str], list[str]]) -> list[Case]:
    out: list[Case] = []
    for label, fmt, subtype, ext in (("u-law", "WAV", "ULAW", "wav"), ("A-law", "WAV", "ALAW", "wav"),
                                     ("8-bit", "WAV", "PCM_U8", "wav"), ("IMA ADPCM", "WAV", "IMA_ADPCM", "wav"),
                                     ("Vorbis", "OGG", "VORBIS", "ogg")):
        name = f"lossy.{ext}"
        out.append((f"{role}: {label} encoding", audio(name, fmt=fmt, subtype=subtype), argv_for(name), 2))
    return out


def _sidecar_faults(argv: list[str]) -> list[Case]:
    side = "terminated.json"
    return [
        (f"sidecar: {label}", json_edit(side, **{key: value}), argv, 2)
        for label, key, value in (
            ("rs_ohm a string", "rs_ohm", "two hundred"), ("rs_ohm negative", "rs_ohm", -5),
            ("rs_ohm absurd", "rs_ohm", 1e300), ("rs_ohm a list", "rs_ohm", [200]),
            ("temperature absurd", "temperature_k", 1e9), ("temperature a string", "temperature_k", "warm"),
            ("volts_per_fs zero", "volts_per_fs", 0), ("volts_per_fs a string", "volts_per_fs", "2V"),
            ("channel a string", "channel", "left"), ("channel not present", "channel", 7),
            ("channel negative", "channel", -1), ("condition unknown", "condition", "warm"),
            ("condition of another role", "condition", "tone"), ("rs_ohm true", "rs_ohm", True),
            ("tone level a string", "tone_input_vrms", "1 mV"))
    ] + [
        ("sidecar: not JSON", write(side, "{rs_ohm: 200"), argv, 2),
        ("sidecar: a JSON list", write(side, "[1, 2]"), argv, 2),
        ("sidecar: not UTF-8", write(side, b"\xff\xfe{\x00"), argv, 2),
        ("sidecar: two of them", write("terminated.wav.json", "{}"), argv, 2),
        ("tone sidecar: level a string", json_edit("tone.json", tone_input_vrms="1mV"), argv, 2),
        ("tone sidecar: level negative", json_edit("tone.json", tone_input_vrms=-1e-3), argv, 2),
    ]


def _calibration_faults(argv: list[str]) -> list[Case]:
    cal = "cal.json"
    return [
        ("calibration: not JSON", write(cal, "volts_per_fs = 2"), argv, 2),
        ("calibration: empty", write(cal, ""), argv, 2),
        ("calibration: wrong schema", json_edit(cal, schema="other/1"), argv, 2),
        ("calibration: volts a string", json_edit(cal, volts_per_fs="2.0"), argv, 2),
        ("calibration: volts zero", json_edit(cal, volts_per_fs=0), argv, 2),
        ("calibration: volts absurd", json_edit(cal, volts_per_fs=1e30), argv, 2),
        ("calibration: channel a string", json_edit(cal, channel="0"), argv, 2),
        ("calibration: rate a string", json_edit(cal, sample_rate_hz="48k"), argv, 2),
        ("calibration: rate differs", json_edit(cal, sample_rate_hz=44_100.0), argv, 2),
        ("calibration: key missing", json_edit(cal, sample_rate_hz=_DELETE), argv, 2),
        ("calibration: unknown key", json_edit(cal, gain_knob=3), argv, 2),
        ("calibration: a list", write(cal, "[]"), argv, 2),
        ("calibration: conflicts with sidecar", json_edit("terminated.json", volts_per_fs=4.0), argv, 2),
    ]


def _absurd_numbers() -> list[Case]:
    cases: list[Case] = []
    for option, values in (("--rs", ["1e300", "0", "-150", "nan", "inf", "abc"]),
                           ("--temperature-k", ["1e9", "0", "-1", "nan"]),
                           ("--tone-input-vrms", ["0", "-1", "1e9", "nan"]),
                           ("--segment", ["10", "-4096", "1.5", "1e12"]),
                           ("--channel", ["-1", "x", "5"]),
                           ("--band", ["20", "20 abc"]),
                           ("--tone-hz", ["0", "1e9"])):
        for v in values:
            argv = [a for a in ANALYZE if a != "--tone" and a != "{d}/tone.wav"] if option == "--gain-db" else ANALYZE
            cases.append((f"analyze {option} {v}", nothing, [*argv, option, *v.split()], 2))
    cases += [
        ("analyze --gain-db 400", nothing, [*ANALYZE[:5], *ANALYZE[7:], "--gain-db", "400"], 2),
        ("analyze --band beyond Nyquist", nothing, [*ANALYZE, "--band", "30000", "40000"], 2),
        ("analyze --band reversed", nothing, [*ANALYZE, "--band", "20000", "20"], 2),
        ("analyze --volts-per-fs 0 with calibration", nothing, [*ANALYZE[:-3], "--volts-per-fs", "0", "--quiet"], 2),
        ("analyze --mains-hz 1e6", nothing, [*ANALYZE, "--mains-hz", "1e6"], 2),
        ("analyze --flicker-range reversed", nothing, [*ANALYZE, "--flicker-range", "1000", "10"], 2),
        ("record --seconds -1", nothing, ["record", "--seconds", "-1", "--condition", "floor", "-o", "{d}/r.wav"], 2),
        ("record --channels 0", nothing, ["record", "--seconds", "1", "--channels", "0", "--condition", "floor",
                                          "-o", "{d}/r.wav"], 2),
        ("live --updates-per-s 0", nothing, ["live", "--updates-per-s", "0"], 2),
        ("yfactor --rows 0", nothing, [*YFACTOR, "--rows", "0"], 2),
        ("yfactor --edge-fraction 2", nothing, [*YFACTOR, "--edge-fraction", "2"], 2),
        ("yfactor --source-side nan", nothing, [*YFACTOR, "--source-side", "nan", "290"], 2),
        ("yfactor --receiver-side -3 dB", nothing, [*YFACTOR, "--receiver-side", "-3", "290"], 2),
        ("yfactor --receiver-side without a calibration pair", nothing, [*YFACTOR, "--receiver-side", "1", "290"], 2),
        ("yfactor --chain with three active stages", nothing, [*YFACTOR, "--chain", "{d}/head_amp_chain.toml"], 2),
        ("record --drive-source with the sound card", nothing, ["record", "--seconds", "1", "--condition", "hot",
                                                                "--drive-source", "x", "-o", "{d}/k.wav"], 2),
        ("record --sdr --drive-source, not switched", nothing,
         ["record", "--sdr", "rtl_tcp://127.0.0.1:1", "--centre-hz", "145e6", "--gain", "30", "--condition", "hot",
          "--seconds", "1", "--drive-source", "x", "-o", "{d}/k.sigmf-meta"], 2),
        ("record --sdr --drive-state-s 0", nothing,
         ["record", "--sdr", "rtl_tcp://127.0.0.1:1", "--centre-hz", "145e6", "--gain", "30", "--condition",
          "switched", "--seconds", "1", "--drive-source", "x", "--drive-state-s", "0", "-o", "{d}/k.sigmf-meta"], 2),
        ("yfactor --calibrate-first without --live", nothing, [*YFACTOR, "--calibrate-first"], 2),
        ("yfactor --chain and --source-side", nothing, [*YFACTOR, "--chain", "{d}/head_amp_chain.toml",
                                                        "--source-side", "1", "290"], 2),
        ("yfactor --t-hot-c below absolute zero", nothing,
         [*YFACTOR[:5], "--t-hot-c", "-400", "--t-cold-k", "290", "--quiet"], 2),
        ("cascade --improve-db 0", nothing, ["cascade", "{d}/head_amp_chain.toml", "--improve-db", "0"], 2),
        ("cascade --what-if unknown stage", nothing, ["cascade", "{d}/head_amp_chain.toml", "--what-if", "9",
                                                       "nf_db=1"], 2),
        ("cascade --what-if bad value", nothing, ["cascade", "{d}/head_amp_chain.toml", "--what-if", "1",
                                                   "nf_db=low"], 2),
        ("batch --workers 0", nothing, [*BATCH, "--workers", "0"], 2),
        ("profile --margin-db -1", nothing, ["profile", *GOODS, "--margin-db", "-1", "-o",
                                             "{d}/out/p.toml"], 2),
        ("eni FILE@-5", nothing, ["eni", "{d}/shorted.wav@-5", "--gain-db", "40"], 2),
        ("eni FILE@abc", nothing, ["eni", "{d}/shorted.wav@abc", "--gain-db", "40"], 2),
        ("eni only one Rs", nothing, ["eni", "{d}/shorted.wav@0", "--gain-db", "40", "--volts-per-fs", "2"], 2),
        ("unknown command", nothing, ["frobnicate"], 2),
        ("unknown option", nothing, [*ANALYZE, "--frobnicate"], 2),
    ]
    return cases


def _outputs() -> list[Case]:
    """Outputs that would destroy or escape: each refused, nothing written."""
    j = ["--json"]
    return [
        ("analyze --json onto a capture", nothing, [*ANALYZE, *j, "{d}/terminated.wav"], 2),
        ("analyze --json onto a sidecar", nothing, [*ANALYZE, *j, "{d}/terminated.json"], 2),
        ("analyze --json onto the calibration", nothing, [*ANALYZE, *j, "{d}/cal.json"], 2),
        ("analyze --json through a symlink to an input", symlink("link.json", "tone.wav"),
         [*ANALYZE, *j, "{d}/link.json"], 2),
        ("analyze --json over an existing file", nothing, [*ANALYZE, *j, "{d}/results.json"], 2),
        ("analyze --json into a missing folder", nothing, [*ANALYZE, *j, "{d}/nowhere/r.json"], 2),
        ("analyze --json into a file as folder", nothing, [*ANALYZE, *j, "{d}/results.json/r.json"], 2),
        ("analyze --json onto a folder", nothing, [*ANALYZE, *j, "{d}/out"], 2),
        ("analyze --plot onto a file", nothing, [*ANALYZE, "--plot", "{d}/results.json"], 2),
        ("calibrate -o onto its reference", nothing, ["calibrate", "{d}/ref.wav", "--vrms", "0.25", "-o",
                                                       "{d}/ref.wav"], 2),
        ("calibrate -o over a calibration", nothing, ["calibrate", "{d}/ref.wav", "--vrms", "0.25", "-o",
                                                       "{d}/cal.json"], 2),
        ("calibrate without a reference or device", nothing, ["calibrate", "--vrms", "0.25", "-o", "{d}/c.json"], 2),
        ("yfactor --json onto the SigMF data", nothing, [*YFACTOR, *j, "{d}/vhf_hot.sigmf-data"], 2),
        ("yfactor --json onto the SigMF meta", nothing, [*YFACTOR, *j, "{d}/vhf_cold.sigmf-meta"], 2),
        ("yfactor --json onto the ENR table", nothing, [*YFACTOR, *j, "{d}/noise_source_enr.toml"], 2),
        ("budget --json onto the chain", nothing, [*BUDGET, *j, "{d}/head_amp_chain.toml"], 2),
        ("budget --json onto a tap", nothing, [*BUDGET, *j, "{d}/tone.wav"], 2),
        ("eni --json onto a capture", nothing, [*ENI, *j, "{d}/shorted.wav"], 2),
        ("eni --json onto a sidecar", nothing, [*ENI, *j, "{d}/tone.json"], 2),
        ("cascade --json onto the chain", nothing, ["cascade", "{d}/head_amp_chain.toml", *j,
                                                     "{d}/head_amp_chain.toml"], 2),
        ("profile -o onto its results", nothing, ["profile", *GOODS, "-o", "{d}/results.json"], 2),
        ("profile -o over a profile", nothing, ["profile", *GOODS, "-o", "{d}/known_good_profile.toml"],
         2),
        ("check --json onto the profile", nothing, [*CHECK, *j, "{d}/known_good_profile.toml"], 2),
        ("check --json onto the results", nothing, [*CHECK, *j, "{d}/results.json"], 2),
        ("check --report onto a file", nothing, [*CHECK, "--report", "{d}/results.json"], 2),
        ("check --unit escaping the report folder", nothing, [*CHECK, "--report", "{d}/out/r", "--unit", "../x"], 2),
        ("batch --history onto the profile", nothing, [*BATCH, "--history", "{d}/known_good_profile.toml"], 2),
        ("batch --history onto a file of another kind", nothing, [*BATCH, "--history", "{d}/results.json"], 2),
        ("batch --history in a missing folder", nothing, [*BATCH, "--history", "{d}/nowhere/h.csv"], 2),
        ("batch -o onto a file", nothing, [*BATCH[:-1], "{d}/results.json"], 2),
        ("batch -o onto the units", nothing, [*BATCH[:-1], "{d}/units/U-1"], 2),
        ("recover -o onto the damaged file", nothing, ["recover", "{d}/tone.wav", "-o", "{d}/tone.wav"], 2),
        ("recover -o over a file", nothing, ["recover", "{d}/tone.wav", "-o", "{d}/floor.wav"], 2),
        ("recover a FLAC", write("x.flac", b"fLaC\x00\x00"), ["recover", "{d}/x.flac", "-o", "{d}/out/x.wav"], 2),
        ("record -o over a capture", nothing, ["record", "--seconds", "1", "--condition", "floor", "-o",
                                               "{d}/floor.wav"], 2),
        ("record -o over a capture's sidecar", nothing, ["record", "--seconds", "1", "--condition", "tone", "-o",
                                                         "{d}/tone.flac"], 2),
        ("excite -o over a capture", nothing, ["excite", "-o", "{d}/tone.wav"], 2),
        ("calibrate-output -o over the calibration", nothing, ["calibrate-output", "--calibration", "{d}/cal.json",
                                                              "-o", "{d}/cal.json"], 2),
    ]


def _own_formats() -> list[Case]:
    """Our own files (results, profiles, chains, ENR tables, plans, SigMF meta, CSV) spoiled."""
    prof, chain, enr = "known_good_profile.toml", "head_amp_chain.toml", "noise_source_enr.toml"
    cascade = ["cascade", "{d}/head_amp_chain.toml"]
    measure = ["measure", "{d}/plan.toml", "--yes", "--out-dir", "{d}/out/m"]
    cases: list[Case] = [
        ("results: not JSON", write("results.json", "gain 36 dB"), CHECK, 2),
        ("results: a list", write("results.json", "[]"), CHECK, 2),
        ("results: no schema", json_edit("results.json", schema_version=_DELETE), CHECK, 2),
        ("results: newer schema", json_edit("results.json", schema_version="7"), CHECK, 2),
        ("results: gain a string", json_edit("results.json", gain_db="36 dB"), CHECK, 2),
        ("results: spots not a list", json_edit("results.json", spot="many"), CHECK, 2),
        ("results: spot rows strings", json_edit("results.json", spot=["20 Hz"]), CHECK, 2),
        ("results: spurs not a list", json_edit("results.json", spurs=3), CHECK, 2),
        ("results: rs a string", json_edit("results.json", rs_ohm="20R"), CHECK, 2),
        ("results: band a string", json_edit("results.json", band_hz="audio"), CHECK, 2),
        ("results for profile: a string", json_edit("results.json", ein_dbu="low"),
         ["profile", *GOODS, "-o", "{d}/out/p.toml"], 2),
        ("profile: not TOML", write(prof, "limit = ["), CHECK, 2),
        ("profile: empty", write(prof, ""), CHECK, 2),
        ("profile: limit max a string", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[limit]]\n'
                                               'key = "gain_db"\nmax = "40"\n'), CHECK, 2),
        ("profile: limit without a key", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[limit]]\n'
                                                 'max = 40.0\n'), CHECK, 2),
        ("profile: limit without a bound", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[limit]]\n'
                                                   'key = "gain_db"\n'), CHECK, 2),
        ("profile: conditions a string", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n'
                                                 'conditions = "room"\n'), CHECK, 2),
        ("profile: mask of strings", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[mask]]\n'
                                               'quantity = "input_density_v_per_rthz"\nfrequency_hz = ["a"]\n'
                                               'max = ["b"]\n'), CHECK, 2),
        ("profile: name a number", write(prof, 'schema = "benchnf.profile/1"\nname = 3\n'), CHECK, 2),
        ("profile: hum limit a string", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[hum]]\n'
                                                'family = "mains"\nmax_output_vrms = "1u"\n'), CHECK, 2),
        ("profile for batch: not TOML", write(prof, "[[["), BATCH, 2),
        ("chain: not TOML", write(chain, "[[stage]\n"), cascade, 2),
        ("chain: empty", write(chain, ""), cascade, 2),
        ("chain: gain a string", write(chain, '[[stage]]\nname = "a"\ngain_db = "20"\nnf_db = 2.0\n'), cascade, 2),
        ("chain: negative NF", write(chain, '[[stage]]\nname = "a"\ngain_db = 20.0\nnf_db = -2.0\n'), cascade, 2),
        ("chain: unknown key", write(chain, '[[stage]]\nname = "a"\ngain_db = 20.0\nnf_db = 2.0\ncolour = 1\n'),
         cascade, 2),
        ("chain: stage without noise", write(chain, '[[stage]]\nname = "a"\ngain_db = 20.0\n'), cascade, 2),
        ("chain: stage a string", write(chain, 'stage = "lna"\n'), cascade, 2),
        ("chain: absurd gain", write(chain, '[[stage]]\nname = "a"\ngain_db = 1e6\nnf_db = 2.0\n'), cascade, 2),
        ("chain for budget: not TOML", write(chain, "]"), BUDGET, 2),
        ("ENR: not TOML", write(enr, "points = [[1"), YFACTOR, 2),
        ("ENR: empty", write(enr, ""), YFACTOR, 2),
        ("ENR: points strings", write(enr, 'points = [["100M", "5"]]\n'), YFACTOR, 2),
        ("ENR: negative frequency", write(enr, "points = [[-1e6, 5.0], [200e6, 5.0]]\n"), YFACTOR, 2),
        ("ENR: points not pairs", write(enr, "points = [1, 2, 3]\n"), YFACTOR, 2),
        ("ENR: cold a string", write(enr, 'cold_k = "room"\npoints = [[100e6, 5.0], [200e6, 5.0]]\n'), YFACTOR, 2),
        ("ENR CSV: garbage", write("enr.csv", "frequency_hz,enr_db\nabc,def\n"),
         [*YFACTOR[:5], "--enr-table", "{d}/enr.csv", "--quiet"], 2),
        ("ENR CSV: empty", write("enr.csv", ""), [*YFACTOR[:5], "--enr-table", "{d}/enr.csv", "--quiet"], 2),
        ("SigMF: meta not JSON", write("vhf_hot.sigmf-meta", "{global"), YFACTOR, 2),
        ("SigMF: meta empty", write("vhf_hot.sigmf-meta", ""), YFACTOR, 2),
        ("SigMF: no global", json_edit("vhf_hot.sigmf-meta", **{"global": _DELETE}), YFACTOR, 2),
        ("SigMF: data missing", lambda d: (d / "vhf_hot.sigmf-data").unlink(), YFACTOR, 2),
        ("SigMF: data empty", write("vhf_hot.sigmf-data", b""), YFACTOR, 2),
        ("SigMF: data odd size", truncate("vhf_hot.sigmf-data", 0.49999), YFACTOR, 2),
        ("SigMF: datatype unknown", lambda d: _sigmf_global(d, {"core:datatype": "cf99_le"}), YFACTOR, 2),
        ("SigMF: rate a string", lambda d: _sigmf_global(d, {"core:sample_rate": "2 MHz"}), YFACTOR, 2),
        ("SigMF: rate negative", lambda d: _sigmf_global(d, {"core:sample_rate": -2e6}), YFACTOR, 2),
        ("SigMF: captures a string", json_edit("vhf_hot.sigmf-meta", captures="all"), YFACTOR, 2),
        ("SigMF: frequency a string", lambda d: _sigmf_capture(d, {"core:frequency": "145M"}), YFACTOR, 2),
        ("plan: not TOML", write("plan.toml", "[[step"), measure, 2),
        ("plan: no steps", write("plan.toml", 'name = "p"\nsample_rate_hz = 48000\n'), measure, 2),
        ("plan: seconds a string", write("plan.toml", 'name = "p"\nsample_rate_hz = 48000\n[[step]]\n'
                                         'condition = "floor"\nseconds = "ten"\nprompt = "x"\n'), measure, 2),
        ("plan: unknown condition", write("plan.toml", 'name = "p"\nsample_rate_hz = 48000\n[[step]]\n'
                                          'condition = "warm"\nseconds = 1\nprompt = "x"\n'), measure, 2),
        ("plan: rate negative", write("plan.toml", 'name = "p"\nsample_rate_hz = -1\n[[step]]\n'
                                      'condition = "floor"\nseconds = 1\nprompt = "x"\n'), measure, 2),
        ("CSV trace: garbage", write("t.csv", "frequency (Hz),level (dBV)\nx,y\n"),
         ["analyze", "--terminated", "{d}/t.csv", "--gain-db", "40", "--rs", "200", "--quiet"], 2),
        ("CSV trace: one column", write("t.csv", "frequency (Hz)\n1\n2\n"),
         ["analyze", "--terminated", "{d}/t.csv", "--gain-db", "40", "--rs", "200", "--quiet"], 2),
        ("CSV trace: empty", write("t.csv", ""),
         ["analyze", "--terminated", "{d}/t.csv", "--gain-db", "40", "--rs", "200", "--quiet"], 2),
        ("CSV trace: frequencies descending", write("t.csv", "# rbw_hz = 10\nfrequency (Hz),level (dBV)\n"
                                                    "300,-150\n200,-150\n100,-150\n"),
         ["analyze", "--terminated", "{d}/t.csv", "--gain-db", "40", "--rs", "200", "--quiet"], 2),
        ("CSV trace: NaN levels", write("t.csv", "# rbw_hz = 10\nfrequency (Hz),level (dBV)\n"
                                        + "".join(f"{f},nan\n" for f in range(10, 30000, 10))),
         ["analyze", "--terminated", "{d}/t.csv", "--gain-db", "40", "--rs", "200", "--quiet"], 2),
    ]
    return cases


def _sigmf_global(d: Path, changes: dict) -> None:
    p = d / "vhf_hot.sigmf-meta"
    meta = json.loads(p.read_text())
    meta["global"].update(changes)
    p.write_text(json.dumps(meta))


def _sigmf_capture(d: Path, changes: dict) -> None:
    p = d / "vhf_hot.sigmf-meta"
    meta = json.loads(p.read_text())
    meta["captures"][0].update(changes)
    p.write_text(json.dumps(meta))


def _silent_wrong_figures() -> list[Case]:
    """Realistic mistakes that used to give a confident wrong figure with exit 0."""
    tone_mains = both(audio("hum.wav", fmt="WAV", subtype="FLOAT", level=0.0),
                      lambda d: sf.write(d / "hum.wav", 0.3 * np.sin(2 * np.pi * 50 * np.arange(48_000) / 48_000),
                                         48_000, subtype="FLOAT"))
    sixteen = both(
        lambda d: sf.write(d / "q_floor.wav", np.random.default_rng(5).normal(0, 2e-6, 96_000), 48_000,
                           subtype="PCM_16"),
        lambda d: sf.write(d / "q_term.wav", np.random.default_rng(6).normal(0, 3e-5, 96_000), 48_000,
                           subtype="PCM_16"))
    return [
        ("a capture of hum given as the tone", tone_mains,
         [*ANALYZE[:5], "--tone", "{d}/hum.wav", "--tone-input-vrms", "0.001", "--tone-hz", "1000",
          "--calibration", "{d}/cal.json", "--quiet"], 2),
        ("a capture of hum taken as the tone", tone_mains,
         [*ANALYZE[:5], "--tone", "{d}/hum.wav", "--tone-input-vrms", "0.001", "--calibration", "{d}/cal.json",
          "--quiet"], 2),
        ("tone input and output on one channel", nothing,
         [*ANALYZE, "--tone-input-channel", "0", "--channel", "0"], 2),
        ("the same capture twice as repeats", nothing,
         [*ANALYZE[:2], "{d}/terminated.wav", "{d}/terminated.wav", *ANALYZE[3:]], 2),
        ("the same capture through a symlink as repeats", symlink("again.wav", "terminated.wav"),
         [*ANALYZE[:2], "{d}/terminated.wav", "{d}/again.wav", *ANALYZE[3:]], 2),
        ("16-bit noise near one LSB", sixteen,
         ["analyze", "--terminated", "{d}/q_term.wav", "--floor", "{d}/q_floor.wav", "--gain-db", "40", "--rs",
          "200", "--volts-per-fs", "2", "--quiet"], 2),
        ("truncated AIFF", both(audio("t.aiff", fmt="AIFF", subtype="PCM_24", seconds=2.0),
                                truncate("t.aiff", 0.5)),
         [*ANALYZE[:2], "{d}/t.aiff", *ANALYZE[3:], "--rs", "200"], 2),
        ("truncated W64", both(audio("t.w64", fmt="W64", subtype="PCM_24", seconds=2.0), truncate("t.w64", 0.5)),
         [*ANALYZE[:2], "{d}/t.w64", *ANALYZE[3:], "--rs", "200"], 2),
        ("truncated CAF", both(audio("t.caf", fmt="CAF", subtype="PCM_24", seconds=2.0), truncate("t.caf", 0.5)),
         [*ANALYZE[:2], "{d}/t.caf", *ANALYZE[3:], "--rs", "200"], 2),
        ("WAV whose header says zero data", lambda d: _zero_data(d / "terminated.wav"), ANALYZE, 2),
        ("batch unit recorded at another Rs than the profile", json_edit("units/U-1/terminated.json", rs_ohm=150.0),
         BATCH, 2),
    ]


def _zero_data(p: Path) -> None:
    raw = bytearray(p.read_bytes())
    at = raw.find(b"data")
    raw[at + 4:at + 8] = b"\x00\x00\x00\x00"
    p.write_bytes(bytes(raw))


# Cases whose command rightly writes its other outputs before reporting the fault (a batch reports every
# unit it could check); files may appear under this folder, nothing else may change.
MAY_WRITE = {"batch unit recorded at another Rs than the profile": "out/batch",
             # SQLite keeps its write-ahead log beside a database in WAL mode, even for a reader
             "records: a measured value that is text": "r.sqlite"}


def _sigmf_edit(**changes: object) -> Spoil:
    def spoil(d: Path) -> None:
        meta = json.loads((d / "vhf_hot.sigmf-meta").read_text())
        meta["global"].update(changes)
        (d / "vhf_hot.sigmf-meta").write_text(json.dumps(meta))
    return spoil


def _spot_edit(**changes: object) -> Spoil:
    def spoil(d: Path) -> None:
        data = json.loads((d / "results.json").read_text())
        data["spot"][0].update(changes)
        (d / "results.json").write_text(json.dumps(data))
    return spoil


def _records_with_a_string(d: Path) -> None:
    """A records store whose measured value was changed to text outside benchnf."""
    import sqlite3
    from benchnf.cli import main
    import contextlib
    import io
    with contextlib.redirect_stdout(io.StringIO()):
        main(["profile", *(str(d / n) for n in ("results.json", "good2.json", "good3.json")), "-o", str(d / "own.toml")])
        main(["check", "--profile", str(d / "own.toml"), str(d / "results.json"), "--records", str(d / "r.sqlite")])
    with sqlite3.connect(d / "r.sqlite") as db:
        db.execute("UPDATE limits SET measured = 'low' WHERE name = 'gain_db'")


def _earlier_crashes() -> list[Case]:
    """Files of ours that once reached an internal error (exit 70), each now one line and exit 2."""
    prof, plan = "known_good_profile.toml", "plan.toml"
    yfactor = ["yfactor", "--hot", "{d}/vhf_hot.sigmf-meta", "--cold", "{d}/vhf_cold.sigmf-meta", "--enr-db", "5.5",
               "--quiet"]
    return [
        ("results: uncertainty a word", json_edit("results.json", uncertainty="small"), CHECK, 2),
        ("results: negative spot frequency", _spot_edit(freq_hz=-20.0), CHECK, 2),
        ("results: schema version a number", json_edit("results.json", schema_version=1.5), CHECK, 2),
        ("SigMF: datatype a number", _sigmf_edit(**{"core:datatype": 7}), yfactor, 2),
        ("SigMF: datatype that does not fit the data", _sigmf_edit(**{"core:datatype": "cf64_le"}), yfactor, 2),
        ("ENR table in Latin-1", write("noise_source_enr.toml", "# Kalibrierung M\xe4rz\npoints = [[1e8, 5.0]]\n"
                                       .encode("latin-1").decode("latin-1").encode("latin-1")), YFACTOR, 2),
        ("chain: temperature a word", write("head_amp_chain.toml", 'temperature_k = "hot"\n[[stage]]\nname = "a"\n'
                                            'gain_db = 20.0\nnf_db = 2.0\n'), ["cascade", "{d}/head_amp_chain.toml"], 2),
        ("sidecar: temperature a word", json_edit("terminated.json", temperature_k="hot"), ANALYZE, 2),
        ("profile: a limit that is a number", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\nlimit = 5\n'),
         CHECK, 2),
        ("profile: mask points numbers, not pairs", write(prof, 'schema = "benchnf.profile/1"\nname = "p"\n[[mask]]\n'
                                                             'points = [1000.0, 1e-9]\n'), CHECK, 2),
        ("plan: a step that is a number", write(plan, 'name = "p"\nstep = 5\n'),
         ["measure", "{d}/plan.toml", "--yes", "--out-dir", "{d}/out/m"], 2),
        ("records: a measured value that is text", _records_with_a_string,
         ["records", "--records", "{d}/r.sqlite", "capability"], 2),
    ]


def all_cases() -> list[Case]:
    cases: list[Case] = []
    cases += _corrupt_formats("terminated", ANALYZE, "terminated.wav")
    cases += _corrupt_formats("floor", ANALYZE, "floor.wav")
    cases += _corrupt_formats("tone", ANALYZE, "tone.wav")
    cases += _corrupt_formats("eni capture", ENI, "shorted.wav")
    cases += _corrupt_formats("budget tap", BUDGET, "terminated.wav")
    cases += _corrupt_formats("calibrate reference", ["calibrate", "{d}/ref.wav", "--vrms", "0.25", "-o",
                                                      "{d}/out/c.json"], "ref.wav")
    cases += _corrupt_formats("recover input", ["recover", "{d}/tone.wav", "-o", "{d}/out/r.wav"], "tone.wav")
    cases += _lossy("analyze terminated", lambda n: [*ANALYZE[:2], "{d}/" + n, *ANALYZE[3:], "--rs", "200"])
    cases += _lossy("analyze floor", lambda n: [*ANALYZE[:4], "{d}/" + n, *ANALYZE[5:]])
    cases += _sidecar_faults(ANALYZE)
    cases += _calibration_faults(ANALYZE)
    cases += _absurd_numbers()
    cases += _outputs()
    cases += _own_formats()
    cases += _silent_wrong_figures()
    cases += _earlier_crashes()
    names = [c[0] for c in cases]
    assert len(names) == len(set(names)), "fault case names repeat"
    return cases


__all__ = ["all_cases", "MAY_WRITE", "math"]
