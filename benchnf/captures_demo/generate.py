"""Regenerate the demo captures and their ground truth (INVENTED DATA).

Scenario (our own): a three-stage low-noise head amplifier for a moving-coil
phono cartridge (source about 20 ohm), measured with a 24-bit sound card at
48 kHz.  Nothing here was recorded: every sample is synthesised from the
physical model below with a fixed seed, so the files are the same on every
run and the truth they were made from is known.

Model
-----
* Source: a 20 ohm resistor at 296.15 K, thermal noise 4kTR.
* Stage n: white voltage noise en_n with a 1/f corner, input current noise
  (stage 1 only) in with its own corner, voltage gain G_n; stages in
  cascade, each stage's noise referred through the gains before it.
* Response: first-order high-pass at 2 Hz, second-order low-pass at 90 kHz
  (Butterworth), applied to everything the amplifier passes.
* Mains hum at the output: a 50 Hz family with the 100 Hz line strongest
  (rectifier ripple).
* Sound card: 2.0 V per full scale (peak), input noise 15 nV/rtHz white with
  a 50 Hz 1/f corner, 24-bit FLAC.

Run ``python benchnf/captures_demo/generate.py`` to rewrite the files; it refuses to
overwrite unless given ``--force``.
"""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path

import numpy as np
import soundfile as sf

K_B = 1.380649e-23
T0 = 290.0
FS = 48_000
SEED = 20261201
VOLTS_PER_FS = 2.0
CARD_EN = 15e-9
CARD_CORNER_HZ = 50.0
RS_OHM = 20.0
TEMPERATURE_K = 296.15
STAGES = [  # name, en (V/rtHz), en corner (Hz), in (A/rtHz), in corner (Hz), gain (V/V)
    ("input pair", 0.45e-9, 60.0, 1.5e-12, 200.0, 10.0),
    ("second stage", 3.0e-9, 30.0, 0.0, 1.0, 5.0),
    ("output buffer", 6.0e-9, 20.0, 0.0, 1.0, 10 ** (2 / 20)),
]
HUM = [(50.0, 0.5e-6), (100.0, 0.8e-6), (150.0, 0.3e-6)]  # Hz, V RMS at the output
TONE_HZ = 1000.0
TONE_EMF_VRMS = 1.0e-3
REFERENCE_HZ = 400.0
REFERENCE_VRMS = 0.5
STIMULUS_VRMS = 1.0e-3
DURATIONS_S = {"floor": 10.0, "shorted": 10.0, "terminated": 10.0, "tone": 3.0,
               "reference": 3.0, "response": 4.0}

HERE = Path(__file__).resolve().parent


def total_gain(n_stages: int = len(STAGES)) -> float:
    return math.prod(s[5] for s in STAGES[:n_stages])


def response(f: np.ndarray) -> np.ndarray:
    """Complex response shape of the amplifier (1 at mid band)."""
    s = 1j * f
    hp = s / (s + 2.0)
    w = f / 90e3
    lp = 1.0 / (1 - w ** 2 + 1j * math.sqrt(2) * w)
    return hp * lp


def amplifier_input_density(f: np.ndarray, *, rs_ohm: float, include_source: bool,
                            n_stages: int = len(STAGES)) -> np.ndarray:
    """Input-referred noise density (V^2/Hz) of the first n_stages with source resistance rs_ohm."""
    f = np.maximum(f, 1e-3)
    total = np.zeros_like(f)
    gain_before = 1.0
    for _name, en, en_fc, i_n, in_fc, gain in STAGES[:n_stages]:
        total += (en ** 2 * (1 + en_fc / f)) / gain_before ** 2
        if gain_before == 1.0:
            total += (i_n ** 2 * (1 + in_fc / f)) * rs_ohm ** 2
        gain_before *= gain
    if include_source:
        total += 4 * K_B * TEMPERATURE_K * rs_ohm
    return total


def card_density(f: np.ndarray) -> np.ndarray:
    return CARD_EN ** 2 * (1 + CARD_CORNER_HZ / np.maximum(f, 1e-3))


def coloured_noise(rng: np.random.Generator, n: int, density_fn) -> np.ndarray:
    """Gaussian noise with one-sided density density_fn(f) in V^2/Hz, by FFT synthesis."""
    f = np.fft.rfftfreq(n, 1 / FS)
    amp = np.sqrt(density_fn(f) * FS * n / 4.0)
    spec = amp * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    spec[0] = 0.0
    return np.fft.irfft(spec, n)


