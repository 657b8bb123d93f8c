"""Constants, levels and thermal noise against REFERENCES.md (computed from the exact SI k)."""

import math

import pytest
import scipy.constants

from benchnf import units


def test_boltzmann_constant_is_the_exact_si_value():
    assert units.BOLTZMANN_J_PER_K == scipy.constants.k  # 2019 SI, exact


def test_kt0_in_dbm_per_hz():
    # kT0 = -173.975 dBm/Hz at 290 K (REFERENCES.md, computed; common practice -174 dBm/Hz).
    kt0_w = units.BOLTZMANN_J_PER_K * units.T0_K
    assert 10 * math.log10(kt0_w / 1e-3) == pytest.approx(-173.975, abs=0.001)


def test_dbu_and_dbv():
    # 0 dBu = 0.774597 V; dBu - dBV = +2.2185 dB (REFERENCES.md).
    assert units.DBU_REF_VRMS == pytest.approx(0.774597, abs=1e-6)
    assert float(units.vrms_to_dbu(1.0) - units.vrms_to_dbv(1.0)) == pytest.approx(2.2185, abs=1e-4)
    assert float(units.dbu_to_vrms(units.vrms_to_dbu(0.123))) == pytest.approx(0.123)


def test_full_scale_sine_is_0_dbfs_and_square_is_plus_3():
    # AES17: 0 dBFS is the RMS of a full-scale sine; a full-scale square reads +3.01 dBFS.
    assert float(units.fs_to_dbfs(1 / math.sqrt(2))) == pytest.approx(0.0, abs=1e-12)
    assert float(units.fs_to_dbfs(1.0)) == pytest.approx(3.01, abs=0.005)


@pytest.mark.parametrize(("t_k", "nv"), [(290.0, 4.0019), (298.15, 4.0578), (300.0, 4.0704)])
def test_thermal_density_of_1_kohm(t_k, nv):
    # sqrt(4kTR) for 1 kohm (REFERENCES.md, computed, 1e-4 relative).
    v = math.sqrt(units.thermal_density_v2_per_hz(resistance_ohm=1e3, temperature_k=t_k)) * 1e9
    assert v == pytest.approx(nv, rel=1e-4)


@pytest.mark.parametrize(("r", "t_k", "dbu"), [(150.0, 290.0, -130.965), (150.0, 298.15, -130.845),
                                               (200.0, 290.0, -129.715), (50.0, 290.0, -135.736)])
def test_thermal_ein_over_20_khz(r, t_k, dbu):
    # Thermal EIN sqrt(4kTRB) in dBu, B = 20 kHz (REFERENCES.md, computed, +/-0.005 dB);
    # "about -131 dBu for 150 ohm over 20 kHz" is common practice.
    v = units.thermal_vrms(resistance_ohm=r, temperature_k=t_k, bandwidth_hz=20_000.0)
    assert float(units.vrms_to_dbu(v)) == pytest.approx(dbu, abs=0.005)
