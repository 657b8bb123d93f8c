"""The bench desk: live updates per second and server CPU at 48, 96 and 192 kHz; time to the demo's
results on screen; server memory over a long live view.

Needs the PulseAudio loopback (.ci/pulse-loopback.sh), Debian's chromium and chromedriver. A desk runs
as its own process on a copy of the demo captures (INVENTED DATA); seeded noise and a 1 kHz tone are
played into the loopback while the live view runs. Updates are counted where they are drawn: in
headless Chromium. Server CPU is the desk process's user + system time over wall time (/proc).
Targets (issue "the bench desk"): >= 10 updates per second at 96 kHz with the server under 50 % of one
core; memory flat over an hour.

Run: python benchmarks/bench_desk.py [--seconds 10] [--memory-minutes 60]
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from desk_helpers import call, demo_folder, running_desk  # noqa: E402


def cpu_seconds(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def browser():
    os.environ["SE_OFFLINE"] = "true"
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service
    opts = webdriver.ChromeOptions()
    opts.binary_location = "/usr/bin/chromium"
    for flag in ("--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--window-size=1400,1000"):
        opts.add_argument(flag)
    return webdriver.Chrome(options=opts, service=Service("/usr/bin/chromedriver"))


def player(fs: int):
    import numpy as np
    import sounddevice as sd
    rng = np.random.default_rng(3)
    n = [0]

    def source(outdata, frames, _t, _s):
        x = rng.normal(0, 1e-3, frames) + 0.05 * np.sin(2 * np.pi * 1000 * (n[0] + np.arange(frames)) / fs)
        n[0] += frames
        outdata[:] = np.column_stack([x, x]).astype(np.float32)
    return sd.OutputStream(samplerate=fs, channels=2, dtype="float32", device="pulse", callback=source)


def live_rate(driver, url: str, pid: int, rate: int, seconds: float) -> tuple[float, float]:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select
    from selenium.webdriver.support.ui import WebDriverWait
    driver.get(url)
    WebDriverWait(driver, 30).until(lambda d: d.execute_script("return document.body.dataset.ready === '1'"))
    driver.find_element(By.CSS_SELECTOR, "[data-view=live]").click()
    time.sleep(1.0)
    Select(driver.find_element(By.ID, "live-device")).select_by_value("pulse")
    Select(driver.find_element(By.CSS_SELECTOR, "#live-form [name=rate_hz]")).select_by_value(str(rate))
    driver.find_element(By.ID, "live-start").click()
    time.sleep(2.0)  # settle: device open, first averages
    plot = driver.find_element(By.ID, "live-plot")
    d0, c0, t0 = int(plot.get_attribute("data-draws") or 0), cpu_seconds(pid), time.monotonic()
    time.sleep(seconds)
    d1, c1, t1 = int(plot.get_attribute("data-draws") or 0), cpu_seconds(pid), time.monotonic()
    call(url, "/api/live/stop", {})
    return (d1 - d0) / (t1 - t0), (c1 - c0) / (t1 - t0)


def time_to_results(driver, folder: Path) -> tuple[float, float]:
    """(from starting the desk process, from asking the page) to the demo's figures and plots drawn."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait
    start = time.monotonic()
    with running_desk(folder, "--open", "results/results.json") as (_proc, url):
        asked = time.monotonic()
        driver.get(url)
        WebDriverWait(driver, 60, poll_frequency=0.02).until(
            lambda d: d.find_element(By.ID, "result").get_attribute("data-ready"))
        done = time.monotonic()
    return done - start, done - asked


def memory_over(url: str, pid: int, minutes: float) -> list[tuple[float, float]]:
    """Live view at 96 kHz with a WebSocket reader (no browser) for `minutes`; RSS each minute."""
    import asyncio

    from tornado.websocket import websocket_connect
    host = url.split("//")[1].split("/")[0]

    async def read() -> list[tuple[float, float]]:
        ws = await websocket_connect(f"ws://{host}/ws/live")
        assert call(url, "/api/live/start", {"device": "pulse", "rate_hz": 96000})[0] == 200
        t0, samples, messages = time.monotonic(), [], 0
        while time.monotonic() - t0 < minutes * 60:
            await ws.read_message()
            messages += 1
            if not samples or time.monotonic() - t0 >= len(samples) * 60:
                samples.append((round((time.monotonic() - t0) / 60, 1), rss_mib(pid)))
        samples.append((round((time.monotonic() - t0) / 60, 1), rss_mib(pid)))
        call(url, "/api/live/stop", {})
        print(f"  {messages} snapshots read ({messages / (time.monotonic() - t0):.1f} per second)")
        return samples
    return asyncio.run(read())


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seconds", type=float, default=10.0)
    ap.add_argument("--memory-minutes", type=float, default=0.0, help="also run a long live view (0: skip)")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = demo_folder(Path(tmp))
        driver = browser()
        try:
            total, page = time_to_results(driver, folder)
            print(f"demo folder to results on screen: {total:.2f} s from starting the desk, {page:.2f} s from "
                  f"opening the page (figures and three interactive spectra)")
            with running_desk(folder) as (proc, url), player(48_000):
                for rate in (48_000, 96_000, 192_000):
                    ups, cpu = live_rate(driver, url, proc.pid, rate, args.seconds)
                    print(f"live at {rate / 1000:g} kHz: {ups:.1f} updates per second drawn in Chromium, "
                          f"server CPU {cpu * 100:.0f} % of one core")
                if args.memory_minutes:
                    driver.quit()
                    driver = None
                    samples = memory_over(url, proc.pid, args.memory_minutes)
                    print("server RSS (MiB) by minute: " + json.dumps(samples))
        finally:
            if driver is not None:
                driver.quit()


if __name__ == "__main__":
    main()
