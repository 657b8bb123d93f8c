"""benchnf bias: the device models' hand formulas, the fit of a built stage, parts ranked, and the command's
refusals. (The models against ngspice are in tests/reference/test_devices_ngspice.py.)"""

from __future__ import annotations

import json
import math

import pytest

from benchnf.cli import main
from benchnf.errors import ParameterError
from benchnf.measure.bias import BiasRequest, run_bias
from benchnf.measure.bias_fit import bjt_from_en_in, fet_from_en_in
from benchnf.noise.devices import Bjt, Fet, Source, best_current, input_density_v2, noise_factor
from benchnf.units import BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, T0_K

K, Q = BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C
STAGE = dict(ic_a=1e-3, beta=200.0, rbb_ohm=10.0, re_ohm=10.0, vaf_v=100.0, vce_v=5.0, is_a=1e-14)


def test_bipolar_reduces_to_the_textbook_forms_when_beta_is_large():
    # Textbook (Motchenbacher & Connelly, the bipolar noise model; from memory):
    # en^2 = 4kT (rbb' + RE + 1/(2 gm)), in^2 = 2 q Ic / beta, uncorrelated. With beta -> 1e9 the
    # model's small terms vanish and it must give exactly these.
    d = Bjt(1e-3, 1e9, 10.0, re_ohm=10.0)
    n = d.noise(1000.0)
    gm = 1e-3 / (K * T0_K / Q)
    assert float(n.en2[0]) == pytest.approx(4 * K * T0_K * (20 + 1 / (2 * gm)), rel=1e-6)
    assert float(n.in2[0]) == pytest.approx(2 * Q * 1e-3 / 1e9, rel=1e-6)


def test_gate_leakage_is_schottky_shot_noise():
    # Schottky's formula i^2 = 2 q I (common practice): 1 nA of gate leakage gives 17.9 fA/rtHz.
    n = Fet(1e-3, gm_s=5e-3, ig_a=1e-9).noise(1000.0)
    assert float(n.in_[0]) == pytest.approx(math.sqrt(2 * Q * 1e-9), rel=1e-12)
    assert float(n.in_[0]) == pytest.approx(17.9e-15, rel=2e-3)


def test_fet_channel_noise_is_two_thirds_of_4kt_over_gm_and_gm_follows_the_square_law():
    # Square law (common practice): gm = 2 sqrt(IDSS Id)/|Vp|; 1 mA of 4 mA IDSS with Vp = -2 V: 2 mS.
    d = Fet(1e-3, idss_a=4e-3, vp_v=-2.0)
    assert d.transconductance_s == pytest.approx(2e-3, rel=1e-12)
    assert float(d.noise(1000.0).en2[0]) == pytest.approx(4 * K * T0_K * (2 / 3) / 2e-3, rel=1e-12)
    # a stated gm scales as sqrt(Id)
    assert Fet(1e-3, gm_s=2e-3).at_current(4e-3).transconductance_s == pytest.approx(4e-3, rel=1e-12)


def test_parallel_devices_scale_en_and_in_as_root_n():
    one, four = Bjt(1e-3, 200, 10.0).noise(1000.0), Bjt(1e-3, 200, 10.0, count=4).noise(1000.0)
    assert float(four.en[0]) == pytest.approx(float(one.en[0]) / 2, rel=1e-12)
    assert float(four.in_[0]) == pytest.approx(float(one.in_[0]) * 2, rel=1e-12)


def test_an_ideal_transformer_matches_the_source_to_ropt():
    # A lossless 1:n transformer showing the device n^2 Rs = Ropt reaches NFmin (the en-in model, common practice).
    d = Bjt(1e-3, 200, 10.0)
    n = d.noise(1000.0)
    ropt = float(n.en[0] / n.in_[0])
    rs = 20.0
    matched = Source(rs, turns=math.sqrt(ropt / rs))
    f_min = 1 + (float(n.en[0] * n.in_[0]) + float(n.cross[0])) / (2 * K * T0_K)
    assert float(noise_factor(n, matched)[0]) == pytest.approx(f_min, rel=1e-9)
    # the winding's own noise only adds
    assert noise_factor(n, Source(rs, matched.turns, 5.0))[0] > noise_factor(n, matched)[0]


def test_input_density_refers_everything_to_the_source_terminals():
    d = Bjt(1e-3, 200, 10.0).noise(1000.0)
    s = Source(50.0, turns=2.0, winding_ohm=10.0)
    total = input_density_v2(d, s, temperature_k=T0_K)
    assert float(total[0]) / (4 * K * T0_K * 50.0) == pytest.approx(float(noise_factor(d, s)[0]), rel=1e-12)


def test_best_current_finds_the_minimum_and_its_range():
    d = Bjt(**STAGE)
    best = best_current(d, lambda x: 10 * math.log10(float(noise_factor(x.noise(1000.0), Source(200.0))[0])),
                        current_range_a=(1e-5, 1e-2))
    nf = lambda i: 10 * math.log10(float(noise_factor(d.at_current(i).noise(1000.0), Source(200.0))[0]))  # noqa: E731
    for i in (best.current_a * 0.9, best.current_a * 1.1):
        assert nf(i) > best.noise_figure_db
    lo, hi = best.current_range_a
    assert nf(lo) == pytest.approx(best.noise_figure_db + 0.1, abs=1e-6)
    assert nf(hi) == pytest.approx(best.noise_figure_db + 0.1, abs=1e-6)
    assert not best.at_edge


