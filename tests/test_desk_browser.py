"""The bench desk in a real browser: Debian's headless Chromium driven by Selenium through chromedriver.

Nothing is downloaded: the driver's path is given and Selenium runs offline (SE_OFFLINE). The desk is a
real ``benchnf desk`` process; the live and plan tests record through the PulseAudio loopback. Captures
and signals are INVENTED DATA (the demo's, or seeded noise and tones played here).
"""

from __future__ import annotations

import io
import json
import os
import shutil
import time

import numpy as np
import pytest

pytest.importorskip("tornado")
pytest.importorskip("plotly")
webdriver = pytest.importorskip("selenium.webdriver")

from desk_helpers import demo_folder, running_desk  # noqa: E402
from loopback_helpers import DEVICE, loopback_missing, loopback_plan  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.support.ui import Select, WebDriverWait  # noqa: E402

CHROMIUM, DRIVER = shutil.which("chromium"), shutil.which("chromedriver")
_NO_BROWSER = None if CHROMIUM and DRIVER else "Debian's chromium and chromium-driver are not installed"
if _NO_BROWSER and os.environ.get("CI") == "true":
    raise RuntimeError(f"CI must run the browser tests, but: {_NO_BROWSER}")
pytestmark = pytest.mark.skipif(_NO_BROWSER is not None, reason=_NO_BROWSER or "")


@pytest.fixture(scope="module")
def browser():
    os.environ["SE_OFFLINE"] = "true"  # no driver download, no usage statistics
    from selenium.webdriver.chrome.service import Service
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for flag in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync",
                 "--window-size=1400,1600"):
        opts.add_argument(flag)
    driver = webdriver.Chrome(options=opts, service=Service(DRIVER))
    yield driver
    driver.quit()


@pytest.fixture(scope="module")
def bench(tmp_path_factory):
    return demo_folder(tmp_path_factory.mktemp("desk-browser"))


def _wait(driver, condition, seconds=30.0):
    return WebDriverWait(driver, seconds, poll_frequency=0.05).until(lambda d: condition(d))


def _open(driver, url):
    """Load the page and wait until its script has wired the buttons (body data-ready)."""
    driver.get(url)
    _wait(driver, lambda d: d.execute_script("return document.body.dataset.ready === '1'"))


def test_demo_results_show_ein_and_noise_figure(browser, bench):
    data = json.loads((bench / "results" / "results.json").read_text())
    with running_desk(bench, "--open", "results/results.json") as (_proc, url):
        _open(browser, url)
        _wait(browser, lambda d: d.find_element(By.ID, "result").get_attribute("data-ready"))
        figures = browser.find_element(By.ID, "figures").text
    assert f"{data['ein_dbu']:.2f}" in figures and "dBu" in figures  # the demo's EIN, as the JSON has it
    assert f"{data['noise_figure_db']:.2f}" in figures
    assert f"± {data['uncertainty']['ein_db']:.2f}" in figures


def _not_blank(png: bytes) -> tuple[int, float]:
    """(distinct colours, share of pixels off the background colour) of a screenshot."""
    from PIL import Image
    img = np.asarray(Image.open(io.BytesIO(png)).convert("RGB")).reshape(-1, 3)
    colours, counts = np.unique(img, axis=0, return_counts=True)
    return len(colours), 1.0 - counts.max() / counts.sum()


def test_a_result_view_draws_its_plots(browser, bench, tmp_path):
    with running_desk(bench) as (_proc, url):
        _open(browser, url)
        _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "[data-file='results/eni.json']"))
        browser.find_element(By.CSS_SELECTOR, "[data-file='results/results.json']").click()
        _wait(browser, lambda d: d.find_element(By.ID, "result").get_attribute("data-ready") == "results/results.json")
        plot = browser.find_element(By.ID, "plot-output")
        traces = browser.execute_script("return arguments[0].data.map(t => t.x.length)", plot)
        png = plot.screenshot_as_png
        (tmp_path / "output_spectrum.png").write_bytes(png)
    assert len([n for n in traces if n > 1000]) == 3  # as measured, the floor, floor subtracted (and the lines)
    colours, inked = _not_blank(png)
    assert colours > 50 and inked > 0.05, (colours, inked)


