"""Profiles from a population of known-good units and the decision rules of a check, on seeded synthetic
units (INVENTED DATA: tests/synth.py's white-noise amplifier, no 1/f, so no corner is resolved)."""

import pytest

from benchnf.check.decision import DECISION_RULES, classify
from benchnf.check.limits import check_results
from benchnf.check.population import profile_from_results
from benchnf.check.profile import load_profile
from benchnf.errors import ParameterError
from benchnf.measure import GainSetup, analyze_gain_method

from synth import Bench


def _good(seed: int):
    c = Bench(seed=seed, seconds=3.0, floor_v_per_rthz=5e-9).captures()
    return analyze_gain_method(terminated=c["terminated"], floor=c["floor"],
                               gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]), rs_ohm=200.0)


@pytest.fixture(scope="module")
def population():
    return [_good(seed) for seed in range(101, 111)]


def test_four_good_units_with_white_noise_pass_the_profile_made_from_them(population):
    four = population[:4]
    assert all(r.flicker_corner_hz is None for r in four)  # white: "not resolved", no number
    prof = profile_from_results(four, serials=["A1", "A2", "A3", "A4"])
    assert "flicker_corner_hz" not in {lim.key for lim in prof.limits}
    assert prof.masks[0].frequency_hz[0] == 20.0  # down to the band's lower edge
    for r in four:
        assert check_results(r, prof).verdict == "PASS"


def test_other_good_units_of_the_same_population_are_not_failed(population):
    prof = profile_from_results(population[:4])
    verdicts = [check_results(r, prof).verdict for r in population[4:]]
    assert "FAIL" not in verdicts and verdicts.count("PASS") >= len(verdicts) - 1


def test_a_degraded_unit_fails_the_population_profile(population):
    prof = profile_from_results(population[:4])
    c = Bench(seed=120, seconds=3.0, floor_v_per_rthz=5e-9, en_v_per_rthz=3.0e-9).captures()  # en 2 -> 3 nV
    noisy = analyze_gain_method(terminated=c["terminated"], floor=c["floor"],
                                gain=GainSetup(tone=c["tone"], tone_input_vrms=c["tone_input_vrms"]), rs_ohm=200.0)
    check = check_results(noisy, prof)
    assert check.verdict == "FAIL" and check.decision_rule == "zones"
    assert "noise_figure_db" in {v.name for v in check.limits if v.verdict == "FAIL"}


@pytest.mark.parametrize(("margin", "u", "simple", "guarded", "zones"), [
    (0.5, 0.2, "PASS", "PASS", "PASS"),
    (0.1, 0.2, "PASS", "FAIL", "MARGINAL"),     # inside by less than U
    (0.0, 0.2, "PASS", "FAIL", "MARGINAL"),     # exactly at the limit
    (-0.1, 0.2, "FAIL", "FAIL", "MARGINAL"),    # outside by less than U
    (-0.3, 0.2, "FAIL", "FAIL", "FAIL"),
    (0.0, None, "PASS", "PASS", "PASS"),        # no U: a sharp limit
    (None, 0.2, "FAIL", "FAIL", "FAIL"),        # no value
])
def test_decision_rules_at_their_boundaries(margin, u, simple, guarded, zones):
    # ILAC-G8:09/2019 simple and guarded acceptance; ISO 14253-1 uncertainty zones (common practice).
    assert [classify(margin, u, rule) for rule in ("simple", "guarded", "zones")] == [simple, guarded, zones]


def test_the_rule_is_stated_with_every_verdict(population, tmp_path):
    from benchnf.report.present_check import present
    from benchnf.report.render_text import render_text
    prof = profile_from_results(population[:4], decision_rule="guarded")
    path = tmp_path / "p.toml"
    path.write_text(prof.to_toml())
    back = load_profile(path)
    assert back.decision_rule == "guarded" and back.origin == prof.origin
    check = check_results(population[5], back)
    text = render_text(present(check))
    assert "(decision rule: guarded)" in text and DECISION_RULES["guarded"] in text
    assert check_results(population[5], back, decision_rule="simple").decision_rule == "simple"
    with pytest.raises(ParameterError, match="decision rule 'lenient'"):
        check_results(population[5], back, decision_rule="lenient")


@pytest.mark.parametrize(("body", "pattern"), [
    ('[[limit]]\nkey = "gain_db"\nmin = 40\n[[limit]]\nkey = "gain_db"\nmax = 30\n', "at least 40 and at most 30"),
    ('[[limit]]\nkey = "noise_figure_db"\nmax = -0.5\n', "below 0 dB"),
    ('[[limit]]\nkey = "ein_dbu"\nmax = -140\n', "below the 200 ohm source's own thermal noise"),
    ('[[mask]]\npoints = [[100, 1e-9], [1000, 1e-9]]\n', "under the 200 ohm source's own thermal noise"),
    ('decision_rule = "lenient"\n[[limit]]\nkey = "gain_db"\nmax = 41\n', "decision rule 'lenient'"),
])
def test_limits_no_unit_can_meet_are_refused_on_load(tmp_path, body, pattern):
    head, _, rest = body.partition("[[")
    p = tmp_path / "p.toml"
    p.write_text(f'schema = "benchnf.profile/1"\nname = "t"\n{head}[conditions]\nrs_ohm = 200.0\n'
                 f'band_hz = [20.0, 20000.0]\nweighting = "none"\ntemperature_k = 290.0\n' + ("[[" + rest if rest else ""))
    with pytest.raises(ParameterError, match=pattern):
        load_profile(p)