@pytest.mark.parametrize("count", [1, 3])
def test_the_fit_gives_back_the_device_that_made_en_and_in(count):
    made = Bjt(2e-4, 150.0, 35.0, re_ohm=5.0, count=count)
    n = made.noise(1000.0)
    fitted = bjt_from_en_in(made.__class__(2e-4, 100.0, 0.0, re_ohm=5.0, count=count), float(n.en[0]), float(n.in_[0]))
    assert fitted.rbb_ohm == pytest.approx(35.0, rel=1e-9)
    assert fitted.beta == pytest.approx(150.0, rel=1e-9)
    fet = Fet(1e-3, gm_s=4e-3, ig_a=2e-12, rs_ohm=20.0, count=count)
    m = fet.noise(1000.0)
    back = fet_from_en_in(Fet(1e-3, gm_s=1e-3, rs_ohm=20.0, count=count), float(m.en[0]), float(m.in_[0]))
    assert back.transconductance_s == pytest.approx(4e-3, rel=1e-9)
    assert back.ig_a == pytest.approx(2e-12, rel=1e-9)


def test_an_en_below_the_shot_noise_floor_is_refused():
    # 1 mA: 2kT/gm alone gives 0.51 nV/rtHz; 0.3 nV/rtHz cannot come from one transistor at that current.
    with pytest.raises(ParameterError, match="below what a bipolar transistor"):
        bjt_from_en_in(Bjt(1e-3, 200, 0.0), 0.3e-9, 1e-12)


def _eni_json(tmp_path, en=1.2e-9, i_n=0.8e-12):
    """A results file of the eni kind with the stated en and in at 1 kHz (INVENTED DATA, written through the
    result type so it is a valid file)."""
    from benchnf.measure.stages import EniResult, EniRow, NfVsRs
    row = EniRow(1000.0, en, i_n, en * 0.02, i_n * 0.1, None, None, None, None, None, None)
    r = EniResult.of(row, rows=(row,), points=(), nf_vs_rs=NfVsRs((), {}), notes=())
    path = tmp_path / "stage_eni.json"
    path.write_text(json.dumps(r.to_dict()))
    return path


def test_a_built_stage_is_explained_and_its_best_current_named(tmp_path, capsys):
    # A stage made by the model itself at 0.2 mA (rbb' 40 ohm, beta 180): the fit must give them back and say
    # what the best current would reach.
    made = Bjt(0.2e-3, 180.0, 40.0)
    n = made.noise(1000.0)
    path = _eni_json(tmp_path, float(n.en[0]), float(n.in_[0]))
    out = tmp_path / "b.json"
    assert main(["bias", "bjt", "--from", str(path), "--ic", "0.2m", "--rs", "200", "--json", str(out)]) == 0
    data = json.loads(out.read_text())
    e = data["explained"]
    assert e["rbb_ohm"] == pytest.approx(40.0, rel=1e-6)
    assert e["beta"] == pytest.approx(180.0, rel=1e-6)
    assert e["rbb_u95_ohm"] > 0 and e["beta_u95"] > 0
    assert e["best_noise_figure_db"] < e["noise_figure_db"] - 0.5
    assert data["optimum"]["ic_a"] > 0.5e-3
    text = capsys.readouterr().out
    assert "this stage runs at 200 uA; at " in text  # the terminal's text is ASCII


def test_the_command_writes_the_issue_keys(tmp_path):
    out = tmp_path / "b.json"
    assert main(["bias", "bjt", "--ic", "1m", "--beta", "200", "--rbb", "10", "--vaf", "100", "--vce", "5",
                 "--re", "10", "--rs", "200", "--temperature-k", "290", "--optimise", "--json", str(out)]) == 0
    data = json.loads(out.read_text())
    for key in ("en_v_per_rthz", "in_a_per_rthz", "noise_figure_db", "ropt_ohm"):
        assert isinstance(data[key], float)
    lo, hi = data["optimum"]["ic_range_a"]
    assert lo < data["optimum"]["ic_a"] < hi


def test_band_ein_without_weighting_or_flicker_is_the_white_density_times_root_bandwidth():
    # EIN = sqrt(e^2 B) for a white density over a band B (common practice); 0 dBu = sqrt(0.6) V.
    r = run_bias(BiasRequest("bjt", 200.0, (("ic_a", 1e-3), ("beta", 200.0), ("rbb_ohm", 10.0))))
    d = Bjt(1e-3, 200.0, 10.0).noise(1000.0)
    white = float(input_density_v2(d, Source(200.0), temperature_k=T0_K)[0])
    assert r.ein_dbu == pytest.approx(20 * math.log10(math.sqrt(white * 19_980) / math.sqrt(0.6)), abs=1e-3)
    assert r.band_noise_figure_db == pytest.approx(r.noise_figure_db, abs=1e-9)


