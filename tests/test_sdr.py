"""A receiver over rtl_tcp (a stand-in server streaming seeded noise: invented data), its SigMF recording, and
hot and cold found in one switched recording.

Truth: with the source's ENR and a cold source at T0, the system noise factor is F = ENR/(Y - 1) (Friis 1944;
the team's references, "Noise figure, Y-factor"). The 8-bit converter adds Δ²/12 to each of I and Q (Bennett
1948; Widrow & Kollár, Quantization Noise, 2008, ch. 4), so the true Y of the stand-in's bytes is
(σh² + Δ²/12)/(σc² + Δ²/12) with σ in converter steps. The rtl_tcp protocol is the one in the team's
references (rtl-sdr project's rtl_tcp; from memory).
"""

from __future__ import annotations

import json
import math
import re

import numpy as np
import pytest

from benchnf.cli import main
from benchnf.cli.status import ExitStatus
from benchnf.dsp.switched import find_states
from rtl_tcp_standin import Schedule, StandIn

RATE = 1_024_000.0
SETTLE_S = 0.25  # what the client discards after its settings, as benchnf.acquire.sdr does


def true_nf_db(s: Schedule, nf_db: float | None = None) -> float:
    """The system NF the stand-in's bytes carry, its quantisation included (Bennett's Δ²/12 per component)."""
    y = float(1 + 10 ** (s.enr_db / 10) / 10 ** ((nf_db if nf_db is not None else s.nf_db) / 10))
    q = 1 / 12
    y_bytes = (s.cold_lsb ** 2 * y + q) / (s.cold_lsb ** 2 + q)
    return 10 * math.log10(10 ** (s.enr_db / 10) / (y_bytes - 1))


def _record(standin: StandIn, out, *, seconds="4", extra=()):
    return main(["record", "--sdr", standin.address, "--centre-hz", "145e6", "--rate", str(RATE), "--gain", "30",
                 "--condition", "switched", "--seconds", seconds, "-o", str(out), "--quiet", *extra])


def _one_error_line(capsys) -> str:
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("benchnf: error:"), err
    return err[0]


def test_record_then_switched_yfactor_within_u(tmp_path, capsys):
    sched = Schedule(seed=11, period_s=0.6)
    with StandIn(schedule=sched) as s:
        assert _record(s, tmp_path / "x.sigmf-meta") == ExitStatus.OK
        sent = list(s.commands)
        transitions = list(s.transitions)
    # the settings as the protocol numbers them: rate, frequency, ppm, AGC off, manual gain, gain in tenths
    assert (0x02, int(RATE)) in sent and (0x01, 145_000_000) in sent and (0x08, 0) in sent
    assert (0x03, 1) in sent and (0x04, 300) in sent
    meta = json.loads((tmp_path / "x.sigmf-meta").read_text())["global"]
    assert meta["core:datatype"] == "cu8" and meta["benchnf:status"] == "complete"
    assert meta["benchnf:samples"] == int(4 * RATE) and meta["benchnf:gain_db"] == 30.0
    assert (tmp_path / "x.sigmf-data").stat().st_size == 2 * int(4 * RATE)
    capsys.readouterr()
    out = tmp_path / "y.json"
    assert main(["yfactor", "--switched", str(tmp_path / "x.sigmf-meta"), "--enr-db", "15", "--t-cold-k", "290",
                 "--json", str(out), "--quiet"]) == ExitStatus.OK
    d = json.loads(out.read_text())
    u = d["uncertainty"]["noise_figure_db"]
    assert d["noise_figure_db"] == pytest.approx(true_nf_db(sched), abs=u)
    # every used state lies inside one true state of the stand-in, of the same kind
    starts = np.array([t for _s, t in transitions])
    kinds = [k for k, _t in transitions]
    used = [seg for seg in d["segments"] if seg["pair"] is not None]
    assert len(d["pairs"]) >= 2 and len(used) == 2 * len(d["pairs"])
    for seg in used:
        a, b = seg["start_s"] + SETTLE_S, seg["end_s"] + SETTLE_S
        i = int(np.searchsorted(starts, a, side="right")) - 1
        assert kinds[i] == seg["state"] and (i + 1 == len(starts) or b <= starts[i + 1] + 0.01), seg
    for p in d["pairs"]:
        assert p["noise_figure_db"] == pytest.approx(true_nf_db(sched), abs=p["noise_figure_u95_db"])
    names = [c["name"] for c in d["uncertainty"]["budgets"]["noise_figure_db"]["contributions"]]
    assert "quantisation" in names
    assert d["power_trace"]["interval_s"] == pytest.approx(0.01)