_LOOP = loopback_missing()
loopback = pytest.mark.skipif(_LOOP is not None, reason=_LOOP or "")


def _player(tone_hz: float | None, level: list[float], fs: int = 48_000):
    """An output stream into the loopback: seeded noise of the current level, plus a tone when asked."""
    import sounddevice as sd
    rng = np.random.default_rng(7)
    state = {"n": 0}

    def source(outdata, frames, _t, _status):
        x = rng.normal(0.0, level[0], frames)
        if tone_hz is not None and level[1]:
            x += level[1] * np.sin(2 * np.pi * tone_hz * (state["n"] + np.arange(frames)) / fs)
        state["n"] += frames
        outdata[:] = np.column_stack([x, x]).astype(np.float32)
    return sd.OutputStream(samplerate=fs, channels=2, dtype="float32", device=DEVICE, callback=source)


@loopback
def test_live_view_shows_a_played_tone_within_two_seconds(browser, bench):
    tone = 1234.5
    with running_desk(bench) as (_proc, url), _player(tone, [1e-4, 0.1]):
        _open(browser, url)
        browser.find_element(By.CSS_SELECTOR, "[data-view=live]").click()
        _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, f"#live-device option[value='{DEVICE}']"))
        Select(browser.find_element(By.ID, "live-device")).select_by_value(DEVICE)
        browser.find_element(By.CSS_SELECTOR, "#live-form [name=volts_per_fs]").send_keys("1.0")
        start = time.monotonic()
        browser.find_element(By.ID, "live-start").click()
        peak = _wait(browser, lambda d: d.find_element(By.ID, "live-plot").get_attribute("data-peak-hz"), 5.0)
        seen_after = time.monotonic() - start
        band = browser.find_element(By.ID, "live-band").text
        browser.find_element(By.ID, "live-stop").click()
    bin_hz = 48_000 / 8192
    print(f"tone seen at {peak} Hz after {seen_after:.2f} s")
    assert abs(float(peak) - tone) < bin_hz and seen_after < 2.0, (peak, seen_after)
    # A 0.1 FS sine at 1 V/FS is 0.0707 V RMS, 20 lg(0.0707 / 0.7746) = -20.8 dBu (dBu re 0.7746 V: common
    # practice); the band noise is dominated by it.
    assert band.endswith("dBu") and abs(float(band.split()[0]) - 20 * np.log10(0.1 / np.sqrt(2) / 0.7746)) < 0.5




@loopback
def test_a_guided_plan_runs_through_every_step(browser, bench):
    (bench / "loop_plan.toml").write_text(loopback_plan(seconds=2))
    level = [1e-5, 0.0]  # what the loopback carries follows the steps: floor, then "DUT" noise, then a tone
    with running_desk(bench) as (_proc, url), _player(1000.0, level):
        _open(browser, url)
        browser.find_element(By.CSS_SELECTOR, "[data-view=plan]").click()
        _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#plan-file option[value='loop_plan.toml']"))
        Select(browser.find_element(By.ID, "plan-file")).select_by_value("loop_plan.toml")
        browser.find_element(By.ID, "plan-open").click()
        checks = []
        for step, after in ((1, (3e-4, 0.0)), (2, (3e-4, 0.1)), (3, None)):
            _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, f"button[data-step='{step}']"))
            time.sleep(0.5)  # the new signal reaches the monitor before recording starts
            for take in (1, 2, 3):  # the loopback can drop samples under load; the check says so: record again
                stem = ("floor", "terminated", "tone")[step - 1]
                kept = f"kept: {stem}.wav" if take == 1 else f"kept: {stem}-take{take}.wav"
                browser.find_element(By.CSS_SELECTOR, f"button[data-step='{step}']").click()
                _wait(browser, lambda d: d.find_element(By.ID, "plan").get_attribute("data-busy") == "" and
                      kept in d.find_element(By.CSS_SELECTOR, f"div.step[data-step='{step}']").text)
                card = browser.find_element(By.CSS_SELECTOR, f"div.step[data-step='{step}']").text
                if "record it again" not in card:
                    break
            checks.append(card)
            if after:
                level[:] = after
        browser.find_element(By.ID, "plan-finish").click()
        _wait(browser, lambda d: d.find_element(By.ID, "result").get_attribute("data-ready"), 60)
        shown = browser.find_element(By.ID, "result").get_attribute("data-ready")
        figures = browser.find_element(By.ID, "figures").text
    assert all("checked: no problems found" in c for c in checks), checks
    results = json.loads((bench / shown).read_text())
    assert shown.startswith("loop_plan") and results["floor_corrected"] is True and results["gain_db"] > 30
    assert f"{results['gain_db']:.3f}" in figures  # the gain to 3 decimals, as every view shows it
    assert "Caution: Switch 48 V phantom power OFF" in checks[1]


