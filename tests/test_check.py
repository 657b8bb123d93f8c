"""Profiles, checks, batches and reports, on seeded synthetic units with known faults (INVENTED DATA)."""

import json
import math
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

from benchnf.check.batch import check_batch
from benchnf.check.limits import check_results
from benchnf.check.population import profile_from_results
from benchnf.check.profile import Mask, load_profile
from benchnf.cli import ExitStatus, main
from benchnf.errors import ParameterError

from results_factory import analysis_result
from synth import Bench

DEMO = Path(__file__).parents[1] / "benchnf" / "captures_demo"


def _results(**over):
    """A typed result with these figures (INVENTED DATA, on the template of tests/results_factory.py)."""
    base = {"rs_ohm": 200.0, "band_hz": [20.0, 20000.0], "weighting": "none", "sample_rate_hz": 48000.0,
            "temperature_k": 290.0, "gain_db": 40.0, "ein_dbu": -125.0, "noise_figure_db": 3.0,
            "output_noise_vrms": 4e-5, "nf_at_1khz_db": 3.1, "flicker_corner_hz": 40.0,
            "uncertainty": {"ein_db": 0.1, "noise_figure_db": 0.12, "gain_db": 0.1, "nf_at_1khz_db": 0.2},
            "spot": [{"freq_hz": f, "input_density_v_per_rthz": 2e-9, "input_density_expanded_db": 0.3}
                     for f in (100.0, 1000.0, 10000.0)],
            "spurs": [{"freq_hz": 100.0, "output_vrms": 1e-6, "family": "ripple"}]}
    base.update(over)
    return analysis_result(**base)


def _profile(tmp_path, body: str, name="p.toml"):
    p = tmp_path / name
    p.write_text('schema = "benchnf.profile/1"\nname = "t"\n[conditions]\nrs_ohm = 200.0\n'
                 'band_hz = [20.0, 20000.0]\nweighting = "none"\n' + body)
    return p


def test_limits_exactly_at_the_boundary_and_the_marginal_zone(tmp_path):
    prof = load_profile(_profile(tmp_path, '[[limit]]\nkey = "noise_figure_db"\nmax = 3.0\n'))
    # Exactly at the limit: margin 0, inside the uncertainty zone: MARGINAL, not a confident pass.
    assert check_results(_results(), prof).verdict == "MARGINAL"
    assert check_results(_results(noise_figure_db=2.8), prof).verdict == "PASS"     # margin 0.2 > U 0.12
    assert check_results(_results(noise_figure_db=2.95), prof).verdict == "MARGINAL"
    assert check_results(_results(noise_figure_db=3.1), prof).verdict == "MARGINAL"  # over by less than U
    assert check_results(_results(noise_figure_db=3.2), prof).verdict == "FAIL"
    no_u = _results(noise_figure_db=3.0, uncertainty={})
    assert check_results(no_u, prof).verdict == "PASS"  # sharp limit without an uncertainty: 3.0 <= 3.0
    v = check_results(_results(noise_figure_db=3.3), prof).limits[0]
    assert v.margin == pytest.approx(-0.3) and v.hint and "input stage" in v.hint


def test_mask_is_interpolated_on_log_frequency():
    m = Mask("input_density_v_per_rthz", (100.0, 10_000.0), (4e-9, 1e-9))
    assert m.at(1000.0) == pytest.approx(2e-9, rel=1e-12)  # halfway in log f, geometric in value
    assert m.at(50.0) is None and m.at(20_000.0) is None


def test_mask_and_hum_checks(tmp_path):
    prof = load_profile(_profile(tmp_path, '[[mask]]\nquantity = "input_density_v_per_rthz"\n'
                                           'points = [[100, 3e-9], [10000, 3e-9]]\n'
                                           '[[hum]]\nfamily = "ripple"\nmax_output_vrms = 2e-6\n'))
    assert check_results(_results(), prof).verdict == "PASS"
    spot = [{"freq_hz": 1000.0, "input_density_v_per_rthz": 4e-9, "input_density_expanded_db": 0.3}]
    assert check_results(_results(spot=spot), prof).verdict == "FAIL"
    hummy = _results(spurs=[{"freq_hz": 100.0, "output_vrms": 3e-6, "family": "ripple"}])
    r = check_results(hummy, prof)
    assert r.verdict == "FAIL" and "reservoir" in next(v.hint for v in r.limits if v.verdict == "FAIL")