def test_quantisation_that_dominates_is_refused(tmp_path, capsys):
    with StandIn(schedule=Schedule(seed=2, cold_lsb=0.45, enr_db=5.0, nf_db=6.0)) as s:
        assert _record(s, tmp_path / "q.sigmf-meta", seconds="3") == ExitStatus.OK
    capsys.readouterr()
    rc = main(["yfactor", "--switched", str(tmp_path / "q.sigmf-meta"), "--enr-db", "5", "--quiet"])
    assert rc == ExitStatus.BAD_INPUT
    assert "quantisation dominates" in _one_error_line(capsys)


@pytest.mark.parametrize("case", ["refused", "not rtl_tcp", "rate", "auto gain", "dropped", "overload"])
def test_receiver_faults_are_one_line(case, tmp_path, capsys):
    out = tmp_path / "f.sigmf-meta"
    if case == "refused":
        import socket
        with socket.socket() as free:  # a port nobody listens on
            free.bind(("127.0.0.1", 0))
            address = f"rtl_tcp://127.0.0.1:{free.getsockname()[1]}"
        rc = main(["record", "--sdr", address, "--centre-hz", "145e6", "--gain", "30", "--condition", "hot",
                   "--seconds", "1", "-o", str(out)])
        assert rc == ExitStatus.BAD_INPUT and "cannot reach rtl_tcp" in _one_error_line(capsys)
        return
    if case in ("rate", "auto gain"):
        rate, gain = ("500000", "30") if case == "rate" else ("2.4e6", "auto")
        rc = main(["record", "--sdr", "rtl_tcp://127.0.0.1:1", "--centre-hz", "145e6", "--rate", rate, "--gain",
                   gain, "--condition", "hot", "--seconds", "1", "-o", str(out)])
        line = _one_error_line(capsys)
        assert rc == ExitStatus.BAD_INPUT and re.search("225001-300000|automatic gain", line), line
        assert not out.exists()
        return
    kw = {"not rtl_tcp": dict(greeting=b"HTTP"), "dropped": dict(drop_after_s=0.8),
          "overload": dict(overload=True)}[case]
    with StandIn(**kw) as s:
        rc = _record(s, out, seconds="2")
    if case == "not rtl_tcp":
        assert rc == ExitStatus.BAD_INPUT and "not as an rtl_tcp server" in _one_error_line(capsys)
        assert not out.exists()
    elif case == "dropped":
        assert rc == ExitStatus.BAD_INPUT and "connection ended after" in _one_error_line(capsys)
        meta = json.loads(out.read_text())["global"]
        assert meta["benchnf:status"] == "connection dropped" and 0 < meta["benchnf:samples"] < 2 * RATE
    else:
        assert rc == ExitStatus.OK
        warn = capsys.readouterr().err.strip().splitlines()
        assert len(warn) == 1 and warn[0].startswith("benchnf: warning:") and "rails" in warn[0]
        rc = main(["yfactor", "--switched", str(out), "--enr-db", "15", "--quiet"])
        assert rc == ExitStatus.BAD_INPUT and "overloaded" in _one_error_line(capsys)


def test_a_receiver_that_falls_behind_reports_lost_samples(tmp_path, capsys):
    with StandIn(speed=0.7) as s:
        assert _record(s, tmp_path / "s.sigmf-meta", seconds="2") == ExitStatus.OK
    warn = capsys.readouterr().err.strip().splitlines()
    assert any(w.startswith("benchnf: warning:") and "lost on the way" in w for w in warn), warn
    assert json.loads((tmp_path / "s.sigmf-meta").read_text())["global"]["benchnf:lost_samples"] > 0


