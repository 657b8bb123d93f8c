"""Instrument CSV: time series and spectrum traces (seeded synthetic data, INVENTED)."""

import math

import numpy as np
import pytest

from benchnf.cli import ExitStatus, main
from benchnf.errors import CaptureError
from benchnf.io.csv_trace import LOG_AVERAGE_CORRECTION_DB, load_csv


def test_log_average_correction_is_ten_gamma_over_ln10():
    # The issue and common practice quote about 2.51 dB; Euler's gamma gives 2.507 dB exactly.
    assert LOG_AVERAGE_CORRECTION_DB == pytest.approx(2.507, abs=5e-4)
    x = np.random.default_rng(0).exponential(size=1_000_000)  # noise power in one bin
    assert -np.mean(10 * np.log10(x)) == pytest.approx(LOG_AVERAGE_CORRECTION_DB, abs=0.01)


def _trace_file(tmp_path, *, density_v=10e-9, rbw=10.0, detector="rms", unit="dBm", name="t.csv",
                extra="", delimiter=","):
    f = np.arange(10.0, 30_000.0, 5.0)
    v2 = density_v ** 2 * rbw
    level = np.full(f.shape, {"dBm": 10 * np.log10(v2 / 50.0 / 1e-3), "dBV": 10 * np.log10(v2)}[unit])
    if detector == "log":
        level = level - LOG_AVERAGE_CORRECTION_DB
    lines = [f"# rbw_hz = {rbw}", f"# detector = {detector}", extra,
             f"frequency (Hz){delimiter}level ({unit})"]
    lines += [f"{a:.3f}{delimiter}{b:.6f}" for a, b in zip(f, level)]
    p = tmp_path / name
    p.write_text("\n".join(x for x in lines if x) + "\n")
    return p


@pytest.mark.parametrize(("detector", "unit"), [("rms", "dBm"), ("log", "dBm"), ("sample", "dBV")])
def test_trace_gives_the_known_density(tmp_path, detector, unit):
    psd = load_csv(_trace_file(tmp_path, detector=detector, unit=unit))
    np.testing.assert_allclose(np.sqrt(psd.psd_v2_per_hz), 10e-9, rtol=1e-5)
    assert psd.enbw_hz == 10.0


def test_time_series_with_unit_row_and_semicolons(tmp_path):
    rng = np.random.default_rng(1)
    fs = 20_000.0
    v = rng.normal(0, 1e-3, 40_000)
    rows = ["# scope export", "Time;CH1", "s;mV"] + [
        f"{i / fs:.8f};{x * 1e3:.6f}".replace(".", ",") for i, x in enumerate(v)]
    p = tmp_path / "scope.csv"
    p.write_text("\n".join(rows) + "\n")
    cap = load_csv(p)
    assert cap.sample_rate_hz == pytest.approx(fs, rel=1e-6)
    np.testing.assert_allclose(cap.read() * cap.volts_per_fs, v, atol=1e-9)


def test_analyze_accepts_trace_files_end_to_end(tmp_path, capsys):
    # Output density 100 nV/rtHz over a floor of 10 nV/rtHz, stated gain 40 dB: input 1 nV/rtHz less
    # the floor's share, from a 20 ohm source (0.57 nV/rtHz of its own at 290 K, so the figure is possible).
    term = _trace_file(tmp_path, density_v=100e-9, name="term.csv")
    floor = _trace_file(tmp_path, density_v=10e-9, name="floor.csv")
    out = tmp_path / "r.json"
    assert main(["analyze", "--terminated", str(term), "--floor", str(floor), "--gain-db", "40",
                 "--rs", "20", "--json", str(out), "--quiet"]) == ExitStatus.OK
    import json
    data = json.loads(out.read_text())
    expected = math.sqrt((100e-9) ** 2 - (10e-9) ** 2) / 100
    assert data["input_density_at_1khz_v_per_rthz"] == pytest.approx(expected, rel=1e-3)
    assert "RBW 10.00 Hz" in capsys.readouterr().out


@pytest.mark.parametrize(("content", "pattern"), [
    ("a,b\n1,2\n3,4\n5,6\n", "neither time nor frequency"),
    ("frequency (Hz),level (dBm)\n10,-100\n20,oops\n30,-100\n", "not two numbers"),
    ("frequency (Hz),level (dBm)\n10,-100\n20,-100\n30,-100\n", "needs the RBW"),
    ("# rbw_hz = 1\nfrequency (Hz),level (dBm)\n10,-100\n30,-100\n20,-100\n", "not strictly increasing"),
    ("# rbw_hz = 1\nfrequency (Hz),level (dBm)\n10,-100\n20,-100\n30,-100\n", "detector"),
    ("time (s),v (V)\n0,1\n0.001,2\n0.0035,1\n0.0045,2\n", "not uniformly spaced"),
    ("time (s),level (furlongs)\n0,1\n1,2\n2,3\n", "voltage"),
    ("x,y,z\n1,2,3\n", "fewer than two data rows|expected two columns"),
])
def test_bad_csv_is_refused_with_a_reason(tmp_path, content, pattern):
    p = tmp_path / "bad.csv"
    p.write_text(content)
    with pytest.raises(CaptureError, match=pattern):
        load_csv(p)


def test_trace_rbw_coarser_than_band_is_refused(tmp_path, capsys):
    term = _trace_file(tmp_path, rbw=5000.0, name="wide.csv")
    assert main(["analyze", "--terminated", str(term), "--gain-db", "40", "--rs", "200",
                 "--band", "1000", "2000", "--quiet"]) == ExitStatus.BAD_INPUT
    assert "coarser than the band" in capsys.readouterr().err