@pytest.mark.parametrize(("body", "pattern"), [
    ('[[limit]]\nkey = "noise_figure_db"\nmin = 5\nmax = 3\n', "exceeds max"),
    ('[[limit]]\nkey = "colour"\nmax = 3\n', "not a figure"),
    ('[[limit]]\nkey = "gain_db"\ntarget = 40\n', "tolerance >= 0"),
    ('[[limit]]\nkey = "gain_db"\nmax = 3\nwobble = 1\n', "unknown keys"),
    ('[[mask]]\npoints = [[1000, 1e-9], [100, 1e-9]]\n', "increasing"),
    ('[[hum]]\nfamily = "ripple"\nmax_output_vrms = -1\n', "must be > 0"),
    ('', "holds no limits"),
])
def test_bad_profiles_are_refused(tmp_path, body, pattern):
    with pytest.raises(ParameterError, match=pattern):
        load_profile(_profile(tmp_path, body))


def test_other_conditions_and_schema_are_refused(tmp_path):
    prof = load_profile(_profile(tmp_path, '[[limit]]\nkey = "noise_figure_db"\nmax = 5\n'))
    with pytest.raises(ParameterError, match="rs_ohm"):
        check_results(_results(rs_ohm=150.0), prof)
    with pytest.raises(ParameterError, match="band"):
        check_results(_results(band_hz=[22.0, 22000.0]), prof)
    from benchnf.registry import result_from_dict
    with pytest.raises(ParameterError, match="schema_version"):
        check_results(result_from_dict({**_results().to_dict(), "schema_version": "0"}, where="x"), prof)


def test_profile_limits_are_tolerance_limits_of_the_good_units_plus_their_u():
    # Reference: toleranceinterval (PyPI), the exact normal tolerance factors of ISO 16269-6; values INVENTED.
    ti = pytest.importorskip("toleranceinterval")
    gains, eins = [40.0, 40.2, 39.9], [-125.0, -124.8, -125.1]
    goods = [_results(gain_db=g, ein_dbu=e) for g, e in zip(gains, eins)]
    p = profile_from_results(goods, margin_db=1.0)
    k2 = ti.twoside.normal_factor(3, 0.95, 0.95, method="exact")
    gain = next(x for x in p.limits if x.key == "gain_db")
    half = k2 * float(np.std(gains, ddof=1)) + 0.1 + 1.0  # + U (0.1 dB) + margin
    assert gain.min == pytest.approx(np.mean(gains) - half, abs=1e-9)
    assert gain.max == pytest.approx(np.mean(gains) + half, abs=1e-9)
    ein = next(x for x in p.limits if x.key == "ein_dbu")
    upper = float(np.ravel(ti.oneside.normal(np.array(eins), 0.95, 0.95))[0])  # mean + k1 s
    assert ein.max == pytest.approx(upper + 0.1 + 1.0, abs=1e-9)
    assert p.origin.units == 3 and p.origin.coverage == 0.95 and p.origin.confidence == 0.95
    assert p.origin.serials == ("unit 1", "unit 2", "unit 3") and "ISO 16269-6" in p.notes
    with pytest.raises(ParameterError, match="different conditions"):
        profile_from_results([_results(), _results(gain_db=40.1), _results(rs_ohm=150.0, gain_db=40.2)])


def test_a_profile_needs_three_distinct_possible_units():
    with pytest.raises(ParameterError, match="at least 3 known-good units, not 2"):
        profile_from_results([_results(), _results(gain_db=40.1)])
    with pytest.raises(ParameterError, match="unit 1 and unit 3 carry the very same figures"):
        profile_from_results([_results(), _results(gain_db=40.1), _results()])
    impossible = _results(noise_figure_db=-3.0, gain_db=40.2)  # as an old results file could say
    with pytest.raises(ParameterError, match="unit 3: its noise figure is -3.00 dB, below 0 dB"):
        profile_from_results([_results(), _results(gain_db=40.1), impossible])


