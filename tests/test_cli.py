"""The command line in-process: contract, JSON keys, demo, and every bad input (exit 2, one line).

Files are seeded synthetic captures (INVENTED DATA) written to a temporary folder.
"""

import hashlib
import json
import math
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

from benchnf.cli import ExitStatus, main

from synth import Bench

REQUIRED_KEYS = {"schema_version", "gain_db", "rs_ohm", "temperature_k", "band_hz", "weighting",
                 "ein_dbu", "ein_dbv", "noise_figure_db", "nf_at_1khz_db",
                 "input_density_at_1khz_v_per_rthz", "output_noise_vrms", "floor_corrected",
                 "floor_margin_db", "spot"}


@pytest.fixture()
def bench_files(tmp_path):
    b = Bench(seconds=4.0, floor_v_per_rthz=10e-9)
    caps = b.captures()
    paths = {}
    for name in ("floor", "terminated", "shorted", "tone"):
        x = caps[name].read()
        p = tmp_path / f"{name}.wav"
        sf.write(p, x, int(b.sample_rate_hz), subtype="PCM_24")
        paths[name] = p
    t = np.arange(48_000 * 2) / 48_000.0
    sf.write(tmp_path / "ref.wav", 0.25 * math.sqrt(2) / b.volts_per_fs * np.sin(2 * np.pi * 400 * t),
             48_000, subtype="PCM_24")
    paths["ref"] = tmp_path / "ref.wav"
    paths["bench"] = b
    return paths


def _digest(folder: Path) -> dict:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in folder.iterdir() if p.is_file()}


def _args(p, *extra):
    return ["analyze", "--terminated", str(p["terminated"]), "--floor", str(p["floor"]),
            "--shorted", str(p["shorted"]), "--tone", str(p["tone"]), "--tone-input-vrms", "0.001",
            "--rs", "200", "--volts-per-fs", "2.0", "--quiet", *extra]


def test_calibrate_then_analyze_writes_the_contract_json_and_plots(bench_files, tmp_path, capsys):
    cal = tmp_path / "cal.json"
    assert main(["calibrate", str(bench_files["ref"]), "--vrms", "0.25", "-o", str(cal)]) == 0
    assert json.loads(cal.read_text())["volts_per_fs"] == pytest.approx(2.0, rel=1e-5)
    out = tmp_path / "out.json"
    args = _args(bench_files, "--json", str(out), "--plot", str(tmp_path / "plots"))
    args[args.index("--volts-per-fs"):args.index("--volts-per-fs") + 2] = ["--calibration", str(cal)]
    assert main(args) == ExitStatus.OK
    printed = capsys.readouterr().out
    for phrase in ("200 ohm at 290.00 K", "20 Hz-20 kHz, weighting none", "detector RMS",
                   "analyzer floor subtracted"):
        assert phrase in printed
    data = json.loads(out.read_text())
    assert REQUIRED_KEYS <= set(data)
    assert data["schema_version"] == "1" and data["band_hz"] == [20.0, 20000.0]
    assert {"freq_hz", "input_density_v_per_rthz", "noise_figure_db"} <= set(data["spot"][0])
    b = bench_files["bench"]
    assert data["noise_figure_db"] == pytest.approx(10 * math.log10(b.noise_factor()), abs=0.1)
    assert sorted(p.name for p in (tmp_path / "plots").iterdir()) == [
        "input_density.png", "noise_figure.png", "output_spectrum.png"]


def test_calibration_file_is_never_overwritten(bench_files, tmp_path, capsys):
    cal = tmp_path / "cal.json"
    cal.write_text("precious")
    assert main(["calibrate", str(bench_files["ref"]), "--vrms", "0.25", "-o", str(cal)]) == 2
    assert cal.read_text() == "precious"
    assert "exists already" in capsys.readouterr().err


def _write_bad(tmp_path, name, data: bytes) -> Path:
    p = tmp_path / name
    p.write_bytes(data)
    return p


