"""Y-factor measurements end to end on seeded synthetic captures (INVENTED DATA), SigMF files,
and bad input on the command line."""

import json
import math
import re

import numpy as np
import pytest

from benchnf.capture import Capture
from benchnf.cli import ExitStatus, main
from benchnf.errors import CaptureError, MeasurementError
from benchnf.io.sigmf_iq import open_sigmf, write_sigmf
from benchnf.noise.yfactor import EnrTable
from benchnf.measure.yfactor import HotColdSource, Loss, analyze_yfactor

T0 = 290.0


def _chain(seed=0, fs=48_000.0, seconds=4.0, enr_db=15.0, tc=296.0, nf1_db=2.0, g1_db=20.0, nf2_db=12.0,
           loss_after_db=0.0):
    """Noise powers in kelvin (times a scale) through DUT (Te1, G1), a loss, and a receiver (Te2)."""
    rng = np.random.default_rng(seed)
    th = T0 * (1 + 10 ** (enr_db / 10))
    te1, te2 = T0 * (10 ** (nf1_db / 10) - 1), T0 * (10 ** (nf2_db / 10) - 1)
    g1, la = 10 ** (g1_db / 10), 10 ** (loss_after_db / 10)
    n = int(fs * seconds)
    scale = 1e-10

    def through(ts):  # source -> DUT -> loss at T0 -> receiver
        at_loss_out = g1 * (ts + te1) / la + T0 * (1 - 1 / la)
        return at_loss_out + te2

    def cap(kelvin):
        return Capture.from_array(rng.normal(0, math.sqrt(scale * kelvin), n), sample_rate_hz=fs)

    return dict(hot=cap(through(th)), cold=cap(through(tc)), cal_hot=cap(th + te2), cal_cold=cap(tc + te2))


def test_recovers_dut_nf_and_gain_through_a_noisy_receiver():
    c = _chain()
    r = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                        source=HotColdSource(enr=EnrTable.constant(15.0, cold_k=296.0)))
    assert r.second_stage_corrected
    assert r.noise_figure_db == pytest.approx(2.0, abs=max(0.05, r.uncertainty["noise_figure_db"]))
    assert r.gain_db == pytest.approx(20.0, abs=0.05)
    assert r.receiver_noise_figure_db == pytest.approx(12.0, abs=0.1)
    assert r.system_noise_figure_db > r.noise_figure_db + 0.3  # the correction mattered
    assert len(r.rows) == 16 and all(row.noise_figure_db is not None for row in r.rows)


def test_cold_temperature_is_not_assumed_to_be_t0():
    c = _chain(tc=330.0)
    right = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                            source=HotColdSource(enr=EnrTable.constant(15.0), t_cold_k=330.0))
    wrong = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                            source=HotColdSource(enr=EnrTable.constant(15.0)))
    assert right.noise_figure_db == pytest.approx(2.0, abs=0.06)
    assert abs(wrong.noise_figure_db - 2.0) > 0.15


def test_loss_after_the_dut_is_de_embedded():
    c = _chain(loss_after_db=3.0, seed=4)
    r = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                        source=HotColdSource(enr=EnrTable.constant(15.0, cold_k=296.0)),
                        loss_after=Loss(3.0, T0))
    assert r.noise_figure_db == pytest.approx(2.0, abs=0.06)
    assert r.gain_db == pytest.approx(20.0, abs=0.06)


def test_repeats_give_scatter():
    pairs = [_chain(seed=s, seconds=1.0) for s in range(4)]
    r = analyze_yfactor(hot=[p["hot"] for p in pairs], cold=[p["cold"] for p in pairs],
                        cal_hot=pairs[0]["cal_hot"], cal_cold=pairs[0]["cal_cold"],
                        source=HotColdSource(enr=EnrTable.constant(15.0, cold_k=296.0)))
    assert r.repeats.n == 4 and r.repeats.noise_figure_std_db < 0.2


def test_small_y_is_flagged():
    c = _chain(enr_db=3.0, nf1_db=24.0, seconds=1.0)  # NF far above the ENR
    r = analyze_yfactor(hot=c["hot"], cold=c["cold"], source=HotColdSource(enr=EnrTable.constant(3.0, cold_k=296.0)))
    assert any("hardly resolved" in n for n in r.notes)


def test_swapped_hot_and_cold_are_refused():
    c = _chain()
    with pytest.raises(MeasurementError, match="not hotter"):
        analyze_yfactor(hot=c["cold"], cold=c["hot"], source=HotColdSource(enr=EnrTable.constant(15.0)))


def _iq(rng, n, kelvin, scale=1e-9):
    return (rng.standard_normal(n) + 1j * rng.standard_normal(n)) * math.sqrt(scale * kelvin / 2)