def test_a_figure_not_resolved_in_every_unit_gets_no_limit():
    goods = [_results(gain_db=40.0), _results(gain_db=40.1, flicker_corner_hz=None), _results(gain_db=39.9)]
    p = profile_from_results(goods)
    assert "flicker_corner_hz" not in {x.key for x in p.limits}
    assert p.origin.not_limited == ("flicker_corner_hz (not resolved in 1 of 3 units)",)
    assert "no limit on flicker_corner_hz" in p.notes


def _unit(folder: Path, bench: Bench, *, hum_vrms: float = 0.0):
    folder.mkdir(parents=True)
    caps = bench.captures()
    x = caps["terminated"].read()
    if hum_vrms:
        t = np.arange(x.size) / bench.sample_rate_hz
        x = x + hum_vrms * math.sqrt(2) * np.sin(2 * np.pi * 100 * t) / bench.volts_per_fs
    sf.write(folder / "terminated.wav", x, int(bench.sample_rate_hz), subtype="FLOAT")
    (folder / "terminated.json").write_text(json.dumps({"condition": "terminated", "rs_ohm": bench.rs_ohm}))
    sf.write(folder / "tone.wav", caps["tone"].read(), int(bench.sample_rate_hz), subtype="FLOAT")
    (folder / "tone.json").write_text(json.dumps({"condition": "tone", "tone_input_vrms": 1e-3}))
    return caps["floor"].read()


def test_batch_of_synthetic_units_with_known_faults(tmp_path, capsys):
    units = tmp_path / "units"
    floor = _unit(units / "U1-good", Bench(seed=1, seconds=3.0))
    _unit(units / "U2-hum", Bench(seed=2, seconds=3.0), hum_vrms=30e-6)
    _unit(units / "U3-noisy", Bench(seed=3, seconds=3.0, en_v_per_rthz=6e-9))
    (units / "U4-empty").mkdir()
    sf.write(tmp_path / "floor.wav", floor, 48000, subtype="FLOAT")
    # Profile from three known-good units' own analyses (as a line would make it), never from one.
    goods = []
    for seed in (21, 22, 23):
        _unit(tmp_path / "goods" / f"G{seed}", Bench(seed=seed, seconds=3.0))
        goods.append(tmp_path / f"G{seed}.json")
        assert main(["analyze", "--terminated", str(tmp_path / "goods" / f"G{seed}" / "terminated.wav"), "--floor",
                     str(tmp_path / "floor.wav"), "--tone", str(tmp_path / "goods" / f"G{seed}" / "tone.wav"),
                     "--rs", "200", "--volts-per-fs", "2", "--json", str(goods[-1]), "--quiet"]) == 0
    assert main(["profile", str(goods[0]), "-o", str(tmp_path / "one.toml")]) == ExitStatus.BAD_INPUT
    assert "at least 3 known-good units, not 1" in capsys.readouterr().err
    assert main(["profile", *map(str, goods), "-o", str(tmp_path / "p.toml")]) == 0
    assert main(["profile", *map(str, goods), "-o", str(tmp_path / "p.toml")]) == ExitStatus.BAD_INPUT
    capsys.readouterr()
    out = tmp_path / "out"
    rc = main(["batch", str(units), "--profile", str(tmp_path / "p.toml"), "--floor", str(tmp_path / "floor.wav"),
               "--volts-per-fs", "2", "-o", str(out), "--quiet"])
    assert rc == ExitStatus.CHECK_FAILED
    rows = {r.split(",")[0]: r.split(",")[1] for r in (out / "summary.csv").read_text().splitlines()[1:]}
    assert rows == {"U1-good": "PASS", "U2-hum": "FAIL", "U3-noisy": "FAIL", "U4-empty": "ERROR"}
    junit = (out / "junit.xml").read_text()
    assert 'tests="4" failures="2" errors="1"' in junit
    assert "lacks its terminated and tone" in junit
    import xml.etree.ElementTree as ET
    suite = ET.fromstring(junit)
    times = {case.get("name"): float(case.get("time")) for case in suite.iter("testcase")}
    assert set(times) == set(rows) and times["U1-good"] > 0.0  # an analysed unit takes measurable time
    # Each time is written to 1 ms, so the sum of the rounded case times and the rounded total may differ by
    # up to half a millisecond per case plus half for the total.
    assert float(suite.get("time")) == pytest.approx(sum(times.values()), abs=0.0005 * (len(times) + 1) + 1e-9)
    for serial in rows:
        assert (out / f"{serial}.html").is_file()
    again = ["batch", str(units), "--profile", str(tmp_path / "p.toml"), "--floor", str(tmp_path / "floor.wav"),
             "--volts-per-fs", "2", "-o", str(out), "--quiet", "--workers", "1"]
    before = (out / "summary.csv").read_bytes()
    assert main(again) == ExitStatus.BAD_INPUT  # the reports exist: refused before any unit is analysed
    assert (out / "summary.csv").read_bytes() == before
    assert len((out / "history.csv").read_text().splitlines()) == 1 + 4
    assert main([*again, "--overwrite"]) == ExitStatus.CHECK_FAILED
    assert len((out / "history.csv").read_text().splitlines()) == 1 + 2 * 4  # appended, not rewritten


