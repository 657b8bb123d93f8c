"""Measured stage budgets and en/in extraction on seeded synthetic captures (INVENTED DATA),
and the bad inputs of the cascade, budget and eni commands."""

import json
import math

import numpy as np
import pytest
import soundfile as sf

from benchnf.measure import GainSetup
from benchnf.capture import Capture
from benchnf.cli import ExitStatus, main
from benchnf.errors import ParameterError
from benchnf.noise.cascade import Chain, Stage, load_chain
from benchnf.measure.stages import extract_en_in, measured_budget

K = 1.380649e-23
FS = 48_000.0
T = 290.0
EN1, IN1, EN2, A1, A2 = 1.0e-9, 2e-12, 6e-9, 10.0, 10.0
FLOOR = 20e-9
VPFS = 2.0


def _noise(rng, density, seconds=4.0):
    return rng.normal(0, math.sqrt(density * FS / 2), int(seconds * FS))


def _cap(x, cond=None):
    return Capture.from_array(x / VPFS, sample_rate_hz=FS, volts_per_fs=VPFS, condition=cond)


def _tone(rng, gain):
    t = np.arange(int(2 * FS)) / FS
    return _cap(1e-3 * math.sqrt(2) * gain * np.sin(2 * np.pi * 1000 * t) + rng.normal(0, 1e-6, t.size), "tone")


def _setup(rng, rs, seconds=4.0):
    src = 4 * K * T * rs
    after1 = EN1 ** 2 + (IN1 * rs) ** 2 + src
    after2 = after1 + EN2 ** 2 / A1 ** 2
    taps = []
    for name, density, gain in (("first", after1, A1), ("second", after2, A1 * A2)):
        noise = _cap(_noise(rng, gain ** 2 * density, seconds) + _noise(rng, FLOOR ** 2, seconds), "tap")
        taps.append((name, noise, GainSetup(tone=_tone(rng, gain), tone_input_vrms=1e-3)))
    return taps, _cap(_noise(rng, FLOOR ** 2, seconds), "floor")


def test_budget_recovers_what_each_stage_adds_and_flags_a_wrong_datasheet():
    rng = np.random.default_rng(5)
    rs = 100.0
    taps, floor = _setup(rng, rs)
    right = Chain((Stage("first", gain_db=20.0, en_v_per_rthz=EN1, in_a_per_rthz=IN1),
                   Stage("second", gain_db=20.0, en_v_per_rthz=EN2)), source_ohm=rs, temperature_k=T)
    r = measured_budget(taps=taps, rs_ohm=rs, temperature_k=T, floor=floor, chain=right)
    assert r.taps[0].added_v2_per_hz == pytest.approx(EN1 ** 2 + (IN1 * rs) ** 2, rel=0.05)
    assert r.taps[1].added_v2_per_hz == pytest.approx(EN2 ** 2 / A1 ** 2, rel=0.15)
    assert not any(t.unexplained for t in r.taps)
    optimistic = Chain((right.stages[0], Stage("second", gain_db=20.0, en_v_per_rthz=EN2 / 3)),
                       source_ohm=rs, temperature_k=T)
    r2 = measured_budget(taps=taps, rs_ohm=rs, temperature_k=T, floor=floor, chain=optimistic)
    assert r2.taps[1].unexplained and "unexplained noise at stage 2" in r2.notes[0]


def test_taps_that_do_not_increase_in_gain_are_refused():
    rng = np.random.default_rng(6)
    taps, floor = _setup(rng, 100.0, seconds=2.0)
    with pytest.raises(ParameterError, match="not more than tap"):
        measured_budget(taps=taps[::-1], rs_ohm=100.0, floor=floor)


def test_en_in_recovered_from_an_rs_sweep():
    rng = np.random.default_rng(7)
    gain = 100.0
    sweep = []
    for rs in (0.0, 100.0, 1000.0, 5000.0):
        e2 = EN1 ** 2 + (IN1 * rs) ** 2 + 4 * K * T * rs
        cap = _cap(_noise(rng, gain ** 2 * e2, 6.0) + _noise(rng, FLOOR ** 2, 6.0))
        sweep.append((cap, rs, T, GainSetup(gain_db=40.0)))
    floor = _cap(_noise(rng, FLOOR ** 2, 6.0))
    r = extract_en_in(sweep=sweep, floor=floor)
    a = r.at_1khz
    assert a.en_v_per_rthz == pytest.approx(EN1, abs=3 * a.en_std_v_per_rthz + 0.03 * EN1)
    assert a.in_a_per_rthz == pytest.approx(IN1, abs=3 * a.in_std_a_per_rthz + 0.05 * IN1)
    assert a.ropt_ohm == pytest.approx(EN1 / IN1, rel=0.15)
    assert abs(a.correlation) < 0.3
    assert any("lowest source impedance" in n for n in r.notes)


