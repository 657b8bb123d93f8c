"""`benchnf analyze --cross`: a DUT under the analyzer inputs' own noise measured through the averaged
cross-spectrum of two channels (INVENTED DATA: seeded noise of known truth written as two-channel WAVs).

Truth: the DUT is a 40 dB amplifier with 1 nV/√Hz of white input voltage noise on a 200 Ω source at 290 K, so
its input noise is sqrt(4kTR + en²) and its noise figure 10 lg(1 + en²/(4kT0R)) (Friis's definition; IEEE
Std 161 terms, common practice). Each channel adds its own white noise at the stated margin; the analyzer's
correlated background (the same noise in both channels) is known too.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from benchnf.cli import main
from benchnf.units import BOLTZMANN_J_PER_K, T0_K

sf = pytest.importorskip("soundfile")

FS = 48_000
RS, GAIN_DB, EN = 200.0, 40.0, 1e-9
VPFS = 1e-2  # volts per full scale: the loudest noise here sits near -30 dBFS
E_IN = math.sqrt(4 * BOLTZMANN_J_PER_K * T0_K * RS + EN ** 2)
NF_TRUE = 10 * math.log10(1 + EN ** 2 / (4 * BOLTZMANN_J_PER_K * T0_K * RS))
OUT = E_IN * 10 ** (GAIN_DB / 20)  # V/√Hz at the DUT output


def _white(rng, n, density):
    return rng.standard_normal(n) * density * math.sqrt(FS / 2)


def _pair(path, rng, *, seconds, dut, own_db, shared=0.0, second_gain=1.0):
    """Two channels: the common noise (DUT, density `dut`), the analyzer's shared noise, and each input's own
    at `own_db` above the DUT output (the second 2 dB louder)."""
    n = int(FS * seconds)
    common = _white(rng, n, dut) + _white(rng, n, shared)
    own = OUT * 10 ** (own_db / 20)
    x = common + _white(rng, n, own)
    y = common + _white(rng, n, own * 1.26)
    sf.write(path, np.stack([x, y * second_gain], axis=1) / VPFS, FS, subtype="FLOAT")
    return path


def _analyze(tmp_path, *extra, second=VPFS):
    out = tmp_path / f"r{len(list(tmp_path.glob('r*.json')))}.json"
    both = ["--cross-volts-per-fs", str(second)] if "--cross" in extra and second else []
    rc = main(["analyze", "--gain-db", str(GAIN_DB), "--rs", str(RS), "--temperature-k", "290",
               "--volts-per-fs", str(VPFS), "--json", str(out), "--quiet", *map(str, extra), *both])
    return rc, (json.loads(out.read_text()) if rc == 0 else None)


def test_a_dut_ten_db_under_each_input_is_measured_within_its_u(tmp_path):
    rng = np.random.default_rng(5)
    term = _pair(tmp_path / "t.wav", rng, seconds=40, dut=OUT, own_db=10.0)
    rc, r = _analyze(tmp_path, "--terminated", term, "--cross")
    assert rc == 0
    u = r["uncertainty"]["noise_figure_db"]
    assert abs(r["noise_figure_db"] - NF_TRUE) <= u, (r["noise_figure_db"], NF_TRUE, u)
    assert r["output_estimator"] == "cross-spectrum"
    cross = r["cross"]
    assert cross["averages"] == pytest.approx(2 * 40 * FS / 16384, rel=0.01)
    assert cross["channels"] == [0, 1]
    assert cross["channel_margin_db"] == pytest.approx(-11.0, abs=0.5)  # -10 and -12 dB: geometric mean
    # One bin resolves 2 sqrt(Sxx Syy / nu) (nu = 2k / (1 + 2 (1/6)^2) for k Hann segments at 50 % overlap,
    # Welch 1967): here above the DUT's density, which the band's many bins resolve together.
    k = cross["averages"]
    nu = 2 * k / (1 + 2 * (1 / 6) ** 2 * (1 - 1 / k))
    sxx_syy = OUT ** 4 * (1 + 10) * (1 + 10 * 1.26 ** 2)
    assert cross["resolution_floor_v_per_rthz"] == pytest.approx(math.sqrt(2 * math.sqrt(sxx_syy / nu)), rel=0.03)
    assert any("cross-spectrum:" in n for n in r["notes"])
    # One channel alone, as every analysis before, reads the input's noise as the DUT's: 10 dB high and more.
    rc, alone = _analyze(tmp_path, "--terminated", term)
    assert rc == 0 and alone["output_estimator"] == "auto-spectrum" and "cross" not in alone
    assert alone["noise_figure_db"] > r["noise_figure_db"] + 8.0


def test_the_correlated_background_is_subtracted(tmp_path):
    rng = np.random.default_rng(6)
    shared = OUT * 0.7  # the analyzer's correlated noise: half the DUT's power
    term = _pair(tmp_path / "t.wav", rng, seconds=40, dut=OUT, own_db=6.0, shared=shared)
    bg = _pair(tmp_path / "bg.wav", rng, seconds=40, dut=0.0, own_db=6.0, shared=shared)
    rc, r = _analyze(tmp_path, "--terminated", term, "--cross", "--background", bg)
    assert rc == 0
    u = r["uncertainty"]["noise_figure_db"]
    assert abs(r["noise_figure_db"] - NF_TRUE) <= u, (r["noise_figure_db"], NF_TRUE, u)
    band_w = 20_000 - 20
    assert r["cross"]["background_vrms"] == pytest.approx(shared * math.sqrt(band_w), rel=0.1)
    assert r["files"]["background"].endswith("bg.wav")
    rc, kept = _analyze(tmp_path, "--terminated", term, "--cross")
    assert rc == 0 and kept["noise_figure_db"] > r["noise_figure_db"] + 1.0  # the background read as DUT


def test_refusals_are_one_line_and_exit_2(tmp_path, capsys):
    rng = np.random.default_rng(7)
    term = _pair(tmp_path / "t.wav", rng, seconds=1, dut=OUT, own_db=20.0)
    mono = tmp_path / "mono.wav"
    sf.write(mono, _white(rng, FS * 3, OUT) / VPFS, FS, subtype="FLOAT")
    cases = [
        (["--terminated", term, "--background", term], "add --cross"),
        (["--terminated", term, "--cross", "--floor", mono], "needs no --floor"),
        (["--terminated", mono, "--cross"], "channel 1"),
        (["--terminated", term, "--cross", "--cross-channels", "1,1"], "one channel twice"),
        (["--terminated", term, "--cross"], "record about"),  # 20 dB under each input, 1 s: not resolved
        (["--terminated", term, "--cross", "--background", term], "same file"),
        (["--terminated", term, "--cross", "--shorted", term], "same file"),
    ]
    capsys.readouterr()
    assert _analyze(tmp_path, "--terminated", term, "--cross", second=None)[0] == 2
    assert "each input's calibration" in capsys.readouterr().err
    for args, words in cases:
        capsys.readouterr()
        rc, _ = _analyze(tmp_path, *args)
        err = capsys.readouterr().err.strip()
        assert rc == 2, (args, err)
        assert words in err, (words, err)
        assert len(err.splitlines()) == 1, err


def test_each_input_has_its_own_calibration(tmp_path):
    # The second input runs 6 dB hotter (its gain knob turned up): its own volts per full scale puts the
    # estimate right; taking the first input's for it would read the output noise 3 dB high.
    rng = np.random.default_rng(12)
    term = _pair(tmp_path / "t.wav", rng, seconds=30, dut=OUT, own_db=6.0, second_gain=2.0)
    rc, right = _analyze(tmp_path, "--terminated", term, "--cross", second=VPFS / 2)
    assert rc == 0
    assert abs(right["noise_figure_db"] - NF_TRUE) <= right["uncertainty"]["noise_figure_db"]
    assert right["cross"]["second_volts_per_fs"] == pytest.approx(VPFS / 2)
    rc, wrong = _analyze(tmp_path, "--terminated", term, "--cross", second=VPFS)
    assert rc == 0 and wrong["output_noise_dbu"] - right["output_noise_dbu"] == pytest.approx(3.01, abs=0.1)



def test_a_sidecar_states_each_inputs_calibration(tmp_path, capsys):
    rng = np.random.default_rng(13)
    term = _pair(tmp_path / "t.wav", rng, seconds=20, dut=OUT, own_db=6.0, second_gain=2.0)
    (tmp_path / "t.json").write_text(json.dumps({"condition": "terminated",
                                                 "channel_volts_per_fs": {"0": VPFS, "1": VPFS / 2}}))
    out = tmp_path / "s.json"
    assert main(["analyze", "--terminated", str(term), "--cross", "--gain-db", str(GAIN_DB), "--rs", str(RS),
                 "--temperature-k", "290", "--json", str(out), "--quiet"]) == 0
    r = json.loads(out.read_text())
    assert r["volts_per_fs"] == pytest.approx(VPFS) and r["cross"]["second_volts_per_fs"] == pytest.approx(VPFS / 2)
    assert abs(r["noise_figure_db"] - NF_TRUE) <= r["uncertainty"]["noise_figure_db"]
    # One volts_per_fs for the whole recording says nothing of the second input's own: refused.
    (tmp_path / "t.json").write_text(json.dumps({"condition": "terminated", "volts_per_fs": VPFS}))
    capsys.readouterr()
    assert main(["analyze", "--terminated", str(term), "--cross", "--gain-db", str(GAIN_DB), "--rs", str(RS),
                 "--json", str(tmp_path / "s2.json")]) == 2
    assert "each input's calibration" in capsys.readouterr().err


def test_fifteen_db_under_one_input_from_two_minutes(tmp_path):
    # Issue 21's acceptance case: the DUT 15 dB under one input's own noise, a 2-minute two-channel capture.
    # Three independent captures (seeds fixed): a k=2 interval covers the truth with 95 % probability, so at
    # least two of three must (a calibrated U fails this 0.7 % of the time); the coverage itself is tested over
    # 600 seeds in test_cross_coverage.py.
    within = 0
    for seed in (14, 15, 16):
        rng = np.random.default_rng(seed)
        term = _pair(tmp_path / f"t{seed}.wav", rng, seconds=120, dut=OUT, own_db=15.0)
        rc, r = _analyze(tmp_path, "--terminated", term, "--cross")
        assert rc == 0
        assert r["cross"]["channel_margin_db"] == pytest.approx(-16.0, abs=0.6)  # -15 and -17 dB: geometric mean
        within += abs(r["noise_figure_db"] - NF_TRUE) <= r["uncertainty"]["noise_figure_db"]
        (tmp_path / f"t{seed}.wav").unlink()
    assert within >= 2


def test_the_shorted_input_through_the_cross_spectrum_gives_the_voltage_noise_under_the_inputs_own(tmp_path):
    # With its input shorted the DUT puts out only its voltage noise, en G (1e-7 V/√Hz here): 12 dB under the
    # first input's own noise and 14 dB under the second's. Through the cross-spectrum (both recordings, the
    # background subtracted from each) the 1 kHz voltage noise comes out within its U (k=2) in at least two of
    # three seeds, as in the acceptance case above; one channel alone reads the inputs' own noise instead.
    en_out = EN * 10 ** (GAIN_DB / 20)
    own_db = 6.0 + 20 * math.log10(en_out / OUT)  # the inputs' own noise relative to OUT: 6 dB over en G
    within = 0
    for seed in (21, 22, 23):
        rng = np.random.default_rng(seed)
        term = _pair(tmp_path / "t.wav", rng, seconds=60, dut=OUT, own_db=own_db)
        short = _pair(tmp_path / "s.wav", rng, seconds=60, dut=en_out, own_db=own_db)
        rc, r = _analyze(tmp_path, "--terminated", term, "--shorted", short, "--cross")
        assert rc == 0
        en, u_db = r["voltage_noise_at_1khz_v_per_rthz"], r["uncertainty"]["voltage_noise_at_1khz_db"]
        assert 0 < u_db < 1.5, u_db
        within += abs(20 * math.log10(en / EN)) <= u_db
        assert r["voltage_noise_band_vrms"] == pytest.approx(EN * math.sqrt(20_000 - 20), rel=0.15)
    assert within >= 2
    rc, alone = _analyze(tmp_path, "--terminated", term, "--shorted", short)
    assert rc == 0 and alone["voltage_noise_at_1khz_v_per_rthz"] > 1.8 * EN  # the inputs' own: 6 dB and more


def test_a_shorted_recording_the_cross_spectrum_cannot_resolve_is_said_not_reported(tmp_path):
    rng = np.random.default_rng(24)
    term = _pair(tmp_path / "t.wav", rng, seconds=20, dut=OUT, own_db=6.0)
    short = _pair(tmp_path / "s.wav", rng, seconds=20, dut=0.0, own_db=6.0)  # no common noise at all
    rc, r = _analyze(tmp_path, "--terminated", term, "--shorted", short, "--cross")
    assert rc == 0 and r["voltage_noise_at_1khz_v_per_rthz"] is None
    assert any("is not resolved in the cross-spectrum" in n and "record it longer" in n for n in r["notes"])


@pytest.mark.parametrize(("level", "expected"), [(-1.0, False), (0.0, False), (0.05, False), (1.0, True)])
def test_a_cross_estimate_is_resolved_only_when_three_sigma_above_zero(level, expected):
    # A co-spectrum band sum within 3 standard deviations of zero is not resolved; a negative one never is
    # (it once passed, its relative deviation being infinite). 100 bins of variance 1e-4, uncorrelated:
    # sigma = 0.1 of the band sum of unit weights.
    from benchnf.measure.gain_details import resolved
    w, var = np.full(100, 1.0), np.full(100, 1e-4)
    measured = np.full(100, level / 100)
    assert resolved(w, measured, None, dof_measured=10.0, dof_floor=None, correlation=(1.0,),
                    variance_measured=var) is expected