def test_check_command_exit_status(tmp_path, capsys):
    prof = _profile(tmp_path, '[[limit]]\nkey = "noise_figure_db"\nmax = 5.0\n')
    good, bad = tmp_path / "g.json", tmp_path / "b.json"
    good.write_text(json.dumps(_results().to_dict()))
    bad.write_text(json.dumps(_results(noise_figure_db=7.0).to_dict()))
    assert main(["check", "--profile", str(prof), str(good), "--report", str(tmp_path / "r")]) == ExitStatus.OK
    assert main(["check", "--profile", str(prof), str(bad)]) == ExitStatus.CHECK_FAILED
    other = tmp_path / "o.json"
    other.write_text(json.dumps({**_results().to_dict(), "schema_version": "7"}))
    assert main(["check", "--profile", str(prof), str(other)]) == ExitStatus.BAD_INPUT
    assert "schema_version" in capsys.readouterr().err
    assert (tmp_path / "r" / "g.html").is_file() and (tmp_path / "r" / "g.png").is_file()


def test_demo_units_against_the_demo_profile(tmp_path):
    from benchnf.check.batch import UnitSettings
    out = check_batch(DEMO / "units", str(DEMO / "known_good_profile.toml"),
                      settings=UnitSettings(volts_per_fs=2.0, floor=DEMO / "floor.flac"), workers=1)
    assert [o.verdict for o in out] == ["PASS", "FAIL", "FAIL"]
    hum = [v.name for v in out[1].check.limits if v.verdict == "FAIL"]
    assert any(n.startswith("hum ripple") for n in hum)
    noisy = [v.name for v in out[2].check.limits if v.verdict == "FAIL"]
    assert "noise_figure_db" in noisy


def _chromium():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return shutil.which(name)
    return None


@pytest.mark.skipif(_chromium() is None, reason="headless Chromium (Debian package chromium) not installed")
def test_html_report_renders_in_headless_chromium(tmp_path):
    from benchnf.check.profile import load_profile as lp
    from benchnf.report.html import unit_report_html
    prof = lp(DEMO / "known_good_profile.toml")
    from benchnf.check.limits import CheckConditions, CheckResult, LimitVerdict
    res = _results(rs_ohm=20.0)
    check = CheckResult("HA-9999", prof.name, "FAIL", CheckConditions(20.0, 290.0, (20.0, 20000.0), "none", "rms",
                                                                      True, 48000.0),
                        (LimitVerdict("noise_figure_db", 7.0, "max 5.00 dB", -2.0, "dB", 0.1, "FAIL", "input stage",
                                      "dB", None, 5.0),))
    page = tmp_path / "u.html"
    page.write_text(unit_report_html(serial="HA-9999", verdict="FAIL", check=check, results=res, profile=prof))
    shot = tmp_path / "shot.png"
    subprocess.run([_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                    "--disable-background-networking", "--disable-component-update", "--disable-sync",
                    f"--user-data-dir={tmp_path / 'profile'}", f"--screenshot={shot}", "--window-size=1200,1400",
                    page.as_uri()], capture_output=True, timeout=120)
    assert shot.is_file()
    img = np.asarray(__import__("matplotlib.image", fromlist=["imread"]).imread(shot))
    assert img.std() > 0.05  # not blank: text, a table, a figure
    assert (np.abs(img[..., :3] - img[0, 0, :3]).sum(axis=-1) > 0.3).mean() > 0.01


