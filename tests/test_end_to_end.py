"""Seeded synthetic captures (INVENTED DATA) of known en, in, Rs, gain and floor, end to end."""

import math

import pytest

from benchnf.measure import GainSetup, analyze_gain_method
from benchnf.errors import MeasurementError
from benchnf.units import vrms_to_dbu

from synth import Bench


def _analyze(bench: Bench, *, with_floor=True, weighting="none"):
    c = bench.captures()
    return analyze_gain_method(
        terminated=c["terminated"], floor=c["floor"] if with_floor else None, shorted=c["shorted"],
        gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]),
        rs_ohm=bench.rs_ohm, temperature_k=bench.temperature_k, weighting=weighting)


def test_recovers_gain_nf_ein_and_voltage_noise_well_above_the_floor():
    b = Bench(floor_v_per_rthz=5e-9)
    r = _analyze(b)
    nf_true = 10 * math.log10(b.noise_factor())
    ein_true = float(vrms_to_dbu(math.sqrt(b.input_density_v2() * (20_000 - 20))))
    assert r.gain_db == pytest.approx(b.gain_db, abs=0.01)
    assert r.noise_figure_db == pytest.approx(nf_true, abs=0.05)
    assert r.nf_at_1khz_db == pytest.approx(nf_true, abs=0.3)
    assert r.ein_dbu == pytest.approx(ein_true, abs=0.05)
    assert r.input_density_at_1khz_v_per_rthz == pytest.approx(math.sqrt(b.input_density_v2()), rel=0.04)
    assert r.voltage_noise_at_1khz_v_per_rthz == pytest.approx(b.en_v_per_rthz, rel=0.05)
    assert r.floor_corrected and r.floor_margin_db > 20


def test_a_noise_figure_below_0_db_is_refused_with_its_likely_causes():
    # A tone level stated ten times too low makes the gain read 20 dB high and the input noise
    # 20 dB low: less than the source resistor's thermal noise (IEEE Std 161: F >= 1; common practice).
    b = Bench(floor_v_per_rthz=5e-9)
    c = b.captures()
    with pytest.raises(MeasurementError, match=r"below the 200 ohm source's own thermal noise .* in band by 1[0-9]\.\d+ dB"
                                               r".*noise figure below 0 dB.*Likely causes:.*--response.*swapped.*--rs"):
        analyze_gain_method(terminated=c["terminated"], floor=c["floor"],
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"] / 10),
                            rs_ohm=b.rs_ohm, temperature_k=b.temperature_k)
    _analyze(b)  # the same captures with the level as it was: no refusal


def test_five_db_above_the_floor_correction_matters_by_more_than_1_db():
    # Set the floor so that the terminated reading stands 5 dB above it.
    b0 = Bench()
    dut_out = b0.gain * math.sqrt(b0.input_density_v2())
    floor = dut_out / math.sqrt(10 ** 0.5 - 1)  # measured/floor = 10^(5/10)
    b = Bench(floor_v_per_rthz=floor, seconds=20.0, seed=5)
    nf_true = 10 * math.log10(b.noise_factor())
    corrected = _analyze(b)
    uncorrected = _analyze(b, with_floor=False)
    assert corrected.floor_margin_db == pytest.approx(5.0, abs=0.2)
    assert corrected.noise_figure_db == pytest.approx(nf_true, abs=0.1)
    assert uncorrected.noise_figure_db - nf_true > 1.0
    assert any("no floor capture" in n for n in uncorrected.notes)


def test_low_margin_is_flagged_and_indistinguishable_dut_is_refused():
    b0 = Bench()
    dut_out = b0.gain * math.sqrt(b0.input_density_v2())
    low = Bench(floor_v_per_rthz=dut_out / math.sqrt(10 ** 0.2 - 1))  # 2 dB margin
    r = _analyze(low)
    assert any("only 2.0 dB above the analyzer floor" in w for w in r.warnings)
    hopeless = Bench(floor_v_per_rthz=dut_out * 30)  # DUT 30 dB below the floor
    with pytest.raises(MeasurementError, match="cannot be told from the analyzer floor"):
        _analyze(hopeless)


def test_a_weighted_ein_of_white_noise_is_2_05_db_below_unweighted():
    # REFERENCES.md: ENBW of white noise through A, 20 Hz-20 kHz: -2.048 dB re flat (computed).
    b = Bench(floor_v_per_rthz=5e-9)
    flat, weighted = _analyze(b), _analyze(b, weighting="A")
    assert weighted.ein_dbu - flat.ein_dbu == pytest.approx(-2.048, abs=0.03)


def test_resistor_temperature_is_accounted_for():
    # A hot resistor adds noise, but the IEEE noise factor counts only the amplifier's excess.
    hot = Bench(temperature_k=373.15, floor_v_per_rthz=5e-9)
    r = _analyze(hot)
    assert r.noise_figure_db == pytest.approx(10 * math.log10(hot.noise_factor()), abs=0.05)