def hum(n: int, rng: np.random.Generator) -> np.ndarray:
    t = np.arange(n) / FS
    return sum(a * math.sqrt(2) * np.sin(2 * np.pi * fh * t + rng.uniform(0, 2 * np.pi))
               for fh, a in HUM)


def dut_output_noise(rng: np.random.Generator, n: int, rs_ohm: float | None,
                     n_stages: int = len(STAGES), *, en1_scale: float = 1.0, hum_scale: float = 1.0) -> np.ndarray:
    g = total_gain(n_stages)

    def density(f):
        e2 = amplifier_input_density(f, rs_ohm=rs_ohm or 0.0, include_source=rs_ohm is not None,
                                     n_stages=n_stages)
        if en1_scale != 1.0:  # a degraded input device: more voltage noise at the first stage
            en1, fc1 = STAGES[0][1], STAGES[0][2]
            e2 = e2 + (en1_scale ** 2 - 1) * en1 ** 2 * (1 + fc1 / np.maximum(f, 1e-3))
        return e2 * g ** 2 * np.abs(response(f)) ** 2

    tap_scale = g / total_gain()  # the hum enters at the output stage's supply; scale it with the tap
    return coloured_noise(rng, n, density) + hum(n, rng) * tap_scale * hum_scale


def write(name: str, volts: np.ndarray, meta: dict, force: bool) -> None:
    path = HERE / f"{name}.flac"
    side = HERE / f"{name}.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    if not force and (path.exists() or side.exists()):
        raise SystemExit(f"{path.name} exists: rerun with --force to rewrite the demo captures")
    fs_units = volts / VOLTS_PER_FS
    assert np.max(np.abs(fs_units)) < 0.9, name
    sf.write(path, fs_units, FS, subtype="PCM_24")
    meta = {"device": "demo sound card (simulated)", "notes": "INVENTED DATA, see README.md",
            **meta}
    side.write_text(json.dumps(meta, indent=2) + "\n")


def _white_and_corner() -> tuple[float, float]:
    white, weighted = 0.0, 0.0
    gain_before = 1.0
    for _name, en, en_fc, _in, _in_fc, gain in STAGES:
        w = en ** 2 / gain_before ** 2
        white += w
        weighted += w * en_fc
        gain_before *= gain
    return white, weighted / white


