"""Switching the noise source by the tool: a keying tone on a sound-card output.

A sound card's outputs are AC-coupled, so they cannot hold a switch on with DC. benchnf keys a tone
instead: silence while the source is to be cold (off), a tone while it is to be hot (on), in states of equal
length, the first one cold. A small keying circuit of the user's (the tone rectified and smoothed, driving a
transistor or a relay that switches the noise source's supply, docs/yfactor.md) turns the tone into the
switch. The states are then found from the receiver's power steps exactly as for a source switched by
hand: the keying only saves the hand, it is not trusted for timing (the sound card's clock and the
receiver's are not the same).

Each state starts and ends with a raised-cosine ramp of a few milliseconds, so that the tone starts and
stops without a click (common practice).
"""

from __future__ import annotations

import math
import threading
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import AcquisitionError, ParameterError

__all__ = ["DriveSettings", "parse_drive", "keying_block", "SourceDrive"]


@dataclass(frozen=True)
class DriveSettings:
    """Where and how the keying tone is played."""

    device: str | None = None  # a sound-card output's name (None: the default output)
    channel: int = 0  # the output channel, from 0
    state_s: float = 1.0  # each state's length
    tone_hz: float = 1000.0
    level_dbfs: float = -6.0  # the tone's peak, dB below full scale
    sample_rate_hz: int = 48_000
    ramp_s: float = 0.005

    def __post_init__(self) -> None:
        if not (math.isfinite(self.state_s) and 0.2 <= self.state_s <= 60.0):
            raise ParameterError(f"each keyed state lasts {self.state_s!r} s: give 0.2 to 60 s")
        if not (math.isfinite(self.tone_hz) and 20.0 <= self.tone_hz <= 0.45 * self.sample_rate_hz):
            raise ParameterError(f"keying tone {self.tone_hz!r} Hz: give 20 Hz to {0.45 * self.sample_rate_hz:g} Hz")
        if not (math.isfinite(self.level_dbfs) and -60.0 <= self.level_dbfs <= 0.0):
            raise ParameterError(f"keying level {self.level_dbfs!r} dBFS: give -60 to 0 dBFS")
        if self.channel < 0:
            raise ParameterError(f"output channel {self.channel + 1} does not exist: channels count from 1")

    @classmethod
    def at(cls, address: str, **kw: Any) -> "DriveSettings":
        """Settings for the output ``DEVICE[:CHANNEL]`` names (:func:`parse_drive`), the rest as given."""
        device, channel = parse_drive(address.strip())
        return cls(device, channel, **kw)

    @property
    def state_frames(self) -> int:
        return int(round(self.state_s * self.sample_rate_hz))

    def metadata(self) -> dict[str, Any]:
        """As kept in a recording's metadata."""
        d = asdict(self)
        d["channel"] = self.channel + 1
        return d


def parse_drive(text: str) -> tuple[str | None, int]:
    """``DEVICE[:CHANNEL]`` (channel from 1; ``default`` or an empty name: the default output)."""
    name, sep, ch = text.rpartition(":")
    if not sep or not ch.strip().isdigit():
        name, ch = text, "1"
    if int(ch) < 1:
        raise ParameterError(f"--drive-source {text!r}: output channels count from 1")
    name = name.strip()
    return (None if name in ("", "default") else name), int(ch) - 1


def keying_block(start: int, frames: int, s: DriveSettings) -> NDArray[np.float32]:
    """The keying signal's samples `start` .. `start + frames` (frame 0: the first cold state begins)."""
    n = start + np.arange(frames, dtype=np.int64)
    length = s.state_frames
    k, into = np.divmod(n, length)
    hot = (k % 2) == 1
    ramp = max(1, int(round(s.ramp_s * s.sample_rate_hz)))
    edge = np.minimum(into, length - 1 - into)
    envelope = np.where(edge >= ramp, 1.0, 0.5 - 0.5 * np.cos(np.pi * np.minimum(edge, ramp) / ramp))
    tone = 10 ** (s.level_dbfs / 20) * np.sin(2 * np.pi * s.tone_hz * n / s.sample_rate_hz)
    return (np.where(hot, envelope, 0.0) * tone).astype(np.float32)


class SourceDrive:
    """Play the keying signal on a sound-card output while the block runs (``with SourceDrive(s): ...``)."""

    def __init__(self, settings: DriveSettings) -> None:
        self.settings = settings
        self.frames = 0
        self.underflows = 0
        self._stream: Any = None
        self._lock = threading.Lock()

    def __enter__(self) -> "SourceDrive":
        from .devices import find_device, sounddevice
        sd = sounddevice()
        s = self.settings
        dev = find_device(s.device, kind="output")
        if s.channel >= dev.max_output_channels:
            raise ParameterError(f"{dev.describe()} has {dev.max_output_channels} output channel(s): choose "
                                 f"one of 1 to {dev.max_output_channels} for --drive-source")
        try:
            self._stream = sd.OutputStream(samplerate=s.sample_rate_hz, channels=s.channel + 1, dtype="float32",
                                           device=dev.index, callback=self._callback)
            self._stream.start()
        except sd.PortAudioError as err:
            raise AcquisitionError(f"the keying output {dev.describe()} could not be started at "
                                   f"{s.sample_rate_hz} Hz ({err}): choose another --drive-source") from err
        self.device = dev.describe()
        self._wait_until_flowing()
        return self

    def _wait_until_flowing(self, timeout_s: float = 3.0) -> None:
        """Return once the output consumes samples (a sound server may take a second to wake its device), so
        that the keying runs through what follows; after `timeout_s`, go on regardless."""
        import time
        t0 = time.monotonic()
        with self._lock:
            first = self.frames
        while time.monotonic() - t0 < timeout_s:
            with self._lock:
                if self.frames - first >= 0.05 * self.settings.sample_rate_hz:
                    return
            time.sleep(0.01)

    def _callback(self, outdata: Any, frames: int, _time: Any, status: Any) -> None:
        with self._lock:
            outdata[:] = 0
            outdata[:, self.settings.channel] = keying_block(self.frames, frames, self.settings)
            self.frames += frames
            if status.output_underflow:
                self.underflows += 1

    def __exit__(self, *exc: object) -> None:
        if self._stream is not None:
            self._stream.stop()
            self._stream.close()
            self._stream = None

    def metadata(self) -> dict[str, Any]:
        """What was played, for a recording's metadata."""
        return {**self.settings.metadata(), "device_described": getattr(self, "device", ""),
                "states_played": self.frames // self.settings.state_frames, "underflows": self.underflows}