def test_switched_audio_with_thermal_loads(tmp_path, capsys):
    """A sound card with a resistor switched between boiling and iced water (seeded synthetic): Y from
    (Th + Te)/(Tc + Te), Te of the amplifier 100 K (F = 1 + Te/T0, the team's references)."""
    import soundfile as sf
    rng = np.random.default_rng(4)
    fs, te, th, tc = 48_000, 100.0, 373.15, 273.15
    states, x = [], []
    for k in range(10):
        n = int(fs * rng.uniform(1.5, 2.5))
        t = th if k % 2 else tc
        states.append(("hot" if k % 2 else "cold", sum(len(v) for v in x) / fs))
        x.append(rng.normal(0, 0.01 * math.sqrt((t + te) / (tc + te)), n))
    path = tmp_path / "loads.wav"
    sf.write(path, np.concatenate(x), fs, subtype="FLOAT")
    out = tmp_path / "r.json"
    assert main(["yfactor", "--switched", str(path), "--t-hot-k", str(th), "--t-cold-k", str(tc), "--json",
                 str(out), "--quiet"]) == ExitStatus.OK
    d = json.loads(out.read_text())
    u = d["uncertainty"]["noise_figure_db"]
    assert d["noise_temperature_k"] == pytest.approx(te, abs=d["noise_temperature_u95_k"])
    assert d["noise_figure_db"] == pytest.approx(10 * math.log10(1 + te / 290), abs=u)
    assert len(d["pairs"]) >= 4


def test_find_states_drops_short_and_unsteady_states():
    """A seeded synthetic power trace: hot 2 dB over cold, 2 % scatter per block, a 0.1 s glitch and a state
    whose level wanders."""
    rng = np.random.default_rng(0)
    lengths = [100, 100, 10, 100, 100, 100]  # blocks of 10 ms
    kinds = ["cold", "hot", "cold", "hot", "cold", "hot"]
    trace = []
    for n, k in zip(lengths, kinds):
        base = 10 ** (0.2 if k == "hot" else 0.0)
        trace.append(base * (1 + 0.02 * rng.standard_normal(n)))
    trace[4] = trace[4] * (1 + 0.15 * np.sin(np.linspace(0, 6, 100)))  # the fifth state wanders
    sw = find_states(np.concatenate(trace), block_frames=480, rate_hz=48_000.0, guard_s=0.05, min_s=0.2)
    states = [(s.state, s.dropped is None) for s in sw.states]
    assert [s for s, _ok in states] == ["cold", "hot", "cold", "hot", "cold", "hot"]
    assert "shorter than" in (sw.states[2].dropped or "")
    assert "unsteady" in (sw.states[4].dropped or "")
    assert sw.pairs == ((1, 0),)


def test_live_follows_a_step_in_the_nf_within_two_pairs(tmp_path, capsys):
    """The stand-in's NF drops from 3 to 2 dB (a trimmer turned) part-way: every pair before the step reads the
    old truth within U, and the second pair after it (at the latest) the new one."""
    sched = Schedule(seed=3, period_s=0.6, step_at_s=4.0, nf_after_db=2.0)
    out = tmp_path / "live.json"
    with StandIn(schedule=sched) as s:
        rc = main(["yfactor", "--live", "--sdr", s.address, "--centre-hz", "145e6", "--rate", str(RATE), "--gain",
                   "30", "--enr-db", "15", "--t-cold-k", "290", "--seconds", "8", "--json", str(out), "--quiet"])
    assert rc == ExitStatus.OK
    lines = [ln for ln in capsys.readouterr().out.splitlines() if ln.startswith("pair")]
    d = json.loads(out.read_text())
    assert len(lines) == len(d["pairs"]) >= 5
    step = 4.0 - SETTLE_S  # in the recording's time
    before = [p for p in d["pairs"] if d["segments"][p["cold"]]["end_s"] < step and
              d["segments"][p["hot"]]["end_s"] < step]
    after = [p for p in d["pairs"] if min(d["segments"][p["cold"]]["start_s"], d["segments"][p["hot"]]["start_s"])
             > step]
    assert before and len(after) >= 2
    for p in before:
        assert p["noise_figure_db"] == pytest.approx(true_nf_db(sched), abs=p["noise_figure_u95_db"])
    first_after = d["pairs"].index(after[0])
    assert first_after - len(before) <= 2  # at most one pair straddles the step
    for p in after:
        assert p["noise_figure_db"] == pytest.approx(true_nf_db(sched, 2.0), abs=p["noise_figure_u95_db"])


