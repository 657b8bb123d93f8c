"""Cascade and two-port noise against hand-worked values, scikit-rf and an ngspice .noise analysis."""

import math
import shutil
import subprocess

import numpy as np
import pytest

from benchnf.noise.cascade import Chain, Stage, friis, voltage_cascade, where_to_spend
from benchnf.noise.twoport import fmin, noise_factor_vs_rs, ropt_ohm
from benchnf.units import BOLTZMANN_J_PER_K as K, T0_K


def test_friis_round_trip_check_value():
    # REFERENCES.md (computed): G1 15 dB, F1 2 dB, F2 10 dB gives 2.7173 dB.
    r = friis(Chain((Stage("lna", gain_db=15.0, nf_db=2.0), Stage("receiver", gain_db=30.0, nf_db=10.0))))
    assert r.noise_figure_db == pytest.approx(2.7173, abs=1e-4)
    assert r.gain_db == pytest.approx(45.0)
    assert r.noise_temperature_k == pytest.approx((10 ** 0.27173 - 1) * T0_K, rel=1e-4)
    assert sum(s.share_of_excess for s in r.stages) == pytest.approx(1.0)


def test_put_the_quiet_high_gain_stage_first():
    quiet, noisy = Stage("quiet", gain_db=20.0, nf_db=1.0), Stage("noisy", gain_db=10.0, nf_db=8.0)
    assert friis(Chain((quiet, noisy))).noise_figure_db < friis(Chain((noisy, quiet))).noise_figure_db
    ranked = where_to_spend(Chain((quiet, noisy)))
    assert ranked[0][0] == "quiet"  # the first stage is where a better part pays off


@pytest.mark.parametrize(("loss", "t", "nf"), [(6.0, T0_K, 6.0), (3.0, 77.0, 10 * math.log10(1 + (10 ** .3 - 1) * 77 / 290))])
def test_lossy_passive_stage(loss, t, nf):
    # REFERENCES.md: a matched loss at T0 has NF equal to its loss (common practice).
    assert friis(Chain((Stage("pad", loss_db=loss, temperature_k=t),))).noise_figure_db == pytest.approx(nf, abs=1e-9)


def test_friis_matches_scikit_rf_noisy_cascade():
    # Oracle: scikit-rf cascades noise correlation matrices (a ** b) and computes NF at 50 ohm.
    rf = pytest.importorskip("skrf")
    freq = rf.Frequency(1, 2, 2, "GHz")
    stages = [(12.0, 0.9), (15.0, 4.0), (20.0, 9.0)]
    nets = []
    for g_db, nf_db in stages:
        # S21 = the voltage gain; a whisper of reverse transmission keeps the ABCD form finite.
        s = np.tile(np.array([[0, 1e-6], [10 ** (g_db / 20), 0]], dtype=complex), (2, 1, 1))
        net = rf.Network(frequency=freq, s=s, z0=50)
        net.set_noise_a(freq, nfmin_db=nf_db, gamma_opt=0.0, rn=10.0)
        nets.append(net)
    cascaded = nets[0] ** nets[1] ** nets[2]
    nf_skrf = 10 * np.log10(np.real(cascaded.nf(50.0)))
    ours = friis(Chain(tuple(Stage(f"s{i}", gain_db=g, nf_db=n) for i, (g, n) in enumerate(stages))))
    np.testing.assert_allclose(nf_skrf, ours.noise_figure_db, atol=1e-4)


def test_en_in_model_against_published_example_and_scikit_rf():
    # REFERENCES.md (computed): en 1 nV/rtHz, in 1 pA/rtHz: Ropt 1 kohm, NFmin 0.5111 dB, NF(150) 1.5401 dB.
    en, i_n = 1e-9, 1e-12
    assert ropt_ohm(en, i_n) == pytest.approx(1000.0)
    assert 10 * math.log10(fmin(en, i_n)) == pytest.approx(0.5111, abs=1e-4)
    assert 10 * math.log10(float(noise_factor_vs_rs(150.0, en_v_per_rthz=en, in_a_per_rthz=i_n))) == \
        pytest.approx(1.5401, abs=1e-4)
    rf = pytest.importorskip("skrf")
    freq = rf.Frequency(1, 1, 1, "kHz")
    net = rf.Network(frequency=freq, s=np.array([[[0, 1e-6], [10, 0]]], dtype=complex), z0=50)
    rho = 0.3
    net.noise = np.array([[[en ** 2, rho * en * i_n], [rho * en * i_n, i_n ** 2]]], dtype=complex) * (
        rf.constants.K_BOLTZMANN * rf.constants.T0 / (K * T0_K))
    net.noise_freq = freq
    for rs in (10.0, 150.0, 1000.0, 20e3):
        ours = 10 * math.log10(float(noise_factor_vs_rs(rs, en_v_per_rthz=en, in_a_per_rthz=i_n, correlation=rho)))
        assert 10 * math.log10(float(np.real(net.nf(rs))[0])) == pytest.approx(ours, abs=1e-5)


