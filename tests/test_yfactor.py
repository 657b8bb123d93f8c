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
from benchnf.measure.yfactor import HotColdSource, analyze_yfactor
from benchnf.measure.yfactor_passive import PassiveStage, side_loss

T0 = 290.0


def _chain(seed=0, fs=48_000.0, seconds=4.0, enr_db=15.0, tc=296.0, nf1_db=2.0, g1_db=20.0, nf2_db=12.0,
           loss_after_db=0.0, source_side=(), receiver_side=()):
    """Noise powers in kelvin (times a scale) through the passive stages (dB, K) on the source side, the
    DUT (Te1, G1), a loss at T0 and the passive stages on the receiver side, and a receiver (Te2); each
    matched passive stage passes T/L and adds T_phys (1 - 1/L) (common practice)."""
    rng = np.random.default_rng(seed)
    th = T0 * (1 + 10 ** (enr_db / 10))
    te1, te2 = T0 * (10 ** (nf1_db / 10) - 1), T0 * (10 ** (nf2_db / 10) - 1)
    g1, la = 10 ** (g1_db / 10), 10 ** (loss_after_db / 10)
    n = int(fs * seconds)
    scale = 1e-10

    def passive(t, stages):
        for db, tk in stages:
            loss = 10 ** (db / 10)
            t = t / loss + tk * (1 - 1 / loss)
        return t

    def through(ts):  # source -> passives -> DUT -> loss at T0 -> passives -> receiver
        at_loss_out = g1 * (passive(ts, source_side) + te1) / la + T0 * (1 - 1 / la)
        return passive(at_loss_out, receiver_side) + te2

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
                        passives=[PassiveStage("pad", "receiver", 3.0, T0)])
    assert r.noise_figure_db == pytest.approx(2.0, abs=0.06)
    assert r.gain_db == pytest.approx(20.0, abs=0.06)


# Two stages on each side at different temperatures (a cooled cable among them, INVENTED DATA).
_SOURCE_SIDE = ((0.8, 296.0), (0.5, 77.0))
_RECEIVER_SIDE = ((2.0, 320.0), (1.0, 296.0))


def test_passive_stages_on_both_sides_are_de_embedded_in_signal_order():
    c = _chain(seed=7, source_side=_SOURCE_SIDE, receiver_side=_RECEIVER_SIDE)
    stages = [PassiveStage(f"s{i}", "source", db, k) for i, (db, k) in enumerate(_SOURCE_SIDE)]
    stages += [PassiveStage(f"r{i}", "receiver", db, k) for i, (db, k) in enumerate(_RECEIVER_SIDE)]
    r = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                        source=HotColdSource(enr=EnrTable.constant(15.0, cold_k=296.0)), passives=stages)
    u = r.uncertainty["noise_figure_db"]
    assert r.noise_figure_db == pytest.approx(2.0, abs=u)
    assert r.gain_db == pytest.approx(20.0, abs=r.uncertainty["gain_db"])
    assert [(p.name, p.side) for p in r.passive_stages] == [("s0", "source"), ("s1", "source"),
                                                           ("r0", "receiver"), ("r1", "receiver")]
    reversed_order = stages[1::-1] + stages[2:]  # the same stages in the wrong order on the source side
    wrong = analyze_yfactor(hot=c["hot"], cold=c["cold"], cal_hot=c["cal_hot"], cal_cold=c["cal_cold"],
                            source=HotColdSource(enr=EnrTable.constant(15.0, cold_k=296.0)),
                            passives=reversed_order)
    # The order matters and is kept: in the wrong order the source side's Te (by hand, Friis) differs by
    # d, and the DUT's Te by d / L.
    (la, ta), (lb, tb) = [(10 ** (db / 10), k) for db, k in _SOURCE_SIDE]
    d = ((lb - 1) * tb + (la - 1) * ta * lb) - ((la - 1) * ta + (lb - 1) * tb * la)
    te_wrong = r.noise_temperature_k - d / (la * lb)
    assert wrong.noise_figure_db == pytest.approx(10 * math.log10(1 + te_wrong / T0), abs=1e-6)
    assert abs(wrong.noise_figure_db - r.noise_figure_db) > 0.03


def test_passive_stages_together_are_one_loss_by_friis():
    # Friis 1944 for passive stages: two 3 dB pads at 290 K are one 6 dB pad at 290 K (F = L);
    # 1 dB at 290 K then 3 dB at 77 K: Te = (L1-1) 290 + (L2-1) 77 L1, by hand.
    both = side_loss([PassiveStage("a", "source", 3.0, 290.0), PassiveStage("b", "source", 3.0, 290.0)], "source")
    assert both.loss_db == pytest.approx(6.0, abs=1e-12) and both.temperature_k == pytest.approx(290.0)
    l1, l2 = 10 ** 0.1, 10 ** 0.3
    te = (l1 - 1) * 290.0 + (l2 - 1) * 77.0 * l1
    mixed = side_loss([PassiveStage("a", "receiver", 1.0, 290.0), PassiveStage("b", "receiver", 3.0, 77.0)],
                      "receiver")
    assert (10 ** (mixed.loss_db / 10) - 1) * mixed.temperature_k == pytest.approx(te, rel=1e-12)
    assert side_loss([PassiveStage("a", "receiver", 1.0, 290.0)], "source") is None


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