def test_profile_mask_reaches_down_to_the_band_edge_where_every_unit_resolves_it():
    # INVENTED spot values: all three units resolve 20 Hz to 10 kHz, one does not resolve 25 Hz.
    freqs = (20.0, 25.0, 50.0, 100.0, 1000.0, 10000.0)

    def spots(skip=()):
        return [{"freq_hz": f, "input_density_v_per_rthz": None if f in skip else 1e-9,
                 "input_density_expanded_db": 0.5} for f in freqs]
    goods = [_results(spot=spots()), _results(gain_db=40.1, spot=spots(skip=(25.0,))), _results(gain_db=39.9,
                                                                                              spot=spots())]
    mask = profile_from_results(goods).masks[0]
    assert mask.frequency_hz == (20.0, 50.0, 100.0, 1000.0, 10000.0)  # 20 Hz: the band's lower edge
    assert mask.limit[0] == pytest.approx(1e-9 * 10 ** (0.5 / 20))  # no spread: the level + its U


def test_batch_states_conditions_as_analyze_does_and_refuses_a_disagreement(tmp_path, capsys):
    # Demo units (INVENTED DATA) are at 20 ohm, as is the demo profile; stating 150 ohm must be refused.
    rc = main(["batch", str(DEMO / "units"), "--profile", str(DEMO / "known_good_profile.toml"), "--floor",
               str(DEMO / "floor.flac"), "--volts-per-fs", "2", "--rs", "150", "--workers", "1", "--quiet",
               "-o", str(tmp_path / "out")])
    captured = capsys.readouterr()
    assert rc == ExitStatus.BAD_INPUT
    assert "source resistance is 150 ohm in the stated --rs but 20 ohm in the sidecar" in captured.out
    assert captured.err.strip().startswith("benchnf: error: 3 unit(s) could not be checked")


def test_a_profile_named_with_quotes_and_backslashes_round_trips(tmp_path):
    # Written by a TOML writer (tomli-w): an f-string once left invalid TOML on disk for such a name.
    from benchnf.check.profile import load_profile
    name = 'bench "A" \\ line 2\ttab'
    prof = profile_from_results([_results(), _results(gain_db=40.1), _results(gain_db=39.9)], name=name)
    p = tmp_path / "p.toml"
    p.write_text(prof.to_toml())
    back = load_profile(p)
    assert back.name == name and back.limits == prof.limits and back.conditions == prof.conditions


def test_ripple_with_raised_broadband_noise_points_to_the_supply_filter_first(tmp_path):
    # A failing filter capacitor (INVENTED figures): ripple lines at 100 and 200 Hz and raised broadband noise.
    prof = load_profile(_profile(tmp_path, '[[limit]]\nkey = "ein_dbu"\nmax = -126\n[[limit]]\nkey = "noise_figure_db"\n'
                                           'max = 3.5\n[[hum]]\nfamily = "ripple"\nmax_output_vrms = 2e-6\n'
                                           '[[hum]]\nfamily = "mains"\nmax_output_vrms = 2e-6\n'))
    spurs = [{"freq_hz": 100.0, "output_vrms": 6e-6, "family": "ripple"},
             {"freq_hz": 200.0, "output_vrms": 3e-6, "family": "ripple"},
             {"freq_hz": 50.0, "output_vrms": 3e-6, "family": "mains"}]
    check = check_results(_results(ein_dbu=-123.0, noise_figure_db=5.0, spurs=spurs), prof)
    assert check.verdict == "FAIL"
    first = check.diagnosis[0]
    assert first.startswith("supply ripple (100, 200 Hz) together with raised broadband noise")
    assert "one failing reservoir or filter capacitor explains both" in first
    assert not any(f.startswith("raised broadband noise: suspect the input stage") for f in check.diagnosis)
    assert any("(lines at 50 Hz)" in f for f in check.diagnosis[1:])  # the mains finding names its line
    alone = check_results(_results(ein_dbu=-123.0), prof)  # noise alone: the input stage
    assert alone.diagnosis[0].startswith("raised broadband noise: suspect the input stage")
