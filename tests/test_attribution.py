"""Output noise attributed to reference channels by coherence (benchnf/dsp/coherence.py,
benchnf/measure/attribution.py). INVENTED DATA: seeded noise of known truth.

Outside checks: the spectral matrix against scipy.signal.csd and scipy.signal.coherence (PyPI, the reference
implementation); the conditioned (partial) spectra against a hand computation from their definitions for two
correlated references (Bendat and Piersol, Random Data, 4th ed., 2010, §7.3 (section from memory)); the
stated U of a share against the scatter seen over seeds.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from benchnf.capture import Capture
from benchnf.cli import main
from benchnf.dsp.coherence import spectral_matrix
from benchnf.measure.attribution import Reference, attribute
from benchnf.units import BOLTZMANN_J_PER_K, T0_K

signal = pytest.importorskip("scipy.signal")
FS = 48_000.0


def _refs(data, channels, names):
    return [Reference(Capture.from_array(data, sample_rate_hz=FS, volts_per_fs=1.0, channel=c), n)
            for c, n in zip(channels, names)]


def _attribute(data, *, seg=1024, names=("rail",)):
    out = Capture.from_array(data, sample_rate_hz=FS, volts_per_fs=1.0, channel=0)
    f = np.fft.rfftfreq(seg, 1 / FS)
    w = ((f >= 20) & (f <= 20_000)).astype(float)
    return attribute(out, _refs(data, range(1, 1 + len(names)), names), segment_length=seg,
                     noise_weights=lambda p: w, lines_of=lambda p: [])


def test_spectral_matrix_matches_scipy():
    rng = np.random.default_rng(0)
    n = 200_000
    r = rng.standard_normal(n)
    y = 0.5 * np.convolve(r, [1, 0.5, 0.2], "same") + rng.standard_normal(n)
    z = rng.standard_normal(n) + 0.3 * r
    data = np.stack([y, r, z], 1)
    sm = spectral_matrix((data[i:i + 7777] for i in range(0, n, 7777)), n_frames=n, sample_rate_hz=FS,
                         segment_length=1024, batches=8)
    g = sm.density()
    kw = dict(fs=FS, window="hann", nperseg=1024, noverlap=512, detrend="constant")
    _f, pyr = signal.csd(y, r, **kw)
    np.testing.assert_allclose(g[0, 1], pyr, rtol=1e-9, atol=1e-12 * np.abs(pyr).max())
    _f, pzz = signal.welch(z, **kw)
    np.testing.assert_allclose(g[2, 2].real, pzz, rtol=1e-9)
    _f, coh = signal.coherence(y, r, **kw)
    np.testing.assert_allclose(np.abs(g[0, 1]) ** 2 / (g[0, 0].real * g[1, 1].real), coh, atol=1e-9)
    assert sm.n_averages == (n - 1024) // 512 + 1 and sm.n_batches == 8


def test_two_correlated_references_are_separated_by_conditioning():
    # r1 = a, r2 = 0.5 a + b, y = e + a + r2 = e + 1.5 a + b (a, b, e independent, unit variance). By the
    # definitions: all coherent 3.25 of 4.25; on r1 alone 1.5²; on r2 alone 1.75² / 1.25 = 2.45; so r1's own
    # part 3.25 - 2.45 = 0.80 and r2's own 3.25 - 2.25 = 1.00 (hand computation, INVENTED DATA).
    rng = np.random.default_rng(4)
    n = int(FS * 20)
    a, b, e = rng.standard_normal((3, n))
    data = np.stack([e + 1.5 * a + b, a, 0.5 * a + b], 1)
    res = _attribute(data, names=("rail", "loop"))
    total = 4.25
    rail, loop = res.references
    for got, u, want in ((res.total.fraction_of_output_power, res.total.fraction_u95, 3.25 / total),
                         (rail.fraction_of_output_power, rail.fraction_u95, 0.80 / total),
                         (loop.fraction_of_output_power, loop.fraction_u95, 1.00 / total)):
        assert abs(got - want) <= u, (got, want, u)
    assert rail.coherent_fraction == pytest.approx(2.25 / total, abs=0.01)
    assert loop.coherent_fraction == pytest.approx(2.45 / total, abs=0.01)
    # The conditioned output is e alone: unit variance, one-sided density 2/FS.
    f = res.conditioned.frequency_hz
    band = (f >= 20) & (f <= 20_000)
    assert np.mean(res.conditioned.psd_per_hz[band]) == pytest.approx(2 / FS, rel=0.01)


@pytest.mark.parametrize("coupling", [0.15, 0.6])
def test_the_stated_u_of_a_share_covers_the_truth(coupling):
    # 400 seeds of 5 s: the rail reaches the output with a flat coupling, so its share is c² / (1 + c²).
    # The k=2 (Student's t, 31 degrees of freedom) interval must cover the truth in 92-98 % of seeds; the
    # scatter of (share - truth) is 0.9-1.15 times the stated standard uncertainty (measured: 93.8 and
    # 94.3 %, 1.05 and 1.09, in the run that set these bounds).
    truth = coupling ** 2 / (1 + coupling ** 2)
    n = int(FS * 5)
    z, covered = [], 0
    for seed in range(400):
        rng = np.random.default_rng([seed, int(coupling * 100)])
        rail = rng.standard_normal(n)
        data = np.stack([rng.standard_normal(n) + coupling * rail, rail], 1)
        share = _attribute(data).references[0]
        z.append((share.fraction_of_output_power - truth) / (share.fraction_u95 / 2.04))
        covered += abs(share.fraction_of_output_power - truth) <= share.fraction_u95
    assert 0.92 <= covered / 400 <= 0.98
    assert 0.9 <= float(np.std(z)) <= 1.15


sf = pytest.importorskip("soundfile")


def test_a_noisy_rail_is_taken_out_of_the_figures(tmp_path, capsys):
    # A 40 dB stage (1 nV/√Hz, 200 Ω) whose output also carries its rail's ripple and noise through a 300 Hz
    # low-pass; channel 1 records the rail, channel 2 an unrelated loop.
    rng = np.random.default_rng(8)
    n = int(FS * 30)
    t = np.arange(n) / FS
    e_in = math.sqrt(4 * BOLTZMANN_J_PER_K * T0_K * 200 + 1e-18)
    own = rng.standard_normal(n) * e_in * 100 * math.sqrt(FS / 2)
    rail = rng.standard_normal(n) * 2e-5 * math.sqrt(FS / 2) + 2e-3 * np.sin(2 * np.pi * 100 * t)
    b, a = signal.butter(1, 300 / (FS / 2))
    y = own + signal.lfilter(b, a, rail) * 0.05
    loop = rng.standard_normal(n) * 1e-3
    wav = tmp_path / "rail.wav"
    sf.write(wav, np.stack([y / 1e-2, rail / 0.1, loop / 1e-2], 1), int(FS), subtype="FLOAT")  # a reference's
    # scale does not matter: coherence is a ratio
    common = ["analyze", "--terminated", str(wav), "--gain-db", "40", "--rs", "200", "--temperature-k", "290",
              "--volts-per-fs", "1e-2", "--quiet"]
    assert main([*common, "--json", str(tmp_path / "plain.json")]) == 0
    assert main([*common, "--reference-channel", "1=rail", "--reference-channel", "2=loop",
                 "--json", str(tmp_path / "att.json")]) == 0
    plain = json.loads((tmp_path / "plain.json").read_text())
    att = json.loads((tmp_path / "att.json").read_text())
    nf_true = 10 * math.log10(1 + 1e-18 / (4 * BOLTZMANN_J_PER_K * T0_K * 200))
    assert abs(att["noise_figure_db"] - nf_true) <= att["uncertainty"]["noise_figure_db"]
    assert plain["noise_figure_db"] > att["noise_figure_db"] + 1.0
    rail_share, loop_share = att["attribution"]
    assert rail_share["reference"] == "rail" and rail_share["channel"] == 1
    assert rail_share["fraction_of_output_power"] > 0.2 and rail_share["fraction_u95"] > 0
    assert abs(loop_share["fraction_of_output_power"]) <= loop_share["fraction_u95"] + 0.005
    line = next(s for s in rail_share["lines"] if abs(s["freq_hz"] - 100) < 1)
    assert line["fraction"] > 0.95
    assert not any(abs(s["freq_hz"] - 100) < 1 for s in att["spurs"])  # the ripple line is the rail's
    assert any("through the rail reference" in n for n in att["notes"])


def test_reference_refusals(tmp_path, capsys):
    rng = np.random.default_rng(9)
    wav = tmp_path / "two.wav"
    sf.write(wav, rng.standard_normal((int(FS * 2), 2)) * 0.01, int(FS), subtype="FLOAT")
    common = ["analyze", "--terminated", str(wav), "--gain-db", "40", "--rs", "200", "--volts-per-fs", "1e-2"]
    for extra, words in ((["--reference-channel", "0"], "is an output channel"),
                         (["--reference-channel", "5"], "channel 5"),
                         (["--reference-channel", "1=a", "--reference-channel", "1=b"], "its own channel"),
                         (["--reference-channel", "1=" + "x" * 50], "40 printable")):
        capsys.readouterr()
        assert main([*common, *extra]) == 2, extra
        err = capsys.readouterr().err.strip()
        assert words in err and len(err.splitlines()) == 1, err


def test_the_diagnosis_names_what_the_references_explain_first():
    from types import SimpleNamespace

    from benchnf.check.diagnosis import diagnose
    from benchnf.measure.attribution import Attribution, AttributionTotal, LineShare
    rail = Attribution("rail", 1, 0.18, 0.02, 0.2, (LineShare(100.0, 0.72, 0.03),))
    off = [SimpleNamespace(name="hum ripple", verdict="FAIL", hint="ripple: the supply's filter")]
    findings = diagnose(off, [], (rail,), AttributionTotal(0.18, 0.02, 32))
    assert findings[0].startswith("72.0 % of the 100 Hz line and 18.0 ± 2.0 % of the band noise arrive through "
                                  "the rail reference")
    assert diagnose([SimpleNamespace(name="x", verdict="PASS", hint="")], [], (rail,),
                    AttributionTotal(0.18, 0.02, 32)) == ()  # nothing failed: nothing to explain


def test_a_rail_path_through_a_known_filter_is_attributed_within_its_u(tmp_path):
    # The rail reaches the output through a first-order 300 Hz low-pass of gain 0.3 (scipy.signal.butter, an
    # exact digital filter): its share of the 20 Hz-20 kHz output noise is the band integral of
    # 0.09 |H|² S_r over that of (S_own + 0.09 |H|² S_r), with |H|² from scipy.signal.freqz (INVENTED DATA).
    rng = np.random.default_rng(15)
    n = int(FS * 60)
    b, a = signal.butter(1, 300 / (FS / 2))
    rail = rng.standard_normal(n) * 3.0
    own = rng.standard_normal(n) * 0.1
    data = np.stack([own + 0.3 * signal.lfilter(b, a, rail), rail], 1)
    out = Capture.from_array(data, sample_rate_hz=FS, volts_per_fs=1.0, channel=0)
    seg = 16_384  # the analysis' default at 48 kHz: segments long against the filter's response
    f = np.fft.rfftfreq(seg, 1 / FS)
    w = ((f >= 20) & (f <= 20_000)).astype(float)
    res = attribute(out, _refs(data, [1], ["rail"]), segment_length=seg, noise_weights=lambda p: w,
                    lines_of=lambda p: [])
    h2 = np.abs(signal.freqz(b, a, worN=f, fs=FS)[1]) ** 2
    coupled = 0.09 * h2 * 9.0
    truth = float(np.sum(w * coupled) / np.sum(w * (0.01 + coupled)))
    share = res.references[0]
    assert abs(share.fraction_of_output_power - truth) <= share.fraction_u95, (share, truth)


def _cross_with_rail(path, seed):
    """Two inputs on one output (the DUT's noise 10 dB under each input's own) and a rail reaching that output
    through a first-order 300 Hz low-pass; channel 2 records the rail (INVENTED DATA). Returns the rail's true
    share of the DUT output over 20 Hz-20 kHz (the filter's band integral, scipy.signal.freqz)."""
    rng = np.random.default_rng(seed)
    n, vpfs = int(FS * 60), 1e-2
    out_density = math.sqrt(4 * BOLTZMANN_J_PER_K * T0_K * 200 + 1e-18) * 100
    b, a = signal.butter(1, 300 / (FS / 2))
    rail = rng.standard_normal(n) * 3e-5 * math.sqrt(FS / 2)
    dut = rng.standard_normal(n) * out_density * math.sqrt(FS / 2) + signal.lfilter(b, a, rail) * 0.1
    own = out_density * math.sqrt(FS / 2) * math.sqrt(10)
    x, y = dut + rng.standard_normal(n) * own, dut + rng.standard_normal(n) * own
    sf.write(path, np.stack([x / vpfs, y / vpfs, rail / 0.1], 1), int(FS), subtype="FLOAT")
    f = np.fft.rfftfreq(16_384, 1 / FS)
    w = ((f >= 20) & (f <= 20_000)).astype(float)
    coupled = 0.01 * (3e-5) ** 2 * np.abs(signal.freqz(b, a, worN=f, fs=FS)[1]) ** 2
    return float(np.sum(w * coupled) / np.sum(w * (out_density ** 2 + coupled)))


def test_a_rail_is_taken_out_of_the_cross_spectrum_too(tmp_path):
    # Conditioned on the rail, the co-spectrum gives the DUT's own noise figure within U, and the rail's share
    # of the DUT output (the co-spectrum's power) is within its U of the truth. Three captures (seeds fixed):
    # each interval covers with 95 % probability, so at least two of three must.
    nf_true = 10 * math.log10(1 + 1e-18 / (4 * BOLTZMANN_J_PER_K * T0_K * 200))
    nf_within = share_within = 0
    for seed in (16, 17, 18):
        wav = tmp_path / f"cross_rail{seed}.wav"
        truth = _cross_with_rail(wav, seed)
        out = tmp_path / f"r{seed}.json"
        assert main(["analyze", "--terminated", str(wav), "--cross", "--cross-volts-per-fs", "1e-2", "--volts-per-fs",
                     "1e-2", "--reference-channel", "2=rail", "--gain-db", "40", "--rs", "200", "--temperature-k",
                     "290", "--json", str(out), "--quiet"]) == 0
        r = json.loads(out.read_text())
        assert r["output_estimator"] == "cross-spectrum" and r["attribution"][0]["reference"] == "rail"
        nf_within += abs(r["noise_figure_db"] - nf_true) <= r["uncertainty"]["noise_figure_db"]
        share = r["attribution"][0]
        share_within += abs(share["fraction_of_output_power"] - truth) <= share["fraction_u95"]
        wav.unlink()
    assert nf_within >= 2 and share_within >= 2, (nf_within, share_within)
