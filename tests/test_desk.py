"""The bench desk over HTTP: a real ``benchnf desk`` process, its guard, its refusals, its views.

Figures shown are compared with the results JSON the command line wrote (the desk computes nothing of
its own). The captures are the demo's (INVENTED DATA).
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import urllib.request

import pytest

pytest.importorskip("tornado")
pytest.importorskip("plotly")

from desk_helpers import call, demo_folder, running_desk  # noqa: E402


@pytest.fixture(scope="module")
def bench(tmp_path_factory):
    return demo_folder(tmp_path_factory.mktemp("desk"))


@pytest.fixture(scope="module")
def desk(bench):
    with running_desk(bench) as (proc, url):
        yield url


def test_state_and_listing(desk, bench):
    status, state = call(desk, "/api/state")
    assert status == 200 and state["folder"] == str(bench.resolve())
    assert set(state["cautions"]) == {"phantom", "speaker", "valve", "mains", "hot-load", "cold-load", "split", "rail-probe"}
    _, files = call(desk, "/api/files?kind=results")
    assert "results/results.json" in files["files"] and "results/calibration.json" not in files["files"]
    _, profiles = call(desk, "/api/files?kind=profiles")
    assert profiles["files"] == ["known_good_profile.toml"]
    _, units = call(desk, "/api/files?kind=units")
    assert units["files"] == [*(f"known_good/KG-0{i}" for i in range(1, 5)), "units/HA-0001", "units/HA-0002",
                              "units/HA-0003"]


def test_result_view_shows_the_results_figures(desk, bench):
    data = json.loads((bench / "results" / "results.json").read_text())
    status, view = call(desk, "/api/result?path=results/results.json")
    assert status == 200
    shown = {f["key"]: f for f in view["headline"]}
    assert shown["ein_dbu"]["value"] == f"{data['ein_dbu']:.2f}" and shown["ein_dbu"]["unit"] == "dBu"
    assert shown["ein_dbu"]["u"] == f"± {data['uncertainty']['ein_db']:.2f} dB"
    assert shown["noise_figure_db"]["value"] == f"{data['noise_figure_db']:.2f}"
    assert [p["id"] for p in view["plots"]] == ["output", "input", "nf"]  # spectra re-run from the captures
    nf = view["plots"][2]["traces"][0]
    spot = {round(r["freq_hz"]): r["noise_figure_db"] for r in data["spot"]}
    i = min(range(len(nf["x"])), key=lambda k: abs(nf["x"][k] - 1000.0))
    assert abs(nf["y"][i] - spot[1000]) < 1.5  # one bin against the 1/3-octave spot value
    assert "results/summary.txt" in view["downloads"]


def test_a_result_whose_captures_are_gone_says_why_no_spectra(desk, bench):
    data = json.loads((bench / "results" / "results.json").read_text())
    data["files"] = {**data["files"], "terminated": str(bench / "no-such.flac")}
    (bench / "moved").mkdir(exist_ok=True)
    (bench / "moved" / "results.json").write_text(json.dumps(data))
    status, view = call(desk, "/api/result?path=moved/results.json")
    # without its captures: the one-third-octave values the JSON holds, no spectra
    assert status == 200 and [p["id"] for p in view["plots"]] == ["input", "nf"]
    assert any(n.startswith("spectra not shown: ") and "no-such.flac" in n for n in view["notes"])


@pytest.mark.parametrize("name", ["yfactor_bath.json", "eni.json", "budget.json"])
def test_other_result_kinds(desk, bench, name):
    status, view = call(desk, f"/api/result?path=results/{name}")
    assert status == 200 and view["plots"] and view["headline"]
    assert all(t["x"] for p in view["plots"] for t in p["traces"])


@pytest.mark.parametrize("path", ["../outside.json", "/etc/passwd", "results/../../outside.json", "escape/x.json"])
def test_paths_outside_the_folder_are_refused(desk, bench, path):
    (bench.parent / "outside.json").write_text("{}")
    if not (bench / "escape").exists():
        (bench / "escape").symlink_to(bench.parent)  # a link inside that points out
    for api in ("/api/result?path=", "/api/download?path="):
        status, answer = call(desk, api + urllib.request.quote(path))
        assert status == 403 and "outside the desk's folder" in answer["error"], (api, path, answer)
    status, answer = call(desk, "/api/plan/open", {"path": path})
    assert status == 403


def test_download_inside_the_folder(desk, bench):
    req = urllib.request.urlopen(desk.rstrip("/") + "/api/download?path=results/results.json")
    assert req.read() == (bench / "results" / "results.json").read_bytes()
    assert "attachment" in req.headers["Content-Disposition"]


def test_changes_need_the_desk_header(desk):
    status, answer = call(desk, "/api/live/stop", {}, desk_header=False)
    assert status == 403 and "X-Benchnf-Desk" in answer["error"]


def test_a_foreign_host_name_is_refused_on_loopback(desk):
    status, answer = call(desk, "/api/state", headers={"Host": "attacker.example:80"})
    assert status == 403 and "loopback" in answer["error"]


def test_other_addresses_need_the_token(bench):
    with running_desk(bench, "--host", "0.0.0.0") as (_proc, url):
        assert "?token=" in url
        token = url.split("?token=")[1]
        port = url.split(":")[2].split("/")[0]
        plain = f"http://127.0.0.1:{port}/"
        for path in ("", "api/state", "static/desk.js", "vendor/plotly.min.js"):
            status, answer = call(plain, "/" + path)
            assert status == 403 and "token" in answer.get("error", ""), path
        assert call(plain, f"/api/state?token={'x' * len(token)}")[0] == 403
        with urllib.request.urlopen(f"{plain}?token={token}") as r:
            assert r.status == 200
            cookie = r.headers["Set-Cookie"].split(";")[0]
        assert call(plain, "/api/state", headers={"Cookie": cookie})[0] == 200


def test_bad_plan_and_profile_give_one_clear_message(desk, bench):
    (bench / "broken_plan.toml").write_text('name = "x"\n[[step]]\ncondition = "warm"\nseconds = 1\n')
    status, answer = call(desk, "/api/plan/open", {"path": "broken_plan.toml"})
    assert status == 400 and "condition 'warm'" in answer["error"] and "\n" not in answer["error"]
    (bench / "broken_profile.toml").write_text("name = [\n")
    status, answer = call(desk, "/api/check", {"serial": "SN1", "source": "results/results.json",
                                                "profile": "broken_profile.toml"})
    assert status == 400 and "broken_profile.toml" in answer["error"]
    status, answer = call(desk, "/api/check", {"serial": "../x", "source": "results/results.json",
                                                "profile": "known_good_profile.toml"})
    assert status == 400 and "serial" in answer["error"]


def test_check_is_recorded_and_listed(desk, bench):
    from benchnf.check.limits import check_results
    from benchnf.check.profile import load_profile
    from benchnf.registry import read_result
    expected = check_results(read_result(bench / "results" / "results.json"),
                             load_profile(bench / "known_good_profile.toml")).verdict
    before = set((bench / "checks").iterdir()) if (bench / "checks").exists() else set()
    body = {"serial": "SN-7", "source": "results/results.json", "profile": "known_good_profile.toml"}
    status, out = call(desk, "/api/check", body)
    assert status == 200 and out["verdict"] == expected and out["recorded"] is True
    assert {row[0] for row in out["limits"]["rows"]} >= {"gain"}
    first_page = (bench / out["report"]).read_bytes()
    status, again = call(desk, "/api/check", body)  # checked again at once: a new page, the first one untouched
    assert status == 200 and again["report"] != out["report"]
    assert (bench / out["report"]).read_bytes() == first_page
    assert len(set((bench / "checks").iterdir()) - before) == 2
    _, earlier = call(desk, "/api/checks?serial=SN-7")
    assert [e["verdict"] for e in earlier] == [expected] * len(earlier) and len(earlier) >= 2


def test_upload_keeps_files_and_never_replaces_one(desk, bench):
    def upload(name, data):
        req = urllib.request.Request(desk.rstrip("/") + f"/api/upload?name={name}", data=data, method="POST",
                                     headers={"X-Benchnf-Desk": "1"})
        try:
            with urllib.request.urlopen(req) as r:
                return r.status, json.loads(r.read())
        except urllib.error.HTTPError as err:
            return err.code, json.loads(err.read() or b"{}")
    import urllib.error
    assert upload("plan.toml", b"a = 1\n") == (200, {"saved": "uploads/plan.toml"})
    status, answer = upload("plan.toml", b"b = 2\n")
    assert status == 400 and "exists" in answer["error"]
    assert (bench / "uploads" / "plan.toml").read_bytes() == b"a = 1\n"
    status, _ = upload("..", b"x")
    assert status == 400


def test_an_upload_over_the_limit_is_refused(desk):
    import http.client

    from benchnf.desk.server import UPLOAD_LIMIT
    host, port = desk.split("//")[1].split("/")[0].split(":")
    conn = http.client.HTTPConnection(host, int(port), timeout=10)
    conn.putrequest("POST", "/api/upload?name=big.wav")
    conn.putheader("X-Benchnf-Desk", "1")
    conn.putheader("Content-Length", str(UPLOAD_LIMIT + 1))
    conn.endheaders()
    assert conn.getresponse().status in (400, 413)


def _desk_exit(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchnf", "desk", "--no-browser", *args], capture_output=True,
                          text=True, timeout=60)


def test_a_port_in_use_is_one_line_exit_2(tmp_path):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        s.listen()
        r = _desk_exit("--folder", str(tmp_path), "--port", str(s.getsockname()[1]))
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "in use" in r.stderr


@pytest.mark.parametrize("args, words", [
    (["--folder", "/no/such/folder"], "is not a folder"),
    (["--port", "70000"], "not a TCP port"),
    (["--open", "../elsewhere.json"], "outside the desk's folder"),
    (["--open", "missing.json"], "no such results file"),
    (["--host", "no-such-host.invalid"], "--host"),
])
def test_bad_start_is_one_line_exit_2(tmp_path, args, words):
    r = _desk_exit(*(["--folder", str(tmp_path)] if "--folder" not in args else []), *args, "--port", "0") \
        if "--port" not in args else _desk_exit("--folder", str(tmp_path), *args)
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and words in r.stderr, r.stderr
    assert r.stdout == ""


def test_a_read_only_folder_is_refused(mount_tmpfs):
    folder = mount_tmpfs("ro", "1m")
    subprocess.run(["mount", "-o", "remount,ro", str(folder)], check=True)
    r = _desk_exit("--folder", str(folder), "--port", "0")
    assert r.returncode == 2 and "is not writable" in r.stderr and r.stderr.count("\n") == 1


def test_live_without_a_sound_card_says_so(desk, monkeypatch):
    if os.environ.get("PULSE_RUNTIME_PATH"):
        status, answer = call(desk, "/api/live/start", {"device": "no such input device"})
    else:
        status, answer = call(desk, "/api/live/start", {})
    assert status == 400 and answer["error"] and "\n" not in answer["error"]


@pytest.mark.parametrize("field, value, words", [
    ("rate_hz", "fast", "not a number"), ("band_lo_hz", "30000", "must be below"), ("weighting", "B", "weighting"),
    ("channel", "-1", "outside"), ("channel", "64", "outside"), ("gain_db", "1e9", "outside")])
def test_live_settings_are_checked(desk, field, value, words):
    status, answer = call(desk, "/api/live/start", {field: value})
    assert status == 400 and words in answer["error"]


_LOOP = __import__("loopback_helpers").loopback_missing()


@pytest.mark.skipif(_LOOP is not None, reason=_LOOP or "")
def test_one_recording_at_a_time(desk, bench):
    (bench / "busy_plan.toml").write_text('name = "busy"\ndevice = "pulse"\n[[step]]\ncondition = "floor"\n'
                                          'seconds = 3\n[[step]]\ncondition = "terminated"\nseconds = 1\n')
    status, plan = call(desk, "/api/plan/open", {"path": "busy_plan.toml"})
    assert status == 200 and plan["steps"][1]["cautions"]  # the terminated step carries the phantom caution
    assert call(desk, "/api/plan/record", {"step": 2})[1]["error"].startswith("record step 1 first")
    assert call(desk, "/api/plan/record", {"step": 1})[0] == 200
    status, answer = call(desk, "/api/live/start", {"device": "pulse"})
    assert status == 400 and "busy with step 1 of the plan" in answer["error"]
    status, answer = call(desk, "/api/plan/record", {"step": 1})
    assert status == 400 and "still recording" in answer["error"]
    assert call(desk, "/api/state")[1]["audio"] == "step 1 of the plan"
    deadline = time.monotonic() + 20
    while call(desk, "/api/plan/state")[1]["busy"] is not None and time.monotonic() < deadline:
        time.sleep(0.2)
    state = call(desk, "/api/plan/state")[1]
    assert state["steps"][0]["takes"] == ["floor.wav"] and state["error"] is None
    assert call(desk, "/api/live/start", {"device": "pulse"})[0] == 200  # the card is free again
    status, answer = call(desk, "/api/plan/record", {"step": 2})
    assert status == 400 and "busy with the live view" in answer["error"]
    assert call(desk, "/api/live/stop", {})[0] == 200


def test_a_folder_of_captures_is_analysed_as_the_command_line_would(desk, bench, tmp_path):
    from benchnf.cli import main
    status, out = call(desk, "/api/analyse", {"folder": "units/HA-0001", "calibration": "results/calibration.json"})
    assert status == 200 and out["results"] == "units/HA-0001/analysis/results.json"
    written = bench / "units" / "HA-0001" / "analysis"
    assert sorted(p.name for p in written.iterdir()) == ["report.html", "results.json", "spectra.csv", "summary.txt"]
    unit = bench / "units" / "HA-0001"
    cli_csv = tmp_path / "cli.csv"
    assert main(["analyze", "--terminated", str(unit / "terminated.flac"), "--tone", str(unit / "tone.flac"),
                 "--calibration", str(bench / "results" / "calibration.json"), "--spectra", str(cli_csv),
                 "--quiet"]) == 0
    assert (written / "spectra.csv").read_text() == cli_csv.read_text()  # every bin, every column
    ours = json.loads((written / "results.json").read_text())
    status, view = call(desk, "/api/result?path=" + out["results"])
    assert view["exports"] == ["csv", "html"]
    assert {f["key"]: f["value"] for f in view["headline"]}["gain_db"] == f"{ours['gain_db']:.3f}"
    status, again = call(desk, "/api/analyse", {"folder": "units/HA-0001", "calibration": "results/calibration.json"})
    assert status == 200 and again["results"] == "units/HA-0001/analysis-2/results.json"  # never over the first


def test_exports_are_made_on_request_for_analyses_only(desk, bench):
    with urllib.request.urlopen(desk.rstrip("/") + "/api/export?form=html&path=results/results.json") as r:
        page = r.read().decode()
    assert "<table>" in page and "data:image/png;base64," in page and "EIN" in page
    status, answer = call(desk, "/api/export?form=csv&path=results/eni.json")
    assert status == 400 and "gain-method results only" in answer["error"]


def test_live_gain_can_come_from_a_measured_result(bench):
    from benchnf.desk.folder import DeskFolder
    from benchnf.desk.handlers import live_settings
    from benchnf.errors import BenchError
    data = json.loads((bench / "results" / "results.json").read_text())
    folder = DeskFolder(bench)
    s = live_settings({"gain_from": "results/results.json", "calibration": "results/calibration.json",
                       "averages": "0", "channel": "2", "weighting": "A"}, folder)
    assert s.gain_db == data["gain_db"] and s.volts_per_fs == data["volts_per_fs"]
    assert s.averages is None and s.channel == 2 and s.weighting == "A"  # channels count from 0 everywhere
    with pytest.raises(BenchError, match="not both"):
        live_settings({"gain_from": "results/results.json", "gain_db": "20"}, folder)


def test_without_portaudio_the_page_says_what_to_install(bench, tmp_path):
    shim = tmp_path / "shim"
    shim.mkdir()
    (shim / "sounddevice.py").write_text('raise OSError("PortAudio library not found")\n')
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(shim), os.environ.get("PYTHONPATH", "")])}
    old = dict(os.environ)
    os.environ.update(env)
    try:
        with running_desk(bench) as (_proc, url):
            status, answer = call(url, "/api/devices")
            started = call(url, "/api/live/start", {})
    finally:
        os.environ.clear()
        os.environ.update(old)
    assert status == 400 and "PortAudio library not found" in answer["error"] and "benchnf[audio]" in answer["error"]
    assert started[0] == 400 and "benchnf[audio]" in started[1]["error"]


def _golden_results():
    from pathlib import Path
    folder = Path(__file__).parent / "golden" / "expected"
    for p in sorted(folder.glob("*.json.golden")):
        data = json.loads(p.read_text())
        if isinstance(data, dict) and data.get("kind") in ("analysis", "yfactor", "eni", "budget", "cascade"):
            yield p


@pytest.mark.parametrize("golden", list(_golden_results()), ids=lambda p: p.name)
def test_every_recorded_result_shape_has_a_view(golden, tmp_path):
    """The results the golden runs wrote (repeats, 468 quasi-peak, losses, three Rs, ...) all show, with
    their headline figures as the JSON has them; their captures are not here, and the view says so."""
    from benchnf.desk.folder import DeskFolder
    from benchnf.desk.views import result_view
    copy = tmp_path / "r.json"
    copy.write_text(golden.read_text())
    data = json.loads(copy.read_text())
    view = result_view(copy, "r.json", DeskFolder(tmp_path))
    assert view["kind"] == data["kind"] and view["plots"] and view["headline"]
    key = {"analysis": "ein_dbu", "yfactor": "noise_figure_db", "eni": "en_at_1khz_v_per_rthz",
           "budget": "measured_noise_figure_db", "cascade": "noise_figure_db"}[data["kind"]]
    scale = 1e9 if key.endswith("rthz") else 1.0
    digits = 3 if key.endswith("rthz") or data["kind"] == "cascade" else 2
    assert f"{data[key] * scale:.{digits}f}" in [f["value"] for f in view["headline"]]
    if data["kind"] == "analysis":
        assert any(n.startswith("spectra not shown") for n in view["notes"]) and view["exports"] == ["html"]
    json.dumps(view, allow_nan=False)  # what the page receives is valid JSON


@pytest.mark.skipif(_LOOP is not None, reason=_LOOP or "")
def test_a_channel_the_device_lacks_is_refused(desk):
    status, answer = call(desk, "/api/live/start", {"device": "pulse", "channel": "63"})
    assert status == 400 and "channel 63 does not exist" in answer["error"]
    assert call(desk, "/api/state")[1]["audio"] is None  # nothing left holding the card


def test_no_file_named_is_bad_input_not_a_refusal(desk):
    for path in ("/api/result?path=", "/api/download?path="):
        status, answer = call(desk, path)
        assert status == 400 and "no file named" in answer["error"]


# -- every result kind, as the page receives it --------------------------------------------------------------
_RAW = __import__("re").compile(r"\b(True|False|None|nan|inf)\b|\b[a-z0-9]+_(db|dbu|dbv|hz|ohm|k|vrms|v_per_rthz|"
                                r"a_per_rthz|fs)\b")
#: The figures that carry an expanded uncertainty in each kind's results (where the result has them).
_WITH_U = {"analysis": ("gain_db", "ein_dbu", "noise_figure_db", "nf_at_1khz_db", "input_density_at_1khz_v_per_rthz",
                        "output_noise_vrms", "voltage_noise_at_1khz_v_per_rthz", "flicker_corner_hz"),
           "yfactor": ("noise_figure_db", "noise_temperature_k", "system_noise_figure_db", "gain_db",
                       "receiver_noise_figure_db"),
           "eni": ("en_at_1khz_v_per_rthz", "in_at_1khz_a_per_rthz", "ropt_at_1khz_ohm", "nfmin_at_1khz_db"),
           "budget": ("measured_noise_figure_db",), "cascade": ()}


def _words(view):
    """Every text the page shows of a view (not file names, which may hold underscores)."""
    yield from (v for _k, v in view["conditions"] if ".flac" not in v and ".sigmf" not in v)
    for h in view["headline"]:
        yield from (h["label"], h["value"], h["unit"], h["u"], h["note"])
    for t in view["tables"]:
        yield from t["columns"]
        yield from (c for row in t["rows"] for c in row if ".flac" not in c and ".wav" not in c)


def _check_view(view, name):
    for p in view["plots"]:
        for t in p["traces"]:
            assert any(y is not None for y in t["y"]), (name, p["id"], t["name"])  # no empty trace
    raw = [w for w in _words(view) if _RAW.search(w)]
    assert not raw, (name, raw)
    for h in view["headline"]:
        if h["key"] in _WITH_U[view["kind"]] and h["value"] != "-":
            assert h["u"].startswith("± "), (name, h)


@pytest.mark.parametrize("name", ["results.json", "eni.json", "budget.json", "yfactor_vhf.json", "yfactor_bath.json"])
def test_every_demo_result_reads_well(desk, name):
    status, view = call(desk, f"/api/result?path=results/{name}")
    assert status == 200
    _check_view(view, name)


@pytest.mark.parametrize("golden", list(_golden_results()), ids=lambda p: p.name)
def test_every_golden_result_reads_well(golden, tmp_path):
    from benchnf.desk.folder import DeskFolder
    from benchnf.desk.views import result_view
    copy = tmp_path / "r.json"
    copy.write_text(golden.read_text())
    _check_view(result_view(copy, "r.json", DeskFolder(tmp_path)), golden.name)


@pytest.mark.parametrize("floor", [None, "floor.flac"])
def test_the_desk_checks_each_demo_unit_as_batch_does(desk, bench, tmp_path, floor):
    """The same unit folder, the same profile and calibration, the same floor (or none): the same verdict and the
    same figures from the desk's unit check as from 'benchnf batch'."""
    from benchnf.cli import main
    args = ["batch", str(bench / "units"), "--profile", str(bench / "known_good_profile.toml"), "--calibration",
            str(bench / "results" / "calibration.json"), "--workers", "1", "--quiet", "-o", str(tmp_path / "b")]
    main([*args, *(["--floor", str(bench / floor)] if floor else [])])
    rows = {r.split(",")[0]: r.split(",") for r in (tmp_path / "b" / "summary.csv").read_text().splitlines()[1:]}
    for unit in ("HA-0001", "HA-0002", "HA-0003"):
        body = {"serial": unit, "source": f"units/{unit}", "profile": "known_good_profile.toml",
                "calibration": "results/calibration.json", **({"floor": floor} if floor else {})}
        status, out = call(desk, "/api/check", body)
        if floor is None:  # the profile's units had their floor subtracted: both refuse a unit without one
            assert status == 400 and "without the analyzer floor subtracted" in out["error"], out
            assert rows[unit][1] == "ERROR"
            continue
        assert status == 200, out
        assert out["verdict"] == rows[unit][1], (unit, out["verdict"], rows[unit])
        assert out["floor_corrected"] is (floor is not None)
        ein = next(r for r in out["limits"]["rows"] if r[0].startswith("EIN"))
        assert ein[1] == f"{float(rows[unit][3]):.2f} dBu"  # the EIN batch wrote, as the desk shows it