def test_cli_chain_file_gives_the_same_figures_as_the_side_options(tmp_path):
    f = _iq_files(tmp_path)
    chain = tmp_path / "bench.toml"  # INVENTED DATA: the set-up in signal order around the DUT
    chain.write_text('temperature_k = 296.0\n[[stage]]\nname = "source cable"\nloss_db = 0.4\n'
                     '[[stage]]\nname = "preamp"\n'
                     '[[stage]]\nname = "dc block"\nloss_db = 0.2\ntemperature_k = 310.0\n'
                     '[[stage]]\nname = "receiver cable"\nloss_db = 0.5\n')
    base = ["yfactor", "--hot", str(f["hot"]), "--cold", str(f["cold"]), "--cal-hot", str(f["cal_hot"]),
            "--cal-cold", str(f["cal_cold"]), "--enr-db", "5.5", "--t-cold-k", "297", "--quiet"]
    assert main([*base, "--chain", str(chain), "--json", str(tmp_path / "a.json")]) == ExitStatus.OK
    assert main([*base, "--source-side", "0.4", "296", "--receiver-side", "0.2", "310", "--receiver-side", "0.5",
                 "296", "--json", str(tmp_path / "b.json")]) == ExitStatus.OK
    a, b = (json.loads((tmp_path / n).read_text()) for n in ("a.json", "b.json"))
    assert a["noise_figure_db"] == pytest.approx(b["noise_figure_db"], abs=1e-9)
    assert a["gain_db"] == pytest.approx(b["gain_db"], abs=1e-9)
    assert [(s["name"], s["side"]) for s in a["passive_stages"]] == [
        ("source cable", "source"), ("dc block", "receiver"), ("receiver cable", "receiver")]
    assert main([*base, "--json", str(tmp_path / "c.json")]) == ExitStatus.OK
    plain = json.loads((tmp_path / "c.json").read_text())  # without them the gain reads low by every loss
    assert a["gain_db"] - plain["gain_db"] == pytest.approx(0.4 + 0.2 + 0.5, abs=1e-9)


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


def _cu8(path, level_dbfs, seed, n=400_000):
    """An 8-bit recording as an RTL2832U-class receiver writes it (INVENTED DATA, seeded): Gaussian noise at a
    given RMS level, I and Q as (x + 1) * 128 rounded and clipped to 0..255 (the rails)."""
    rng = np.random.default_rng(seed)
    sigma = math.sqrt(10 ** (level_dbfs / 10) / 2)
    raw = np.clip(np.round(rng.normal(0, sigma, 2 * n) * 128 + 128), 0, 255).astype(np.uint8)
    raw.tofile(path.with_suffix(".sigmf-data"))
    path.with_suffix(".sigmf-meta").write_text(json.dumps({
        "global": {"core:datatype": "cu8", "core:sample_rate": 1.0e6, "core:version": "1.0.0"},
        "captures": [{"core:sample_start": 0, "core:frequency": 145e6}], "annotations": []}))
    return path.with_suffix(".sigmf-meta")


@pytest.mark.parametrize("hot_dbfs, rails, level", [(-12.0, False, False), (-8.0, True, False)])
def test_8_bit_compression_note_looks_at_the_rails_not_the_level(tmp_path, hot_dbfs, rails, level):
    # At -12 dBFS RMS, 8-bit noise peaks stay 5.6 sigma under the rails: nothing clips (the old -15 dBFS rule
    # noted compression here); at -8 dBFS about 1e-4 of the values reach the rails (Gaussian tail).
    hot, cold = _cu8(tmp_path / "hot", hot_dbfs, 1), _cu8(tmp_path / "cold", hot_dbfs - 8.0, 2)
    r = analyze_yfactor(hot=open_sigmf(hot), cold=open_sigmf(cold), source=HotColdSource(enr=EnrTable.constant(15.0)))
    assert any("converter's rails" in n for n in r.notes) is rails
    assert any("may be compressing" in n for n in r.notes) is level


def test_floating_point_iq_keeps_the_level_rule(tmp_path):
    rng = np.random.default_rng(3)

    def noise(level):
        s = math.sqrt(10 ** (level / 10) / 2)
        return rng.normal(0, s, 200_000) + 1j * rng.normal(0, s, 200_000)
    for name, lvl in (("hot", -12.0), ("cold", -20.0)):
        write_sigmf(tmp_path / name, noise(lvl), sample_rate_hz=1e6, centre_hz=145e6, datatype="cf32_le")
    r = analyze_yfactor(hot=open_sigmf(tmp_path / "hot.sigmf-meta"), cold=open_sigmf(tmp_path / "cold.sigmf-meta"),
                        source=HotColdSource(enr=EnrTable.constant(15.0)))
    assert any("reaches -12.0 dBFS" in n and "may be compressing" in n for n in r.notes)


def test_an_output_that_may_not_be_written_is_refused_before_the_work(tmp_path, capsys):
    f = _iq_files(tmp_path)
    rc = main(["yfactor", "--hot", str(f["hot"]), "--cold", str(f["cold"]), "--enr-db", "5.5",
               "--json", str(f["hot"].with_suffix(".sigmf-data"))])
    out, err = capsys.readouterr()
    assert rc == ExitStatus.BAD_INPUT and "is an input of this run" in err
    assert "Results" not in out  # nothing measured, nothing printed