def ground_truth() -> dict:
    """Expected figures, by numerical integration of the model (not by benchnf)."""
    f = np.linspace(20.0, 20_000.0, 200_001)
    g2 = total_gain() ** 2 * np.abs(response(f)) ** 2
    g_1k = total_gain() * abs(response(np.array([TONE_HZ]))[0])
    # EMF-referred: the model's response is part of the gain, so refer through |G(f)|.
    e2_term = amplifier_input_density(f, rs_ohm=RS_OHM, include_source=True)
    e2_short = amplifier_input_density(f, rs_ohm=0.0, include_source=False)
    ein = math.sqrt(np.trapezoid(e2_term, f))
    four_k_t0_r = 4 * K_B * T0 * RS_OHM
    four_k_t_r = 4 * K_B * TEMPERATURE_K * RS_OHM
    nf_band = 10 * math.log10(1 + np.trapezoid(e2_term - four_k_t_r, f) / (four_k_t0_r * (f[-1] - f[0])))
    one_k = np.array([1000.0])
    e2_1k = float(amplifier_input_density(one_k, rs_ohm=RS_OHM, include_source=True)[0])
    return {
        "note": "INVENTED DATA: figures of the model the captures were synthesised from",
        "volts_per_fs": VOLTS_PER_FS,
        "rs_ohm": RS_OHM,
        "temperature_k": TEMPERATURE_K,
        "band_hz": [20.0, 20_000.0],
        "gain_db_at_1khz": 20 * math.log10(g_1k),
        "input_density_at_1khz_v_per_rthz": math.sqrt(e2_1k),
        "voltage_noise_at_1khz_v_per_rthz": math.sqrt(
            float(amplifier_input_density(one_k, rs_ohm=0.0, include_source=False)[0])),
        "nf_at_1khz_db": 10 * math.log10(1 + (e2_1k - four_k_t_r) / four_k_t0_r),
        "noise_figure_db": nf_band,
        "ein_dbu_unweighted_excluding_hum": 20 * math.log10(ein / math.sqrt(0.6)),
        "voltage_noise_band_vrms": math.sqrt(np.trapezoid(e2_short, f)),
        # The stages' 1/f terms add up to one white level with one corner:
        # sum en_i^2 (1 + fc_i/f) / G_before_i^2 = W (1 + fc/f), fc = sum(w_i fc_i) / W.
        "voltage_noise_white_v_per_rthz": math.sqrt(_white_and_corner()[0]),
        "voltage_noise_corner_hz": _white_and_corner()[1],
        "output_noise_vrms_excluding_hum": math.sqrt(np.trapezoid(e2_term * g2, f)),
        "hum_output_vrms": {f"{fh:g} Hz": a for fh, a in HUM},
        "card_floor_density_v_per_rthz": CARD_EN,
        "stages": [{"name": s[0], "en_v_per_rthz": s[1], "en_corner_hz": s[2],
                    "in_a_per_rthz": s[3], "in_corner_hz": s[4], "gain_db": 20 * math.log10(s[5])}
                   for s in STAGES],
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--force", action="store_true", help="rewrite existing files")
    args = parser.parse_args()
    rng = np.random.default_rng(SEED)
    n = {k: int(v * FS) for k, v in DURATIONS_S.items()}

    floor = coloured_noise(rng, n["floor"], card_density)
    write("floor", floor, {"condition": "floor"}, args.force)

    shorted = dut_output_noise(rng, n["shorted"], None) + coloured_noise(rng, n["shorted"], card_density)
    write("shorted", shorted, {"condition": "shorted", "rs_ohm": 0.0}, args.force)

    term = dut_output_noise(rng, n["terminated"], RS_OHM) + coloured_noise(rng, n["terminated"], card_density)
    write("terminated", term, {"condition": "terminated", "rs_ohm": RS_OHM,
                               "temperature_k": TEMPERATURE_K}, args.force)

    t = np.arange(n["tone"]) / FS
    g_1k = total_gain() * response(np.array([TONE_HZ]))[0]
    tone = (TONE_EMF_VRMS * math.sqrt(2) * abs(g_1k) * np.sin(2 * np.pi * TONE_HZ * t + np.angle(g_1k))
            + dut_output_noise(rng, n["tone"], RS_OHM) + coloured_noise(rng, n["tone"], card_density))
    write("tone", tone, {"condition": "tone", "rs_ohm": RS_OHM, "tone_hz": TONE_HZ,
                         "tone_input_vrms": TONE_EMF_VRMS}, args.force)

    t = np.arange(n["reference"]) / FS
    ref = REFERENCE_VRMS * math.sqrt(2) * np.sin(2 * np.pi * REFERENCE_HZ * t) + coloured_noise(
        rng, n["reference"], card_density)
    write("reference", ref, {"condition": "reference", "meter_vrms": REFERENCE_VRMS,
                             "tone_hz": REFERENCE_HZ}, args.force)

    m = n["response"]
    stimulus = rng.standard_normal(m) * STIMULUS_VRMS
    out = np.fft.irfft(np.fft.rfft(stimulus) * total_gain() * response(np.fft.rfftfreq(m, 1 / FS)), m)
    out += dut_output_noise(rng, m, RS_OHM)
    both = np.column_stack((stimulus + coloured_noise(rng, m, card_density),
                            out + coloured_noise(rng, m, card_density)))
    write("response", both, {"condition": "tone", "channels": ["DUT input", "DUT output"],
                             "stimulus": "white noise", "rs_ohm": RS_OHM}, args.force)

    truth_data = ground_truth()
    truth_data["stage_budget"] = write_taps_and_sweep(args.force)
    truth_data["units"] = write_units(args.force)
    truth_data["known_good"] = write_known_good_units(args.force)
    truth_data["yfactor_vhf"] = write_vhf_scenario(args.force)
    truth_data["yfactor_audio"] = write_two_temperature_scenario(args.force)
    write_known_good_profile(args.force)
    truth = HERE / "ground_truth.json"
    if truth.exists() and not args.force:
        raise SystemExit("ground_truth.json exists: rerun with --force")
    truth.write_text(json.dumps(truth_data, indent=2) + "\n")
    print(f"wrote the demo captures and ground_truth.json in {HERE}")


# --- stage taps and an Rs sweep (INVENTED DATA) -----------------------------------------------
TAP_SECONDS = 5.0
SWEEP_RS_OHM = (100.0, 1000.0)


def write_taps_and_sweep(force: bool) -> dict:
    """Taps after stages 1 and 2 (stage 3 is terminated.flac), their tones, and captures at 100 and 1000 ohm."""
    rng = np.random.default_rng(SEED + 1)
    n, nt = int(TAP_SECONDS * FS), int(DURATIONS_S["tone"] * FS)
    t = np.arange(nt) / FS
    for k in (1, 2):
        g = total_gain(k) * response(np.array([TONE_HZ]))[0]
        noise = dut_output_noise(rng, n, RS_OHM, n_stages=k) + coloured_noise(rng, n, card_density)
        write(f"tap{k}", noise, {"condition": "tap", "rs_ohm": RS_OHM, "temperature_k": TEMPERATURE_K,
                                 "stage": k}, force)
        tone = (TONE_EMF_VRMS * math.sqrt(2) * abs(g) * np.sin(2 * np.pi * TONE_HZ * t + np.angle(g))
                + dut_output_noise(rng, nt, RS_OHM, n_stages=k) + coloured_noise(rng, nt, card_density))
        write(f"tap{k}_tone", tone, {"condition": "tone", "rs_ohm": RS_OHM, "tone_hz": TONE_HZ,
                                     "tone_input_vrms": TONE_EMF_VRMS, "stage": k}, force)
    for rs in SWEEP_RS_OHM:
        noise = dut_output_noise(rng, n, rs) + coloured_noise(rng, n, card_density)
        write(f"rs_{rs:g}", noise, {"condition": "terminated", "rs_ohm": rs, "temperature_k": TEMPERATURE_K},
              force)
    chain = HERE / "head_amp_chain.toml"
    if force or not chain.exists():
        chain.write_text(
            "# The demo head amplifier as its parts' data sheets describe it (INVENTED DATA).\n"
            "# Stage 2's data sheet is optimistic: the model the captures come from has 3 nV/rtHz.\n"
            'name = "moving-coil head amplifier"\n'
            f"source_ohm = {RS_OHM}\n"
            f"temperature_k = {TEMPERATURE_K}\n\n"
            "[[stage]]\n"
            'name = "input pair"\nvoltage_gain_db = 20.0\nen_v_per_rthz = 0.45e-9\n'
            'in_a_per_rthz = 1.5e-12\nsource = "part data"\n\n'
            "[[stage]]\n"
            'name = "second stage"\nvoltage_gain_db = 13.98\nen_v_per_rthz = 2.0e-9\n'
            'source = "part data (typical)"\n\n'
            "[[stage]]\n"
            'name = "output buffer"\nvoltage_gain_db = 2.0\nen_v_per_rthz = 6.0e-9\n'
            'source = "part data"\n')
    one_k = np.array([2000.0])
    return {
        "note": "INVENTED DATA",
        "added_at_input_v2_per_hz_at_2khz": [
            float(amplifier_input_density(one_k, rs_ohm=RS_OHM, include_source=False, n_stages=k)[0]
                  - (amplifier_input_density(one_k, rs_ohm=RS_OHM, include_source=False, n_stages=k - 1)[0]
                     if k > 1 else 0.0)) for k in (1, 2, 3)],
        "en_at_1khz_v_per_rthz": float(np.sqrt(amplifier_input_density(np.array([1000.0]), rs_ohm=0.0,
                                                                       include_source=False)[0])),
        "in_at_1khz_a_per_rthz": STAGES[0][3] * math.sqrt(1 + STAGES[0][4] / 1000.0),
    }


# --- units for the known-good check (INVENTED DATA) -------------------------------------------
UNITS = {"HA-0001": {"en1_scale": 1.0, "hum_scale": 1.0, "fault": "none (a good unit)"},
         "HA-0002": {"en1_scale": 1.0, "hum_scale": 8.0, "fault": "raised ripple (a tired reservoir capacitor)"},
         "HA-0003": {"en1_scale": 2.2, "hum_scale": 1.0, "fault": "noisy input stage (a degraded input device)"}}


def _unit_captures(rng: np.random.Generator, folder: str, serial: str, spec: dict, *, seconds: float,
                   tone_seconds: float, force: bool) -> None:
    """A unit's terminated and tone captures: its input stage's noise, its supply's hum and its gain as `spec`
    says (``en1_scale``, ``hum_scale``, ``gain_scale``), seen through the shared sound card."""
    n, nt = int(seconds * FS), int(tone_seconds * FS)
    t = np.arange(nt) / FS
    g = total_gain() * response(np.array([TONE_HZ]))[0]
    kw = {"en1_scale": spec["en1_scale"], "hum_scale": spec["hum_scale"]}
    k = spec.get("gain_scale", 1.0)
    term = k * dut_output_noise(rng, n, RS_OHM, **kw) + coloured_noise(rng, n, card_density)
    tone = k * (TONE_EMF_VRMS * math.sqrt(2) * abs(g) * np.sin(2 * np.pi * TONE_HZ * t + np.angle(g))
                + dut_output_noise(rng, nt, RS_OHM, **kw)) + coloured_noise(rng, nt, card_density)
    for name, x, meta in (("terminated", term, {"condition": "terminated", "rs_ohm": RS_OHM,
                                                 "temperature_k": TEMPERATURE_K}),
                          ("tone", tone, {"condition": "tone", "tone_input_vrms": TONE_EMF_VRMS})):
        write(f"{folder}/{serial}/{name}", x, {**meta, "serial": serial}, force)


def _fresh(folder: str, force: bool) -> None:
    import shutil
    root = HERE / folder
    if force and root.exists():
        shutil.rmtree(root)


def write_units(force: bool) -> dict:
    """Three repaired units, each with a terminated and a tone capture; the shared floor is floor.flac."""
    rng = np.random.default_rng(SEED + 2)
    _fresh("units", force)
    for serial, spec in UNITS.items():
        _unit_captures(rng, "units", serial, spec, seconds=5.0, tone_seconds=2.0, force=force)
    return {"note": "INVENTED DATA", **{k: v["fault"] for k, v in UNITS.items()}}


#: Four units known to be good, as a production line keeps them to set its limits: the parts' spread gives
#: each its own input-stage noise, supply hum and gain (INVENTED DATA).
KNOWN_GOOD = {"KG-01": {"en1_scale": 0.97, "hum_scale": 0.8, "gain_scale": 1.010},
              "KG-02": {"en1_scale": 1.04, "hum_scale": 1.3, "gain_scale": 0.985},
              "KG-03": {"en1_scale": 1.00, "hum_scale": 1.0, "gain_scale": 1.000},
              "KG-04": {"en1_scale": 1.06, "hum_scale": 0.9, "gain_scale": 1.020}}


def write_known_good_units(force: bool) -> dict:
    """Terminated and tone captures of the known-good units (4 s and 1 s; the shared floor is floor.flac)."""
    rng = np.random.default_rng(SEED + 3)
    _fresh("known_good", force)
    for serial, spec in KNOWN_GOOD.items():
        _unit_captures(rng, "known_good", serial, spec, seconds=4.0, tone_seconds=1.0, force=force)
    return {"note": "INVENTED DATA", **{k: dict(v) for k, v in KNOWN_GOOD.items()}}


def write_known_good_profile(force: bool) -> None:
    """The known-good profile, made by benchnf from the four known-good units (as 'benchnf profile' would)."""
    import sys
    sys.path.insert(0, str(HERE.parent))
    from benchnf.measure import GainSetup, analyze_gain_method
    from benchnf.calibration import apply_calibration, calibrate_from_tone
    from benchnf.check.population import profile_from_results
    from benchnf.io import open_capture
    path = HERE / "known_good_profile.toml"
    if path.exists() and not force:
        return
    cal = calibrate_from_tone(open_capture(HERE / "reference.flac"), vrms=REFERENCE_VRMS)
    floor = apply_calibration(open_capture(HERE / "floor.flac"), cal)
    results = []
    for serial in KNOWN_GOOD:
        cap = lambda name: apply_calibration(open_capture(HERE / "known_good" / serial / f"{name}.flac"), cal)  # noqa: E731
        results.append(analyze_gain_method(terminated=cap("terminated"), floor=floor,
                                           gain=GainSetup(tone=cap("tone"), tone_input_vrms=TONE_EMF_VRMS),
                                           rs_ohm=RS_OHM, temperature_k=TEMPERATURE_K))
    prof = profile_from_results(results, name="MC head amplifier, known good", serials=list(KNOWN_GOOD))
    path.write_text("# Made by benchnf from the demo's four known-good units (INVENTED DATA).\n" + prof.to_toml())


# --- Y-factor scenarios (INVENTED DATA) ------------------------------------------------------
VHF = {"centre_hz": 145.0e6, "sample_rate_hz": 250e3, "seconds": 0.4, "enr_db": 5.5,
       "source_cold_k": 297.0, "dut_nf_db": 0.8, "dut_gain_db": 18.0, "receiver_nf_db": 6.0,
       "seed": 7}
AUDIO_2T = {"rs_ohm": 1000.0, "t_hot_k": 373.15, "t_cold_k": 273.15, "en_v_per_rthz": 3.0e-9,
            "in_a_per_rthz": 0.5e-12, "gain_db": 40.0, "seconds": 6.0, "seed": 11}


def write_vhf_scenario(force: bool) -> dict:
    """A VHF low-noise preamplifier measured with an SDR and a noise diode (SigMF, ci16_le)."""
    import sys
    sys.path.insert(0, str(HERE.parent))
    from benchnf.io.sigmf_iq import write_sigmf
    v = VHF
    rng = np.random.default_rng(v["seed"])
    fs, n = v["sample_rate_hz"], int(v["seconds"] * v["sample_rate_hz"])
    th = T0 * (1 + 10 ** (v["enr_db"] / 10))
    tc = v["source_cold_k"]
    te1 = T0 * (10 ** (v["dut_nf_db"] / 10) - 1)
    te2 = T0 * (10 ** (v["receiver_nf_db"] / 10) - 1)
    g1 = 10 ** (v["dut_gain_db"] / 10)
    f = np.fft.fftfreq(n, 1 / fs)
    # The SDR's anti-alias filter rolls off towards the edges; its ADC adds a flat floor after it.
    roll = 1.0 / (1.0 + (np.abs(f) / (0.42 * fs)) ** 16)
    scale = 10 ** (-3.2) / (g1 * (th + te1) + te2)  # receiver gain: about -30 dBFS with the DUT hot

    def record(kelvin: float, name: str) -> None:
        spec = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) * np.sqrt(kelvin * scale * roll / 2)
        adc = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) * math.sqrt(2e-7 / 2)
        x = np.fft.ifft(spec) * math.sqrt(n) + adc + (0.004 + 0.003j)  # DC offset: the centre spike
        base = HERE / name
        if force:
            for suffix in (".sigmf-data", ".sigmf-meta"):
                base.with_suffix(suffix).unlink(missing_ok=True)
        write_sigmf(base, x, sample_rate_hz=fs, centre_hz=v["centre_hz"],
                    description="INVENTED DATA: benchnf demo, VHF preamplifier with a noise diode")

    record(g1 * (th + te1) + te2, "vhf_hot")
    record(g1 * (tc + te1) + te2, "vhf_cold")
    record(th + te2, "vhf_cal_hot")
    record(tc + te2, "vhf_cal_cold")
    table = HERE / "noise_source_enr.toml"
    if force or not table.exists():
        table.write_text(
            "# Noise source ENR table (INVENTED DATA, benchnf demo)\n"
            'name = "demo noise diode"\n'
            f"cold_k = {tc}\n"
            "enr_uncertainty_db = 0.15\n"
            "# frequency_hz, enr_db\n"
            f"points = [[100e6, {v['enr_db'] + 0.1}], [145e6, {v['enr_db']}], [200e6, {v['enr_db'] - 0.1}]]\n")
    return {"note": "INVENTED DATA", **v, "dut_noise_temperature_k": te1}