NETLIST = """benchnf cascade oracle: two ideal gain stages with en, in and output resistances
.options temp=16.85 tnom=16.85
V1 src 0 DC 0 AC 1
Rs src n1 {rs}
* stage 1: current noise into n1 (a resistor's noise voltage through a VCCS), voltage noise in series
Rni1 x1 0 1k
G1 0 n1 x1 0 {gi1}
Rne1 x2 0 1k
E1 a1 n1 x2 0 {ge1}
E2 o1 0 a1 0 {a1}
Ro1 o1 n2 {ro1}
* stage 2
Rni2 x3 0 1k
G2 0 n2 x3 0 {gi2}
Rne2 x4 0 1k
E3 a2 n2 x4 0 {ge2}
E4 out 0 a2 0 {a2}
.control
noise v(out) V1 lin 1 1000 1000
print inoise_spectrum
.endc
.end
"""


@pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice (Debian package) not installed")
def test_voltage_cascade_matches_ngspice_noise_analysis(tmp_path):
    # Oracle: ngspice .noise (input-referred spectrum at 1 kHz) of a resistor-loaded chain of ideal gain
    # stages whose en and in come from 1 kohm resistors' thermal noise at 290 K through controlled sources.
    unit = math.sqrt(4 * K * T0_K * 1e3)  # noise of the 1 kohm helpers, V/rtHz
    rs, ro1 = 200.0, 50.0
    p = {"rs": rs, "gi1": 1.5e-3, "ge1": 0.5, "a1": 10.0, "ro1": ro1, "gi2": 1e-3, "ge2": 1.0, "a2": 20.0}
    (tmp_path / "c.cir").write_text(NETLIST.format(**p))
    out = subprocess.run(["ngspice", "-b", "c.cir"], cwd=tmp_path, capture_output=True, text=True, timeout=60)
    line = next(x for x in out.stdout.splitlines() if x.strip().startswith("inoise_spectrum"))
    spice = float(line.split("=")[1])
    chain = Chain((Stage("s1", gain_db=20 * math.log10(p["a1"]), en_v_per_rthz=p["ge1"] * unit,
                         in_a_per_rthz=p["gi1"] * unit, output_ohm=ro1),
                   Stage("s2", gain_db=20 * math.log10(p["a2"]), en_v_per_rthz=p["ge2"] * unit,
                         in_a_per_rthz=p["gi2"] * unit)), source_ohm=rs, temperature_k=T0_K)
    assert voltage_cascade(chain).input_density_v_per_rthz == pytest.approx(spice, rel=1e-4)


def test_where_to_spend_lowers_each_stage_noise_temperature_hand_worked():
    # Friis (1944) with F = 1 + Te/T0 (IEEE Std 161); worked by hand here (computed): stage 1 G 15 dB,
    # NF 2 dB; stage 2 G 20 dB, NF 10 dB: F = 1.58489 + 9/31.6228 = 1.86950 (2.7173 dB, REFERENCES.md).
    # Lowering stage 1's Te by 3 dB: F1' = 1 + 0.58489 * 0.501187 = 1.29314, F = 1.57775 (1.98037 dB),
    # saving 0.73688 dB; stage 2: F2' = 1 + 9 * 0.501187 = 5.51069, F = 1.72753 (2.37426 dB), saving 0.34299 dB.
    from benchnf.noise.cascade import Chain, Stage, where_to_spend
    chain = Chain((Stage("lna", gain_db=15.0, nf_db=2.0), Stage("rx", gain_db=20.0, nf_db=10.0)))
    spend = dict(where_to_spend(chain, improvement_db=3.0))
    assert spend["lna"] == pytest.approx(0.73688, abs=2e-5)
    assert spend["rx"] == pytest.approx(0.34299, abs=2e-5)


def test_a_quiet_stage_saves_more_when_improved_more():
    # The old rule lowered NF in dB and clamped at 0 dB, so a 0.6 dB stage saved the same for 1 and 3 dB.
    from benchnf.noise.cascade import Chain, Stage, where_to_spend
    chain = Chain((Stage("lna", gain_db=20.0, nf_db=0.6), Stage("rx", gain_db=20.0, nf_db=8.0)))
    one, three = (dict(where_to_spend(chain, improvement_db=x))["lna"] for x in (1.0, 3.0))
    assert 0 < one < three


def test_what_if_swaps_a_loss_and_lists_the_keys():
    from benchnf.errors import ParameterError
    from benchnf.noise.cascade import Chain, Stage, predict, stage_with, what_if
    chain = Chain((Stage("cable", loss_db=1.0, temperature_k=290.0), Stage("lna", gain_db=20.0, nf_db=1.0)))
    _, shorter = what_if(chain, 0, stage_with(chain.stages[0], {"loss": 0.5}))
    # A matched loss at T0 adds its loss to the NF (common practice; REFERENCES.md): 0.5 dB less of it.
    assert predict(chain).noise_figure_db - shorter.noise_figure_db == pytest.approx(0.5, abs=1e-9)
    with pytest.raises(ParameterError, match="the keys are gain_db, gain, nf_db"):
        stage_with(chain.stages[1], {"colour": 1.0})