def test_unit_check_shows_the_verdict_and_earlier_checks(browser, bench):
    from benchnf.check.limits import check_results
    from benchnf.check.profile import load_profile
    from benchnf.registry import read_result
    expected = check_results(read_result(bench / "results" / "results.json"),
                             load_profile(bench / "known_good_profile.toml")).verdict
    with running_desk(bench) as (_proc, url):
        _open(browser, url)
        browser.find_element(By.CSS_SELECTOR, "[data-view=check]").click()
        _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#check-source option[value='results/results.json']"))
        Select(browser.find_element(By.ID, "check-source")).select_by_value("results/results.json")
        for n in (1, 2):
            serial = browser.find_element(By.ID, "serial")
            serial.clear()
            serial.send_keys("SN-0042\n")  # a scanner types the serial and Enter
            _wait(browser, lambda d: len(d.find_elements(By.CSS_SELECTOR, "#check-detail table:last-of-type tbody tr"))
                  == n)
        verdict = browser.find_element(By.ID, "verdict")
        big = browser.execute_script("return parseFloat(getComputedStyle(arguments[0]).fontSize)", verdict)
        detail = browser.find_element(By.ID, "check-detail").text
    assert verdict.text.splitlines()[0] == expected and big >= 48
    assert detail.count(expected) >= 3  # limits and the two records of this serial
    assert "Checks of SN-0042 in the records" in detail


def test_the_station_study_page_shows_the_study(browser, tmp_path):
    from test_grr import _study_records
    db = str(tmp_path / "r.db")
    _study_records(db)
    (tmp_path / "folder").mkdir()
    with running_desk(tmp_path / "folder", "--records", db) as (_proc, url):
        _open(browser, url)
        browser.find_element(By.CSS_SELECTOR, "[data-view=gauge]").click()
        _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#gauge-figure option[value='ein_dbu']"))
        browser.find_element(By.ID, "gauge-run").click()
        _wait(browser, lambda d: d.find_element(By.ID, "gauge-detail").get_attribute("data-ready") == "ein_dbu")
        text = browser.find_element(By.ID, "gauge-detail").text
        png = browser.get_screenshot_as_png()
        if os.environ.get("BENCHNF_SCREENSHOTS"):
            (tmp_path / "gauge.png").write_bytes(png)
            print("screenshot:", tmp_path / "gauge.png")
        plots = browser.find_elements(By.CSS_SELECTOR, "#gauge-detail .js-plotly-plot")
    assert "gauge R&R" in text and "number of distinct categories" in text and "repeatability" in text
    assert len(plots) == 2
    colours, off = _not_blank(png)
    assert colours > 20 and off > 0.05


def _start_live(browser, url, **fields):
    """Open the live view on the loopback at 1 V per full scale, fill `fields` in, start it."""
    _open(browser, url)
    browser.find_element(By.CSS_SELECTOR, "[data-view=live]").click()
    _wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, f"#live-device option[value='{DEVICE}']"))
    Select(browser.find_element(By.ID, "live-device")).select_by_value(DEVICE)
    browser.find_element(By.CSS_SELECTOR, "#live-form [name=volts_per_fs]").send_keys("1.0")
    for name, value in fields.items():
        browser.find_element(By.CSS_SELECTOR, f"#live-form [name={name}]").send_keys(value)
    browser.find_element(By.ID, "live-start").click()