def write_two_temperature_scenario(force: bool) -> dict:
    """An audio preamplifier with a 1 kohm resistor in boiling water and in ice water, via a sound card."""
    a = AUDIO_2T
    rng = np.random.default_rng(a["seed"])
    n = int(a["seconds"] * FS)
    g = 10 ** (a["gain_db"] / 20)
    amp2 = a["en_v_per_rthz"] ** 2 + (a["in_a_per_rthz"] * a["rs_ohm"]) ** 2
    for name, t in (("bath_hot", a["t_hot_k"]), ("bath_cold", a["t_cold_k"])):
        density = g ** 2 * (amp2 + 4 * K_B * t * a["rs_ohm"])
        x = rng.normal(0, math.sqrt(density * FS / 2), n) + coloured_noise(rng, n, card_density)
        write(name, x, {"condition": "hot" if name.endswith("hot") else "cold", "rs_ohm": a["rs_ohm"],
                        "temperature_k": t}, force)
    write("bath_floor", coloured_noise(rng, n, card_density), {"condition": "floor"}, force)
    nf = 10 * math.log10(1 + amp2 / (4 * K_B * T0 * a["rs_ohm"]))
    return {"note": "INVENTED DATA", **a, "dut_noise_figure_db": nf}


if __name__ == "__main__":
    main()
