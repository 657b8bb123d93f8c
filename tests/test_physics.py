"""What physics allows a result to say, on seeded synthetic captures of known truth (INVENTED DATA): each
case the issue list names is refused, warned or right.

Reference for the rule: IEEE Std 161 (F = 1 + Te/T0 >= 1, so NF >= 0 dB; an amplifier's input-referred
noise is at least the source resistor's own 4kTRs). The band-pass is a scipy.signal Butterworth design
(PyPI), applied by FFT synthesis."""

import math

import numpy as np
import pytest

from benchnf.capture import Capture
from benchnf.errors import MeasurementError, ParameterError
from benchnf.measure import GainSetup, analyze_gain_method

from synth import Bench

K = 1.380649e-23
FS = 48_000.0
VPFS = 2.0


def _cap(x, cond=None):
    return Capture.from_array(np.asarray(x) / VPFS, sample_rate_hz=FS, volts_per_fs=VPFS, condition=cond)


def _bandpass_bench(seed=3, seconds=6.0):
    """An amplifier of 40 dB with a second-order 80 Hz / 12 kHz band-pass (the response is not flat), input
    noise 3 nV/rtHz white plus a 200 ohm source; its terminated output, a 1 kHz tone, a floor, and a two-channel
    broadband response capture (input, output)."""
    from scipy import signal
    rng = np.random.default_rng(seed)
    n = int(seconds * FS)
    f = np.fft.rfftfreq(n, 1 / FS)
    _b, _a = signal.butter(2, [80.0, 12_000.0], btype="bandpass", fs=FS)
    h = signal.freqz(_b, _a, worN=f, fs=FS)[1]
    gain = 100.0
    e2 = (3e-9) ** 2 + 4 * K * 290.0 * 200.0

    def shaped(density_in, x_white=None):
        spec = np.fft.rfft(x_white if x_white is not None else rng.normal(0, math.sqrt(density_in * FS / 2), n))
        return np.fft.irfft(spec * gain * h, n), spec

    term, _ = shaped(e2)
    floor = rng.normal(0, math.sqrt((5e-9) ** 2 * FS / 2), n)
    t = np.arange(int(2 * FS)) / FS
    g1k = gain * abs(signal.freqz(_b, _a, worN=[1000.0], fs=FS)[1][0])
    tone = 1e-3 * math.sqrt(2) * g1k * np.sin(2 * np.pi * 1000 * t) + rng.normal(0, 1e-6, t.size)
    stim = rng.normal(0, 1e-3, n)
    out, _ = shaped(0.0, stim)
    analyzer = rng.normal(0, math.sqrt((5e-9) ** 2 * FS / 2), n)  # the analyzer's own noise in the DUT capture
    return {"terminated": _cap(term + analyzer),
            "floor": _cap(floor), "tone": _cap(tone),
            "response": Capture.from_array(np.column_stack([stim, out]) / VPFS, sample_rate_hz=FS, volts_per_fs=VPFS,
                                           channel=1),
            "e2": e2, "gain": gain}


def test_a_single_tone_on_a_band_pass_is_refused_and_the_response_puts_it_right():
    b = _bandpass_bench()
    tone_only = GainSetup(tone=b["tone"], tone_input_vrms=1e-3)
    with pytest.raises(MeasurementError, match=r"below the 200 ohm source's own thermal noise .*spot frequenc.*"
                                               r"--response"):
        analyze_gain_method(terminated=b["terminated"], floor=b["floor"], gain=tone_only, rs_ohm=200.0)
    shaped = GainSetup(tone=b["tone"], tone_input_vrms=1e-3, response=b["response"], response_channels=(0, 1))
    r = analyze_gain_method(terminated=b["terminated"], floor=b["floor"], gain=shaped, rs_ohm=200.0)
    nf_true = 10 * math.log10(b["e2"] / (4 * K * 290.0 * 200.0))
    assert r.noise_figure_db == pytest.approx(nf_true, abs=0.3)
    assert not any("one tone" in w for w in r.warnings)  # the response was measured


def test_a_single_tone_over_a_wide_band_is_a_warning_in_the_result():
    c = Bench(seconds=3.0, floor_v_per_rthz=5e-9).captures()
    r = analyze_gain_method(terminated=c["terminated"], floor=c["floor"],
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=1e-3), rs_ohm=200.0)
    assert any(w.startswith("the gain comes from one tone at 1000 Hz") and "--response" in w for w in r.warnings)


def test_shorted_and_terminated_swapped_are_refused():
    c = Bench(seconds=3.0, floor_v_per_rthz=5e-9, en_v_per_rthz=4e-9, rs_ohm=1000.0).captures()
    with pytest.raises(MeasurementError, match="swapped"):
        analyze_gain_method(terminated=c["shorted"], shorted=c["terminated"], floor=c["floor"],
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=1e-3), rs_ohm=1000.0)


def test_a_source_resistance_stated_far_too_high_is_refused():
    c = Bench(seconds=3.0, floor_v_per_rthz=5e-9, rs_ohm=20.0, en_v_per_rthz=1e-9).captures()
    with pytest.raises(MeasurementError, match="below the 2200 ohm source's own thermal noise .* in band"):
        analyze_gain_method(terminated=c["terminated"], floor=c["floor"],
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=1e-3), rs_ohm=2200.0)


def test_white_noise_has_no_1_over_f_corner():
    c = Bench(seconds=3.0, floor_v_per_rthz=5e-9).captures()
    r = analyze_gain_method(terminated=c["terminated"], floor=c["floor"], shorted=c["shorted"],
                            gain=GainSetup(tone=c["tone"], tone_input_vrms=1e-3), rs_ohm=200.0)
    assert r.flicker_corner_hz is None
    assert any("no 1/f corner" in n or "1/f corner not resolved" in n for n in r.notes)


@pytest.mark.parametrize("enr_db", [-20.0, 80.0])
def test_an_enr_no_noise_source_has_is_refused(enr_db):
    from benchnf.noise.yfactor import EnrTable
    with pytest.raises(ParameterError, match=f"an ENR of {enr_db:g} dB is not a noise source's"):
        EnrTable(np.array([1e6, 1e9]), np.array([enr_db, enr_db]))


def test_en_in_from_resistances_far_above_ropt_does_not_state_nfmin():
    # Ropt = en/in = 2 nV / 2 pA = 1 kohm; a sweep of 20-50 kohm does not bracket it; with 0 ohm it does.
    from benchnf.noise.twoport import fit_en_in
    rng = np.random.default_rng(4)
    en, i_n = 2e-9, 2e-12
    f = np.array([1000.0])

    def sweep(rs_list):
        e2 = np.array([[en ** 2 + (i_n * rs) ** 2 + 4 * K * 290 * rs] for rs in rs_list])
        e2 = e2 * (1 + 0.002 * rng.standard_normal(e2.shape))
        return fit_en_in(np.array(rs_list), e2, (0.002 * e2) ** 2, temperature_k=np.full(len(rs_list), 290.0),
                         frequency_hz=f)
    far = sweep([20e3, 30e3, 50e3]).at(1000.0)
    assert far["nfmin_db"] is None and far["ropt_ohm"] is None
    assert any("Ropt and NFmin" in u for u in far["undetermined"])  # with the reason: en's interval reaches zero
    assert far["undetermined"][0].startswith("en (its k=2 interval reaches zero)")
    near = sweep([0.0, 20e3, 50e3]).at(1000.0)
    assert near["ropt_ohm"] == pytest.approx(1000.0, rel=0.2) and near["nfmin_db"] is not None
