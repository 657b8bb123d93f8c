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