@loopback
def test_live_cross_spectrum_mode_measures_under_each_input(browser, bench, tmp_path):
    # Played (INVENTED DATA): a common noise (the "DUT") and, on each channel, its own noise 10 dB above it.
    import sounddevice as sd
    rng = np.random.default_rng(31)
    sigma = 3e-4

    def source(outdata, frames, _t, _status):
        common = rng.normal(0.0, sigma, frames)
        outdata[:] = np.column_stack([common + rng.normal(0.0, sigma * np.sqrt(10), frames),
                                      common + rng.normal(0.0, sigma * np.sqrt(10), frames)]).astype(np.float32)
    with running_desk(bench) as (_proc, url), sd.OutputStream(samplerate=48_000, channels=2, dtype="float32",
                                                               device=DEVICE, callback=source):
        _start_live(browser, url, cross_channel="1")
        _wait(browser, lambda d: d.find_element(By.ID, "live-plot").get_attribute("data-resolved") == "true", 20.0)
        time.sleep(3.0)  # a few more seconds of averaging
        band = browser.find_element(By.ID, "live-band").text
        legend = browser.find_element(By.ID, "live-plot").text
        browser.save_screenshot(str(tmp_path / "live_cross.png"))
        browser.find_element(By.ID, "live-stop").click()
    print(f"band reading {band!r}; screenshot {tmp_path / 'live_cross.png'}")
    level, u = float(band.split()[0]), float(band.split("±")[1].split()[0])
    # White noise of variance s² over 20 Hz-20 kHz at 48 kHz: s sqrt(2 * 19980 / 48000) RMS (common practice);
    # dBu re 0.7746 V.
    truth = 20 * np.log10(sigma * np.sqrt(2 * 19_980 / 48_000) / 0.7746)
    assert abs(level - truth) <= u + 0.1, (band, truth)
    assert "first input alone" in legend and "one bin resolves" in legend


@loopback
def test_live_reference_mode_shows_the_share_through_the_reference(browser, bench):
    # Played (INVENTED DATA): channel 1 a "rail" noise; channel 0 its own noise plus half the rail, so that half
    # of its power is coherent with channel 1 (share g² s_r² / (s_o² + g² s_r²) = 0.5).
    import sounddevice as sd
    rng = np.random.default_rng(32)

    def source(outdata, frames, _t, _status):
        rail = rng.normal(0.0, 2e-3, frames)
        outdata[:] = np.column_stack([rng.normal(0.0, 1e-3, frames) + 0.5 * rail, rail]).astype(np.float32)
    with running_desk(bench) as (_proc, url), sd.OutputStream(samplerate=48_000, channels=2, dtype="float32",
                                                               device=DEVICE, callback=source):
        _start_live(browser, url, reference_channel="1")
        _wait(browser, lambda d: d.find_element(By.ID, "live-plot").get_attribute("data-share"), 10.0)
        time.sleep(3.0)
        share = float(browser.find_element(By.ID, "live-plot").get_attribute("data-share"))
        legend = browser.find_element(By.ID, "live-plot").text
        caption = browser.find_element(By.ID, "live-avg").text
        browser.find_element(By.ID, "live-stop").click()
    assert share == pytest.approx(0.5, abs=0.03), share
    assert "coherent with the reference" in legend and "without the reference" in legend
    assert "% of the band noise coherent with the reference" in caption