def test_parts_are_ranked_by_their_least_nf(tmp_path):
    parts = tmp_path / "parts.toml"
    parts.write_text('[[part]]\nname = "noisy"\nkind = "bjt"\nbeta = 100\nrbb_ohm = 300\n\n'
                     '[[part]]\nname = "quiet"\nkind = "bjt"\nbeta = 300\nrbb_ohm = 5\n')
    r = run_bias(BiasRequest("parts", 200.0, parts=parts))
    assert [p.name for p in r.parts] == ["quiet", "noisy"]
    assert r.parts[0].best_noise_figure_db < r.parts[1].best_noise_figure_db
    assert [c.label for c in r.nf_vs_current] == ["quiet", "noisy"]


@pytest.mark.parametrize("argv, words", [
    (["bias", "bjt", "--ic", "1m", "--beta", "200", "--rs", "200"], "needs --rbb"),
    (["bias", "bjt", "--ic", "1m", "--beta", "200", "--rbb", "10", "--idss", "4m", "--rs", "200"],
     "--idss is not an option of the bjt model"),
    (["bias", "jfet", "--id", "5m", "--idss", "4m", "--vp", "-2", "--rs", "1k"], "above IDSS"),
    (["bias", "jfet", "--id", "1m", "--rs", "1k"], "needs its gm, or IDSS and Vp"),
    (["bias", "parts", "--rs", "200"], "needs the candidate parts file"),
    (["bias", "bjt", "--ic", "1m", "--beta", "200", "--rbb", "10", "--rs", "200", "--ic-range", "1m", "10u"],
     "low end must be below"),
    (["bias", "bjt", "--ic", "1m", "--beta", "200", "--rbb", "10", "--rs", "200", "--band", "0", "20000"],
     "0 < low < high"),
    (["bias", "bjt", "--ic", "1m", "--beta", "200", "--rbb", "10", "--rs", "200", "--kf", "1e-15",
      "--corner-hz", "100"], "not both"),
])
def test_bad_statements_are_one_line_and_exit_2(argv, words, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and words in err


def test_a_bad_parts_file_names_the_part(tmp_path, capsys):
    parts = tmp_path / "parts.toml"
    parts.write_text('[[part]]\nname = "no gain"\nkind = "bjt"\nrbb_ohm = 5\n')
    assert main(["bias", "parts", str(parts), "--rs", "200"]) == 2
    err = capsys.readouterr().err
    assert "part 1 (no gain)" in err and "--beta" in err


def test_explaining_needs_an_eni_result(tmp_path, capsys):
    other = tmp_path / "x.json"
    other.write_text('{"schema_version": "1", "kind": "cascade"}')
    assert main(["bias", "bjt", "--from", str(other), "--ic", "1m", "--rs", "200"]) == 2
    assert "eni" in capsys.readouterr().err


def test_a_chain_stage_can_be_a_device_and_where_to_spend_names_its_parameters(tmp_path):
    # The chain's first stage stated as a device gives the cascade the device's en and in at 1 kHz; the
    # cascade's device levers are each the chain NF with that one parameter changed (checked here by
    # building the changed chain by hand).
    from benchnf.measure.cascade import CascadeRequest, run_cascade
    from benchnf.noise.cascade import load_chain, predict
    chain = tmp_path / "chain.toml"
    text = ('name = "t"\nsource_ohm = 20.0\n\n[[stage]]\nname = "input pair"\nvoltage_gain_db = 20.0\n'
            '[stage.device]\nkind = "bjt"\nic_a = 1.5e-3\nbeta = 300\nrbb_ohm = 6\nre_ohm = 1\ncount = 2\n\n'
            '[[stage]]\nname = "second"\nvoltage_gain_db = 14\nen_v_per_rthz = 3e-9\n')
    chain.write_text(text)
    n = Bjt(1.5e-3, 300.0, 6.0, re_ohm=1.0, count=2).noise(1000.0)
    stage = load_chain(chain).stages[0]
    assert stage.en_v_per_rthz == pytest.approx(float(n.en[0]), rel=1e-12)
    assert stage.in_a_per_rthz == pytest.approx(float(n.in_[0]), rel=1e-12)
    r = run_cascade(CascadeRequest(chain))
    levers = {x.stage: x.noise_figure_saving_db for x in r.device_levers}
    halved = tmp_path / "halved.toml"
    halved.write_text(text.replace("rbb_ohm = 6", "rbb_ohm = 3"))
    assert levers["input pair: rbb' 3 ohm instead of 6 ohm"] == pytest.approx(
        r.noise_figure_db - predict(load_chain(halved)).noise_figure_db, abs=1e-9)
    assert list(levers.values()) == sorted(levers.values(), reverse=True)
    chain.write_text(text.replace('[stage.device]', 'en_v_per_rthz = 1e-9\n[stage.device]'))
    with pytest.raises(ParameterError, match="not both"):
        load_chain(chain)