def test_sigmf_round_trip_with_the_sigmf_library(tmp_path):
    sigmffile = pytest.importorskip("sigmf.sigmffile")
    x = _iq(np.random.default_rng(0), 5000, 1e6)
    write_sigmf(tmp_path / "rec", x, sample_rate_hz=1e6, centre_hz=433.9e6, datatype="cf32_le",
                annotations=[("hot", 0, 2500), ("cold", 2500, 2500)])
    lib = sigmffile.fromfile(str(tmp_path / "rec.sigmf-meta"))
    np.testing.assert_allclose(lib.read_samples(), x.astype(np.complex64))
    cap = open_sigmf(tmp_path / "rec.sigmf-data")
    assert (cap.sample_rate_hz, cap.centre_hz, cap.n_frames) == (1e6, 433.9e6, 5000)
    assert [s[0] for s in cap.segments] == ["hot", "cold"]
    with pytest.raises(CaptureError, match="exists already"):
        write_sigmf(tmp_path / "rec", x, sample_rate_hz=1e6, centre_hz=1.0)


def _iq_files(tmp_path, *, centre=145e6, fs=250e3, datatype="ci16_le", rates=None):
    rng = np.random.default_rng(1)
    n = 60_000
    th, tc, te1, te2, g1 = T0 * (1 + 10 ** 0.55), 297.0, 60.0, 1000.0, 10 ** 1.8
    out = {}
    for name, k in (("hot", g1 * (th + te1) + te2), ("cold", g1 * (tc + te1) + te2),
                    ("cal_hot", th + te2), ("cal_cold", tc + te2)):
        x = _iq(rng, n, k, scale=1e-3 / (g1 * (th + te1) + te2)) + 0.003
        write_sigmf(tmp_path / name, x, sample_rate_hz=(rates or {}).get(name, fs), centre_hz=centre,
                    datatype=datatype)
        out[name] = tmp_path / f"{name}.sigmf-meta"
    return out


def test_cli_on_sigmf_excludes_dc_and_edges_and_writes_json(tmp_path, capsys):
    f = _iq_files(tmp_path)
    out = tmp_path / "y.json"
    args = ["yfactor", "--hot", str(f["hot"]), "--cold", str(f["cold"]), "--cal-hot", str(f["cal_hot"]),
            "--cal-cold", str(f["cal_cold"]), "--enr-db", "5.5", "--t-cold-k", "297", "--json", str(out),
            "--quiet", "--plot", str(tmp_path / "p")]
    assert main(args) == ExitStatus.OK
    data = json.loads(out.read_text())
    for key in ("noise_figure_db", "noise_temperature_k", "gain_db", "y_factor_db", "second_stage_corrected",
                "rows", "schema_version"):
        assert key in data
    assert data["second_stage_corrected"] is True
    te_true = 60.0
    assert data["noise_temperature_k"] == pytest.approx(te_true, abs=3 * data["uncertainty"]["noise_figure_db"] * 23 + 5)
    assert data["gain_db"] == pytest.approx(18.0, abs=0.15)
    assert data["excluded"]["dc_spike_hz"][0] < 145e6 < data["excluded"]["dc_spike_hz"][1]
    assert "DC spike" in capsys.readouterr().out
    assert (tmp_path / "p" / "yfactor.png").is_file()


@pytest.mark.parametrize("case", ["rates differ", "centres differ", "enr table short", "below 0 K",
                                  "real datatype", "no sample rate", "swapped"])
def test_cli_bad_input(case, tmp_path, capsys):
    if case == "rates differ":
        f = _iq_files(tmp_path, rates={"cold": 200e3})
        extra, pattern = [], "recorded at 200000 Hz"
    elif case == "centres differ":
        f = _iq_files(tmp_path)
        (tmp_path / "other").mkdir()
        f["cold"] = _iq_files(tmp_path / "other", centre=146e6)["cold"]
        extra, pattern = [], "centred at"
    else:
        f = _iq_files(tmp_path)
        extra, pattern = [], ""
    args = ["yfactor", "--hot", str(f["hot"]), "--cold", str(f["cold"]), "--quiet"]
    src = ["--enr-db", "5.5"]
    if case == "enr table short":
        t = tmp_path / "t.toml"
        t.write_text("points = [[100e6, 5.0], [120e6, 5.1]]\n")
        src, pattern = ["--enr-table", str(t)], "ENR table covers"
    elif case == "below 0 K":
        src, pattern = ["--t-hot-k", "400", "--t-cold-c", "-300"], "not a temperature above"
    elif case == "real datatype":
        meta = json.loads(f["hot"].read_text())
        meta["global"]["core:datatype"] = "ri16_le"
        f["hot"].write_text(json.dumps(meta))
        pattern = "not complex IQ|not a readable SigMF"
    elif case == "no sample rate":
        meta = json.loads(f["hot"].read_text())
        del meta["global"]["core:sample_rate"]
        f["hot"].write_text(json.dumps(meta))
        pattern = "sample_rate|not a readable SigMF"
    elif case == "swapped":
        args = ["yfactor", "--hot", str(f["cold"]), "--cold", str(f["hot"]), "--quiet"]
        pattern = "not hotter"
    rc = main(args + src + extra)
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == ExitStatus.BAD_INPUT
    assert len(err) == 1 and err[0].startswith("benchnf: error:")
    assert re.search(pattern, err[0]), err[0]