def test_live_calibration_pair_corrects_the_later_pairs():
    """The session's calibration pair (the source straight into the receiver), then the DUT: the second-stage
    correction F1 = F12 - (F2 - 1)/G1 (Friis 1944; the team's references) recovers the DUT's NF and gain.
    Seeded synthetic complex noise (invented data): receiver NF 8 dB, DUT NF 1 dB and gain 20 dB, ENR 15 dB."""
    from benchnf.measure.yfactor import HotColdSource
    from benchnf.measure.yfactor_live import YFactorLive
    from benchnf.noise.yfactor import EnrTable
    from benchnf.errors import ParameterError
    rng = np.random.default_rng(21)
    enr, f2, f1, g1 = 10 ** 1.5, 10 ** 0.8, 10 ** 0.1, 100.0
    f12 = f1 + (f2 - 1) / g1
    live = YFactorLive(rate_hz=RATE, centre_hz=145e6, gain_db=30.0, source=HotColdSource(enr=EnrTable.constant(15.0)))

    def states(cold_power: float, y: float, n_pairs: int) -> None:
        for k in range(2 * n_pairs + 1):
            p = cold_power * (y if k % 2 else 1.0)
            z = rng.normal(0, np.sqrt(p / 2), (int(0.6 * RATE), 2)) @ np.array([1, 1j])
            live.feed(z)
    live.calibrate_next()
    states(1e-3, 1 + enr / f2, 1)
    assert live.calibration is not None and not live.calibrating and not live.pairs
    assert live.calibration.receiver_nf_db == pytest.approx(8.0, abs=0.1)
    live.restart()  # the DUT connected
    states(1e-3 * g1 * f12 / f2, 1 + enr / f12, 3)
    assert len(live.pairs) >= 2
    for p in live.pairs:
        assert p.noise_figure_db == pytest.approx(1.0, abs=p.noise_figure_u95_db)
        assert p.gain_db == pytest.approx(20.0, abs=0.1)
    with pytest.raises(ParameterError, match="take a new calibration pair"):
        live.check_calibration(145e6, RATE, 35.0)
    r = live.result()
    assert r.second_stage_corrected and [r.segments[p.hot].state for p in r.pairs] == ["hot"] * len(r.pairs)


def test_terminal_calibration_pair_then_the_dut_with_a_note(tmp_path):
    """`yfactor --live --calibrate-first` as a user runs it: the first pair with the source straight into the
    receiver (NF 8 dB); at the prompt the DUT (NF 1 dB, gain 10 dB) is connected and Enter pressed; a typed
    note marks the next pair. Every DUT pair reads the DUT's NF and gain within U (second-stage correction,
    Friis 1944; the 8-bit Δ²/12 is taken out by the budget's quantisation term). Seeded stand-in: invented data."""
    import subprocess
    import sys
    import time
    sched = Schedule(seed=5, period_s=0.6, nf_db=8.0, cold_lsb=3.0, dut_gain_db=10.0, dut_nf_db=1.0)
    out = tmp_path / "cal.json"
    with StandIn(schedule=sched) as s:
        proc = subprocess.Popen(
            [sys.executable, "-m", "benchnf", "yfactor", "--live", "--calibrate-first", "--sdr", s.address,
             "--centre-hz", "145e6", "--rate", str(RATE), "--gain", "30", "--enr-db", "15", "--t-cold-k", "290",
             "--seconds", "16", "--json", str(out), "--quiet"],
            stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, bufsize=1)
        seen, pairs = [], 0
        for line in proc.stdout:
            seen.append(line.rstrip())
            if line.startswith("calibration pair kept"):
                s.insert_dut()
                time.sleep(0.4)  # the DUT in, then Enter, as a user does
                proc.stdin.write("\n")
                proc.stdin.flush()
            elif line.startswith("pair"):
                pairs += 1
                if pairs == 2:
                    proc.stdin.write("bias resistor 2k2\n")
                    proc.stdin.flush()
        rc = proc.wait(timeout=60)
        err = proc.stderr.read()
    assert rc == ExitStatus.OK, (seen, err)
    kept = next(ln for ln in seen if ln.startswith("calibration pair kept"))
    assert float(re.search(r"receiver NF ([\d.]+) dB", kept).group(1)) == pytest.approx(true_nf_db(sched), abs=0.2)
    assert any(ln.startswith("noted for the next pair: bias resistor 2k2") for ln in seen)
    d = json.loads(out.read_text())
    assert d["second_stage_corrected"] and len(d["pairs"]) >= 4
    for p in d["pairs"]:
        assert p["noise_figure_db"] == pytest.approx(1.0, abs=p["noise_figure_u95_db"])
        assert p["gain_db"] == pytest.approx(10.0, abs=0.15)
    assert any("pair 2: bias resistor 2k2" in n for n in d["notes"])
    assert [ln for ln in seen if ln.startswith("pair")][2].endswith("[bias resistor 2k2]")
