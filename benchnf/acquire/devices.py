"""Listing and choosing audio devices by name and host API (indices move after replugging)."""

from __future__ import annotations

from dataclasses import dataclass

from .._optional import require
from ..errors import AcquisitionError, DeviceNotFoundError

__all__ = ["DeviceInfo", "sounddevice", "list_devices", "find_device", "rate_note"]


def sounddevice():
    """The sounddevice module, or MissingDependencyError naming what to install."""
    sd = require("sounddevice", extra="audio", purpose="sound-card acquisition")
    return sd


@dataclass(frozen=True)
class DeviceInfo:
    index: int
    name: str
    host_api: str
    max_input_channels: int
    max_output_channels: int
    default_samplerate: float

    def describe(self) -> str:
        return (f"{self.name!r} ({self.host_api}; {self.max_input_channels} in, {self.max_output_channels} out; "
                f"native {self.default_samplerate:g} Hz)")


def list_devices() -> list[DeviceInfo]:
    sd = sounddevice()
    apis = sd.query_hostapis()
    return [DeviceInfo(i, d["name"], apis[d["hostapi"]]["name"], int(d["max_input_channels"]),
                       int(d["max_output_channels"]), float(d["default_samplerate"]))
            for i, d in enumerate(sd.query_devices())]


def find_device(name: str | None, *, host_api: str | None = None, kind: str = "input") -> DeviceInfo:
    """The device whose name contains `name` (case-insensitive), on `host_api` if given.

    An exact name wins over substrings; several candidates are an error listing them.
    """
    devices = list_devices()
    need_in, need_out = kind in ("input", "duplex"), kind in ("output", "duplex")
    usable = [d for d in devices if (not need_in or d.max_input_channels > 0)
              and (not need_out or d.max_output_channels > 0)
              and (host_api is None or host_api.lower() in d.host_api.lower())]
    if name is None:
        sd = sounddevice()
        default = sd.default.device[0 if need_in else 1]
        match = [d for d in usable if d.index == default]
        if match:
            return match[0]
        if usable:
            return usable[0]
        raise DeviceNotFoundError(f"no {kind} device found: connect one, or check 'benchnf devices'")
    exact = [d for d in usable if d.name.lower() == name.lower()]
    if exact:
        return exact[0]
    subs = [d for d in usable if name.lower() in d.name.lower()]
    if len(subs) == 1:
        return subs[0]
    if not subs:
        raise DeviceNotFoundError(f"no {kind} device matches {name!r}" + (f" on {host_api}" if host_api else "") +
                               "; 'benchnf devices' lists them")
    raise AcquisitionError(f"{len(subs)} devices match {name!r}: " + "; ".join(d.describe() for d in subs) +
                           " - give more of the name or --host-api")


def rate_note(device: DeviceInfo, rate_hz: float) -> str | None:
    """A warning when the rate differs from the device's native one (the host may resample)."""
    if abs(rate_hz - device.default_samplerate) > 0.5:
        return (f"{device.name!r} on {device.host_api} runs natively at {device.default_samplerate:g} Hz; at "
                f"{rate_hz:g} Hz the host API may resample, which adds its own noise and spurs")
    return None