def test_a_cross_spectrum_result_with_a_reference_shows_where_the_noise_comes_from(browser, tmp_path):
    # A two-input recording with a rail channel (INVENTED DATA, test_attribution's generator), analysed with
    # --cross and --reference-channel into the desk's folder: its view re-runs the analysis for its spectra and
    # shows the attribution table and the coherence plot.
    from benchnf.cli import main
    from test_attribution import _cross_with_rail
    folder = tmp_path / "bench"
    folder.mkdir()
    _cross_with_rail(folder / "split.wav", 16)
    assert main(["analyze", "--terminated", str(folder / "split.wav"), "--cross", "--cross-volts-per-fs", "1e-2",
                 "--volts-per-fs", "1e-2", "--reference-channel", "2=rail", "--gain-db", "40", "--rs", "200",
                 "--temperature-k", "290", "--json", str(folder / "cross.json"), "--quiet"]) == 0
    with running_desk(folder, "--open", "cross.json") as (_proc, url):
        _open(browser, url)
        _wait(browser, lambda d: d.find_element(By.ID, "result").get_attribute("data-ready"))
        _wait(browser, lambda d: d.find_elements(By.ID, "plot-coherence"), 30.0)
        text = browser.find_element(By.ID, "result").text
        browser.save_screenshot(str(tmp_path / "cross_result.png"))
    print(f"screenshot {tmp_path / 'cross_result.png'}")
    assert "Where the output noise comes from" in text and "rail" in text
    assert "cross-spectrum of channels 0 and 1" in text


def _start_tuning(browser, url, address, **more):
    """Open the noise-figure view and start it on a stand-in receiver (1.024 MS/s, gain 30 dB, ENR 15 dB)."""
    _open(browser, url)
    browser.find_element(By.CSS_SELECTOR, ".rail button[data-view='tuning']").click()
    form = browser.find_element(By.ID, "tuning-form")
    for name, value in (("address", address), ("centre_mhz", "145"), ("rate_hz", "1024000"),
                        ("gain_db", "30"), ("enr_db", "15"), *more.items()):
        box = form.find_element(By.NAME, name)
        box.clear()
        box.send_keys(value)
    browser.find_element(By.ID, "tuning-start").click()


def _tuning_pairs(driver) -> int:
    return int(driver.execute_script("return document.body.dataset.tuningPairs || '0'"))


def test_noise_figure_mode_follows_a_step_from_a_stand_in_receiver(browser, bench, tmp_path):
    # A stand-in rtl_tcp server (INVENTED DATA, tests/rtl_tcp_standin.py): the source switched by hand every
    # ~0.6 s; the system NF steps from 3 to 2 dB 5 s in (a trimmer turned). Truth as in tests/test_sdr.py.
    from rtl_tcp_standin import Schedule, StandIn
    from test_sdr import true_nf_db
    sched = Schedule(seed=9, period_s=0.6, step_at_s=5.0, nf_after_db=2.0)
    with StandIn(schedule=sched) as standin, running_desk(bench) as (_proc, url):
        _start_tuning(browser, url, standin.address)
        _wait(browser, lambda d: _tuning_pairs(d) >= 2, 20.0)
        first = browser.find_element(By.ID, "tuning-nf").text
        browser.find_element(By.ID, "tuning-note").send_keys("trimmer C3 half a turn")
        browser.find_element(By.ID, "tuning-mark").click()
        _wait(browser, lambda d: _tuning_pairs(d) >= 7, 30.0)
        latest = browser.find_element(By.ID, "tuning-nf").text
        state = browser.execute_script("return fetch('/api/tuning/state').then(r => r.json())")
        png = browser.find_element(By.ID, "tuning-time").screenshot_as_png
        (tmp_path / "tuning_time.png").write_bytes(png)
        browser.find_element(By.ID, "tuning-stop").click()
    nf0, u0 = (float(v) for v in first.replace("dB", "").split("±"))
    nf1, u1 = (float(v) for v in latest.replace("dB", "").split("±"))
    assert nf0 == pytest.approx(true_nf_db(sched), abs=u0 + 0.01)  # the text has two decimals
    assert nf1 == pytest.approx(true_nf_db(sched, 2.0), abs=u1 + 0.01)
    assert any(p["mark"] == "trimmer C3 half a turn" for p in state["pairs"])
    colours, inked = _not_blank(png)
    assert colours > 20 and inked > 0.02, (colours, inked)