def _wav(tmp_path, name, x):
    p = tmp_path / name
    sf.write(p, np.asarray(x) / VPFS, int(FS), subtype="FLOAT")
    return str(p)


def test_cli_cascade_json_contract(tmp_path, capsys):
    chain = tmp_path / "c.toml"
    chain.write_text('[[stage]]\nname = "lna"\ngain_db = 15.0\nnf_db = 2.0\n\n'
                     '[[stage]]\nname = "rx"\ngain_db = 30.0\nte_k = 2610.0\n')
    out = tmp_path / "c.json"
    assert main(["cascade", str(chain), "--json", str(out), "--what-if", "lna", "nf_db=1.0"]) == 0
    d = json.loads(out.read_text())
    assert {"noise_figure_db", "noise_temperature_k", "gain_db", "stages"} <= set(d)
    assert {"share_of_excess", "name"} <= set(d["stages"][0])
    assert d["noise_figure_db"] == pytest.approx(2.7173, abs=1e-3)  # te 2610 K is NF 10.0 dB
    assert d["what_if"]["noise_figure_db"] < d["noise_figure_db"]
    assert "Where to spend" in capsys.readouterr().out


@pytest.mark.parametrize(("toml", "pattern"), [
    ('[[stage]]\nname = "a"\ngain_db = 10\n', "no noise data"),
    ('[[stage]]\nname = "a"\nnf_db = 3\n[[stage]]\nname = "b"\nnf_db = 3\n', "has no gain"),
    ('[[stage]]\nname = "a"\ngain_linear = 0\nnf_db = 3\n', "must be > 0"),
    ('[[stage]]\nname = "a"\ngain_db = 10\nnf_db = 3\ncolour = "red"\n', "unknown keys"),
    ('[[stage]]\nname = "a"\ngain_db = 10\nnf_db = -3\n', "nf_db=-3 must be a number >= 0"),
])
def test_cli_cascade_bad_chain(tmp_path, capsys, toml, pattern):
    chain = tmp_path / "c.toml"
    chain.write_text(toml)
    assert main(["cascade", str(chain)]) == ExitStatus.BAD_INPUT
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and pattern in err[0]


def test_cli_eni_contract_and_bad_input(tmp_path, capsys):
    rng = np.random.default_rng(8)
    files = []
    for rs in (0.0, 1000.0, 5000.0):
        e2 = EN1 ** 2 + (IN1 * rs) ** 2 + 4 * K * T * rs
        files.append(f"{_wav(tmp_path, f'r{rs:g}.wav', _noise(rng, 1e4 * e2, 3.0))}@{rs:g}")
    out = tmp_path / "e.json"
    base = ["eni", *files, "--gain-db", "40", "--volts-per-fs", str(VPFS), "--quiet"]
    assert main(base + ["--json", str(out)]) == 0
    d = json.loads(out.read_text())
    for key in ("en_at_1khz_v_per_rthz", "in_at_1khz_a_per_rthz", "ropt_at_1khz_ohm", "nfmin_at_1khz_db", "rows"):
        assert key in d
    capsys.readouterr()
    assert main(["eni", files[0], "--gain-db", "40", "--volts-per-fs", "2", "--quiet"]) == ExitStatus.BAD_INPUT
    assert "two or more source resistances" in capsys.readouterr().err
    # Sidecars that disagree on temperature, with one capture stating none.
    (tmp_path / "r1000.json").write_text('{"temperature_k": 300}')
    (tmp_path / "r5000.json").write_text('{"temperature_k": 350}')
    assert main(base) == ExitStatus.BAD_INPUT
    assert "state it for every capture" in capsys.readouterr().err
    assert main(["eni", "x.wav@-5", "--gain-db", "40"]) == ExitStatus.BAD_INPUT


def test_demo_chain_file_loads():
    from pathlib import Path
    chain = load_chain(Path(__file__).parents[1] / "benchnf" / "captures_demo" / "head_amp_chain.toml")
    assert [s.name for s in chain.stages] == ["input pair", "second stage", "output buffer"]


