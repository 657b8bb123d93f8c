"""The PulseAudio null-sink loopback (started by .ci/run): is it there, and a player into it."""

from __future__ import annotations

import os

DEVICE = "pulse"


def loopback_missing() -> str | None:
    """Why the loopback cannot be used here (None: it can). In CI a missing loopback is an error."""
    try:
        import sounddevice as sd
    except (ImportError, OSError) as err:
        why = f"sounddevice/PortAudio not usable: {err}"
    else:
        names = [d["name"] for d in sd.query_devices()]
        why = None if DEVICE in names else f"no {DEVICE!r} PortAudio device (devices: {names})"
    if why and os.environ.get("CI") == "true":
        raise RuntimeError(f"CI must run the loopback tests, but: {why}")
    return why


def loopback_plan(*, seconds: float, out_dir: str | None = None, fs: int = 48_000) -> str:
    """A guided plan through the loopback (floor, terminated, tone at 1 kHz, 1 mV at the source), as TOML."""
    where = f'out_dir = "{out_dir}"\n' if out_dir else ""
    return f'''name = "loopback plan"
device = "{DEVICE}"
sample_rate_hz = {fs}
{where}
[analysis]
rs_ohm = 200
temperature_k = 290
volts_per_fs = 1.0

[[step]]
condition = "floor"
seconds = {seconds}
prompt = "Terminate the analyzer input."

[[step]]
condition = "terminated"
seconds = {seconds}
prompt = "Connect the amplifier; terminate its input in 200 ohm."

[[step]]
condition = "tone"
seconds = {seconds}
tone_hz = 1000
tone_input_vrms = 0.001
'''


def run_plan_stepping(plan, source, state, *, fs: int = 48_000, seen: list | None = None) -> int:
    """``benchnf measure PLAN --yes`` while `source` (a sounddevice output callback) plays into the loopback;
    ``state["mode"]`` moves on (up to 2) each time a capture has been checked, so that what is played follows
    the plan's steps. The names of the checked captures are appended to `seen`."""
    import time

    import sounddevice as sd

    import benchnf.acquire.plan as plan_mod
    from benchnf.cli import main
    original = plan_mod.check_capture

    def checked(path, **kw):
        if seen is not None:
            seen.append(path.name)
        out = original(path, **kw)
        state["mode"] = min(state["mode"] + 1, 2)
        time.sleep(0.5)  # let the new signal reach the monitor before the next capture starts
        return out

    plan_mod.check_capture = checked
    try:
        with sd.OutputStream(samplerate=fs, channels=2, dtype="float32", device=DEVICE, callback=source):
            time.sleep(0.5)
            return main(["measure", str(plan), "--yes"])
    finally:
        plan_mod.check_capture = original