def test_noise_figure_mode_calibration_pair_then_the_dut(browser, bench, tmp_path):
    # The stand-in receiver alone (NF 8 dB) for the calibration pair, then a DUT (NF 1 dB, gain 10 dB)
    # connected ahead of it and detection restarted: every later pair is the DUT's own, corrected by the
    # kept pair (F1 = F12 - (F2 - 1)/G1, Friis 1944). Seeded stand-in: INVENTED DATA.
    from rtl_tcp_standin import Schedule, StandIn
    sched = Schedule(seed=11, period_s=0.6, nf_db=8.0, cold_lsb=3.0, dut_gain_db=10.0, dut_nf_db=1.0)
    with StandIn(schedule=sched) as standin, running_desk(bench) as (_proc, url):
        _start_tuning(browser, url, standin.address)
        _wait(browser, lambda d: d.execute_script("return fetch('/api/tuning/state').then(r => r.json())")
              .get("running"), 10.0)
        browser.find_element(By.ID, "tuning-cal").click()
        _wait(browser, lambda d: d.find_element(By.ID, "tuning-cal-state").text.startswith("corrected"), 20.0)
        kept = browser.find_element(By.ID, "tuning-cal-state").text
        standin.insert_dut()
        time.sleep(0.4)  # the DUT in, then detection restarted, as a user does
        before = _tuning_pairs(browser)
        browser.find_element(By.ID, "tuning-restart").click()
        _wait(browser, lambda d: _tuning_pairs(d) >= before + 3, 30.0)
        state = browser.execute_script("return fetch('/api/tuning/state').then(r => r.json())")
        gain_text = browser.find_element(By.ID, "tuning-gain").text
        (tmp_path / "tuning_cal.png").write_bytes(browser.find_element(By.ID, "tuning-readouts").screenshot_as_png)
        browser.find_element(By.ID, "tuning-stop").click()
    assert "receiver NF 8." in kept and "gain 30" in kept
    assert state["calibration"]["receiver_nf_db"] == pytest.approx(8.0, abs=0.2)
    dut = state["pairs"][before:]
    assert len(dut) >= 3
    for p in dut:
        assert p["nf_db"] == pytest.approx(1.0, abs=p["u95_db"])
        assert p["gain_db"] == pytest.approx(10.0, abs=0.15)
    assert float(gain_text.split()[0]) == pytest.approx(10.0, abs=0.15) and gain_text.endswith("dB")


@loopback
def test_noise_figure_mode_keys_the_source_from_a_sound_card_output(browser, bench):
    # The keying tone played through the real PortAudio/PulseAudio loopback while the stand-in receiver
    # (INVENTED DATA) streams; the page says the source is keyed, and from which output.
    from rtl_tcp_standin import Schedule, StandIn
    with StandIn(schedule=Schedule(seed=13, period_s=0.6)) as standin, running_desk(bench) as (_proc, url):
        _start_tuning(browser, url, standin.address, drive=DEVICE, drive_state_s="0.5")
        _wait(browser, lambda d: _tuning_pairs(d) >= 2, 20.0)
        state = browser.execute_script("return fetch('/api/tuning/state').then(r => r.json())")
        said = browser.find_element(By.ID, "tuning-warn").text
        header = browser.find_element(By.ID, "audio-state").text
        # the sound card is held: a live view may not take it meanwhile
        refused = browser.execute_script("return api('live/start', {}).then(() => 'started', e => e.message)")
        browser.find_element(By.ID, "tuning-stop").click()
        _wait(browser, lambda d: not d.execute_script("return fetch('/api/tuning/state').then(r => r.json())")
              .get("running"), 10.0)
        _wait(browser, lambda d: d.find_element(By.ID, "audio-state").text == "sound card idle", 10.0)
    assert state["keying"]["state_s"] == 0.5 and state["keying"]["states_played"] >= 2
    assert "keying from" in said and DEVICE in said
    assert header == "sound card: the noise-source keying"
    assert "busy with the noise-source keying" in refused