def _near_floor_budget(seed, *, seconds, wander):
    """A correct two-stage chain whose first tap stands 0.35 dB above the analyzer floor; the floor's level
    wanders by `wander` (relative, in 0.25 s steps) in the taps and the floor capture (INVENTED DATA)."""
    rng = np.random.default_rng(seed)
    rs = 100.0
    after1 = EN1 ** 2 + (IN1 * rs) ** 2 + 4 * K * T * rs
    after2 = after1 + EN2 ** 2 / A1 ** 2
    floor_density = A1 ** 2 * after1 / (10 ** 0.035 - 1)

    def floor_noise():
        x = _noise(rng, floor_density, seconds)
        steps = np.repeat(1 + wander * rng.standard_normal(int(4 * seconds) + 1), int(FS / 4))[:x.size]
        return x * steps
    taps = [(name, _cap(_noise(rng, gain ** 2 * density, seconds) + floor_noise(), "tap"),
             GainSetup(tone=_tone(rng, gain), tone_input_vrms=1e-3))
            for name, density, gain in (("first", after1, A1), ("second", after2, A1 * A2))]
    right = Chain((Stage("first", gain_db=20.0, en_v_per_rthz=EN1, in_a_per_rthz=IN1),
                   Stage("second", gain_db=20.0, en_v_per_rthz=EN2)), source_ohm=rs, temperature_k=T)
    r = measured_budget(taps=taps, rs_ohm=rs, temperature_k=T, floor=_cap(floor_noise(), "floor"), chain=right)
    return [t.unexplained for t in r.taps]


def test_budget_flags_near_the_floor_keep_their_coverage_over_seeds(monkeypatch):
    # A correct stage is called "unexplained" when |added - predicted| > 2 u: about 5 % of the time, if u is
    # honest. Stationary floor, and a floor whose level wanders 2 % (which the Welch statistics do not see).
    seeds = range(30)
    steady = np.array([_near_floor_budget(s, seconds=4.0, wander=0.0) for s in seeds])
    wandering = np.array([_near_floor_budget(s, seconds=16.0, wander=0.02) for s in seeds])
    assert steady.sum(axis=0).max() <= 4 and wandering.sum(axis=0).max() <= 5  # <= about 15 % of 30
    import benchnf.measure.stages as stages
    monkeypatch.setattr(stages, "seen_rel_var", lambda *a, **k: None)  # the Welch statistics alone
    blind = np.array([_near_floor_budget(s, seconds=16.0, wander=0.02) for s in seeds])
    assert blind.sum(axis=0).min() >= 8  # the case is hard: without the scatter seen, many false flags


def test_budget_takes_the_source_from_the_chain_file_and_refuses_a_disagreement(tmp_path, capsys):
    rng = np.random.default_rng(9)
    taps, floor = _setup(rng, 100.0, seconds=3.0)
    args = ["budget", str(tmp_path / "chain.toml")]
    for i, (_name, cap, g) in enumerate(taps, 1):
        sf.write(tmp_path / f"t{i}.wav", cap.read(), int(FS), subtype="FLOAT")
        sf.write(tmp_path / f"g{i}.wav", g.tone.read(), int(FS), subtype="FLOAT")
        args += ["--tap", str(tmp_path / f"t{i}.wav"), str(tmp_path / f"g{i}.wav")]
    sf.write(tmp_path / "floor.wav", floor.read(), int(FS), subtype="FLOAT")
    args += ["--floor", str(tmp_path / "floor.wav"), "--volts-per-fs", str(VPFS), "--tone-input-vrms", "1e-3", "--quiet"]
    (tmp_path / "chain.toml").write_text(
        'source_ohm = 100.0\ntemperature_k = 300.0\n[[stage]]\nname = "first"\nvoltage_gain_db = 20.0\n'
        'en_v_per_rthz = 1e-9\nin_a_per_rthz = 2e-12\n[[stage]]\nname = "second"\nvoltage_gain_db = 20.0\n'
        'en_v_per_rthz = 6e-9\n')
    assert main([*args, "--json", str(tmp_path / "b.json")]) == ExitStatus.OK  # no --rs, no sidecar
    data = json.loads((tmp_path / "b.json").read_text())
    assert data["rs_ohm"] == 100.0 and data["temperature_k"] == 300.0
    capsys.readouterr()
    assert main([*args, "--rs", "150"]) == ExitStatus.BAD_INPUT
    err = capsys.readouterr().err
    assert "150 ohm" in err and "chain.toml" in err and "100 ohm" in err