def _bad_cases(p, tmp_path):
    good = p["terminated"].read_bytes()
    trunc = _write_bad(tmp_path, "trunc.wav", good[: len(good) // 3])
    corrupt = _write_bad(tmp_path, "corrupt.wav", b"RIFF" + bytes(range(256)) * 8)
    text = _write_bad(tmp_path, "notes.wav", b"this is not audio\n" * 10)
    silent = tmp_path / "silent.wav"
    sf.write(silent, np.zeros(48_000 * 3), 48_000, subtype="PCM_24")
    clipped = tmp_path / "clipped.wav"
    x = np.random.default_rng(0).normal(0, 0.5, 48_000 * 3)
    sf.write(clipped, np.clip(x, -1, 1), 48_000, subtype="PCM_24")
    rate = tmp_path / "rate44.wav"
    sf.write(rate, np.random.default_rng(1).normal(0, 1e-4, 44_100 * 3), 44_100, subtype="PCM_24")
    empty = tmp_path / "empty.wav"
    sf.write(empty, np.zeros(0), 48_000, subtype="PCM_24")
    return {
        "truncated file": (["--terminated", str(trunc)], "truncated|cannot be read"),
        "corrupt file": (["--terminated", str(corrupt)], "cannot be read as audio"),
        "unsupported format": (["--terminated", str(text)], "cannot be read as audio"),
        "missing file": (["--terminated", str(tmp_path / "nope.wav")], "no such file"),
        "empty capture": (["--terminated", str(empty)], "holds no samples"),
        "all-zero capture": (["--terminated", str(silent)], "silent"),
        "clipped noise capture": (["--terminated", str(clipped)], "clipped"),
        "sample rates differ": (["--floor", str(rate)], "recorded at 44100 Hz"),
        "tone not where stated": (["--tone-hz", "400"], "not at the stated 400 Hz"),
        "zero Rs": (["--rs", "0"], None),
        "negative Rs": (["--rs", "-5"], None),
        "band outside 0..fs/2": (["--band", "20", "30000"], "beyond half the sample rate"),
        "band upside down": (["--band", "2000", "20"], "not a band"),
        "missing calibration": (["--calibration", str(tmp_path / "nocal.json")], "not found"),
        "channel out of range": (["--channel", "3"], "channel 3 does not exist"),
    }


@pytest.mark.parametrize("case", ["truncated file", "corrupt file", "unsupported format",
                                  "missing file", "empty capture", "all-zero capture",
                                  "clipped noise capture", "sample rates differ",
                                  "tone not where stated", "zero Rs", "negative Rs",
                                  "band outside 0..fs/2", "band upside down",
                                  "missing calibration", "channel out of range"])
def test_bad_input_gives_one_line_and_exit_2_and_touches_no_file(case, bench_files, tmp_path, capsys):
    cases = _bad_cases(bench_files, tmp_path)
    extra, pattern = cases[case]
    args = _args(bench_files)
    # Replace an option already present, else append.
    opt = extra[0]
    if opt in args:
        at = args.index(opt)
        width = 3 if opt == "--band" else 2
        args[at:at + width] = extra
    else:
        args += extra
    if opt == "--calibration":
        at = args.index("--volts-per-fs")
        del args[at:at + 2]
    before = _digest(tmp_path)
    if pattern is None:  # rejected by argparse at the boundary, in one line
        assert main(args) == ExitStatus.BAD_INPUT
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1, err
        assert "error: argument --rs" in err[0] and "is not a resistance > 0 ohm" in err[0]
    else:
        assert main(args) == ExitStatus.BAD_INPUT
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1, err
        assert err[0].startswith("benchnf: error: ")
        assert re.search(pattern, err[0]), err[0]
    assert _digest(tmp_path) == before


def test_json_output_may_not_overwrite_an_input(bench_files, capsys):
    before = bench_files["tone"].read_bytes()
    assert main(_args(bench_files, "--json", str(bench_files["tone"]))) == ExitStatus.BAD_INPUT
    assert bench_files["tone"].read_bytes() == before
    assert "is an input of this run" in capsys.readouterr().err


def test_stated_gain_needs_calibration(bench_files, capsys):
    args = ["analyze", "--terminated", str(bench_files["terminated"]), "--gain-db", "40",
            "--rs", "200", "--quiet"]
    assert main(args) == ExitStatus.BAD_INPUT
    assert "is not calibrated" in capsys.readouterr().err


def test_help_does_not_import_scipy_or_matplotlib():
    code = ("import sys\nfrom benchnf.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print(sorted(m for m in ('scipy', 'matplotlib', 'soundfile', 'sounddevice') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip().splitlines()[-1] == "[]"


def test_python_dash_m_runs(tmp_path):
    out = subprocess.run([sys.executable, "-m", "benchnf", "--version"], capture_output=True,
                         text=True, cwd=tmp_path)
    assert out.returncode == 0 and out.stdout.startswith("benchnf ")


def test_demo_recovers_its_ground_truth_and_never_reuses_a_folder(tmp_path, capsys):
    target = tmp_path / "results"
    assert main(["demo", "-o", str(target), "--quiet"]) == 0
    assert main(["demo", "-o", str(target), "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert (tmp_path / "results-2" / "results.json").is_file()
    assert "Results written to" in printed
    data = json.loads((target / "results.json").read_text())
    truth = json.loads((Path(__file__).parents[1] / "benchnf" / "captures_demo" / "ground_truth.json").read_text())
    assert data["gain_db"] == pytest.approx(truth["gain_db_at_1khz"], abs=0.02)
    assert data["nf_at_1khz_db"] == pytest.approx(truth["nf_at_1khz_db"], abs=0.3)
    assert data["input_density_at_1khz_v_per_rthz"] == pytest.approx(
        truth["input_density_at_1khz_v_per_rthz"], rel=0.04)
    assert data["voltage_noise_at_1khz_v_per_rthz"] == pytest.approx(
        truth["voltage_noise_at_1khz_v_per_rthz"], rel=0.05)
