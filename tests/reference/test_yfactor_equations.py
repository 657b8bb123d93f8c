"""Y-factor and second-stage equations against published and computed check values."""

import math

import numpy as np
import pytest

from benchnf.noise.yfactor import (EnrTable, dut_gain_from_powers, hot_temperature_from_enr, load_enr_table,
                                   loss_noise_factor, noise_factor_from_temperature, noise_temperature_from_y,
                                   remove_input_loss, second_stage_correction)
from benchnf.errors import MeasurementError, ParameterError
from benchnf.units import BOLTZMANN_J_PER_K, T0_K


def _nf_db(enr_db, y_db, tc=T0_K):
    te = noise_temperature_from_y(10 ** (y_db / 10), t_hot_k=hot_temperature_from_enr(enr_db), t_cold_k=tc)
    return 10 * math.log10(float(noise_factor_from_temperature(te)))


# REFERENCES.md (computed from F = [ENR - Y(Tc/T0 - 1)]/(Y - 1), +/-1e-3 dB; the equations read in
# Friis 1944 and NBS Monograph 142).
@pytest.mark.parametrize(("enr", "y", "tc", "nf"), [(15, 10, T0_K, 5.4576), (15, 10, 300.0, 5.4100),
                                                    (5, 3, T0_K, 5.0206), (5, 3, 296.5, 4.9588)])
def test_check_values(enr, y, tc, nf):
    assert _nf_db(enr, y, tc) == pytest.approx(nf, abs=1e-3)


def test_tc_equal_t0_reduces_to_enr_minus_10lg_y_minus_1():
    for enr, y in ((15.0, 10.0), (6.0, 2.0), (25.0, 18.0)):
        assert _nf_db(enr, y) == pytest.approx(enr - 10 * math.log10(10 ** (y / 10) - 1), abs=1e-9)


def test_glossary_example_9_01_db():
    # Published example (REFERENCES.md, read): Pc 10 mW, Ph 15 mW, ENR 6 dB -> NF 9.01 dB.
    assert _nf_db(6.0, 10 * math.log10(15 / 10)) == pytest.approx(9.01, abs=0.005)


def test_textbook_hot_cold_example_te_170_k():
    # Pozar, Microwave Engineering, ch. 10 (from memory): hot 290 K reads -62.0 dBm, cold 77 K reads
    # -64.7 dBm, so Te = 170.1 K; and the gain from the same data, G = dN/(k B dT), is 20 dB.
    y = 10 ** ((-62.0 + 64.7) / 10)
    te = float(noise_temperature_from_y(y, t_hot_k=290.0, t_cold_k=77.0))
    assert te == pytest.approx(170.1, abs=0.3)
    n_hot = 1e-3 * 10 ** (-62.0 / 10)
    n_cold = 1e-3 * 10 ** (-64.7 / 10)
    gain = (n_hot - n_cold) / (BOLTZMANN_J_PER_K * 1e9 * (290.0 - 77.0))
    assert 10 * math.log10(gain) == pytest.approx(20.0, abs=0.1)


def test_second_stage_round_trip():
    # REFERENCES.md (computed): G1 15 dB, F1 2 dB, F2 10 dB gives F12 2.7173 dB and back.
    f1, f2, g1 = 10 ** 0.2, 10.0, 10 ** 1.5
    f12 = f1 + (f2 - 1) / g1
    assert 10 * math.log10(f12) == pytest.approx(2.7173, abs=1e-4)
    assert float(second_stage_correction(f12, f2, g1)) == pytest.approx(f1, rel=1e-12)
    assert float(dut_gain_from_powers(10 * g1 + 3, 3 * g1 + 3, 10.0, 3.0)) == pytest.approx(g1)


@pytest.mark.parametrize(("loss", "t", "nf"), [(6.0, T0_K, 6.000), (6.0, 77.0, 2.532)])
def test_matched_attenuator(loss, t, nf):
    # REFERENCES.md: F = 1 + (L - 1) T / T0; at T0 the NF equals the loss (computed; common practice).
    assert 10 * math.log10(loss_noise_factor(loss, t)) == pytest.approx(nf, abs=1e-3)


def test_matched_attenuator_against_scikit_rf():
    # Oracle: scikit-rf computes NF from a two-port's noise correlation matrix.  The attenuator's
    # matrix comes from the Twiss theorem, C_Y = 2kT (Y + Y^H), moved to the chain (ABCD) form.
    rf = pytest.importorskip("skrf")
    freq = rf.Frequency(100, 200, 3, "MHz")
    for loss_db, t in ((6.0, T0_K), (3.0, 77.0), (10.0, 350.0)):
        a = 10 ** (-loss_db / 20)
        s = np.tile(np.array([[0, a], [a, 0]], dtype=complex), (3, 1, 1))
        net = rf.Network(frequency=freq, s=s, z0=50)
        y = net.y
        cy = 2 * rf.constants.K_BOLTZMANN * t * (y + np.conj(np.swapaxes(y, 1, 2)))
        abcd = net.a
        tr = np.zeros_like(abcd)
        tr[:, 0, 1] = abcd[:, 0, 1]
        tr[:, 1, 0] = 1.0
        tr[:, 1, 1] = abcd[:, 1, 1]
        ca = tr @ cy @ np.conj(np.swapaxes(tr, 1, 2))
        net.noise = ca * (T0_K / rf.constants.T0) * (rf.constants.K_BOLTZMANN / BOLTZMANN_J_PER_K)
        net.noise_freq = freq
        nf_skrf = 10 * np.log10(np.real(net.nf(50.0)))
        assert nf_skrf == pytest.approx(10 * math.log10(loss_noise_factor(loss_db, t)), abs=1e-4)


def test_input_loss_is_removed():
    f_dut, loss_db, t = 10 ** 0.1, 1.0, 290.0
    f_sys = loss_noise_factor(loss_db, t) + (f_dut - 1) * 10 ** (loss_db / 10)  # Friis
    assert float(remove_input_loss(f_sys, loss_db, t)) == pytest.approx(f_dut)


def test_y_at_or_below_one_is_refused():
    with pytest.raises(MeasurementError, match="not hotter"):
        noise_temperature_from_y(0.98, t_hot_k=1000.0, t_cold_k=290.0)


def test_enr_table_interpolates_and_refuses_outside(tmp_path):
    p = tmp_path / "src.toml"
    p.write_text('cold_k = 296.5\nenr_uncertainty_db = 0.2\npoints = [[10e6, 15.0], [30e6, 14.0]]\n')
    t = load_enr_table(p)
    assert t.cold_k == 296.5 and float(t.at(20e6)) == pytest.approx(14.5)
    with pytest.raises(ParameterError, match="covers 1e\\+07-3e\\+07 Hz"):
        t.at(40e6)
    c = tmp_path / "src.csv"
    c.write_text("# cold_k = 300\nfrequency_hz,enr_db\n1e6,6\n2e6,5\n")
    assert float(load_enr_table(c).at(1.5e6)) == pytest.approx(5.5)
    bad = tmp_path / "bad.toml"
    bad.write_text("points = [[1, 2]]\nwarmth = 3\n")
    with pytest.raises(ParameterError, match="unknown keys"):
        load_enr_table(bad)
    assert EnrTable.constant(5.0).at(np.array([1.0, 1e9])).tolist() == [5.0, 5.0]


@pytest.mark.parametrize(("header", "scale"), [("frequency_hz,enr_db", 1.0), ("Freq MHz,ENR dB", 1e6),
                                               ("frequency (GHz);ENR (dB)", 1e9), ("f kHz,enr", 1e3)])
def test_enr_csv_header_sets_the_frequency_unit(tmp_path, header, scale):
    # A noise source's calibration sheet commonly lists frequency in MHz or GHz (common practice).
    p = tmp_path / "enr.csv"
    p.write_text(f"{header}\n100,5.6\n200,5.4\n".replace(",", ";" if ";" in header else ","))
    table = load_enr_table(p)
    np.testing.assert_allclose(table.frequency_hz, [100 * scale, 200 * scale])
