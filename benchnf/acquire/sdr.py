"""An RTL2832U-class receiver as a capture device: over the network through ``rtl_tcp``, or on this computer
through librtlsdr (the optional ``pyrtlsdr``).

The ``rtl_tcp`` protocol: on connect the server sends 12 bytes, ``RTL0``, the tuner type and the number of
tuner gains (each a big-endian uint32); then interleaved unsigned 8-bit I and Q samples about 127.5 until the
connection closes. A command is 5 bytes: a command byte and a big-endian uint32 (0x01 centre frequency in Hz,
0x02 sample rate, 0x03 gain mode, 0 automatic / 1 manual, 0x04 tuner gain in tenths of a dB, 0x05 frequency
correction in ppm, 0x08 the RTL2832U's own AGC, 0 off). The server acknowledges nothing, so what the tuner
cannot do is refused here before anything is sent. (The protocol of the rtl-sdr project's rtl_tcp; from
memory, as written in the team's references.)

A noise measurement needs a fixed gain: automatic gain changes the receiver's gain between the hot and cold
states and the Y factor with it, so it is refused (common practice).
"""

from __future__ import annotations

import math
import socket
import struct
import time
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlsplit

import numpy as np
from numpy.typing import NDArray

from ..errors import AcquisitionError, ParameterError
from ..io.sigmf_iq import OVERLOADED

__all__ = ["SdrSettings", "SdrStream", "RtlTcpStream", "LocalRtlStream", "open_sdr", "parse_sdr_address",
           "TUNERS", "RATE_RANGES_HZ", "to_complex", "overloaded_fraction", "live_chunks"]

#: Tuner types as rtl_tcp numbers them (librtlsdr's enum; from memory).
TUNERS = {0: "unknown", 1: "E4000", 2: "FC0012", 3: "FC0013", 4: "FC2580", 5: "R820T", 6: "R828D"}

#: Sample rates the RTL2832U accepts, S/s (librtlsdr's rtlsdr_set_sample_rate; from memory).
RATE_RANGES_HZ = ((225_001.0, 300_000.0), (900_001.0, 3_200_000.0))

_COMMANDS = {"frequency": 0x01, "rate": 0x02, "gain_mode": 0x03, "gain": 0x04, "ppm": 0x05, "agc": 0x08}
_SETTLE_S = 0.25  # samples discarded after the settings are sent: the tuner's PLL and gain settle (common practice)


@dataclass(frozen=True)
class SdrSettings:
    """What the receiver is set to: centre frequency, sample rate, a fixed tuner gain and the correction."""

    centre_hz: float
    rate_hz: float
    gain_db: float
    ppm: int = 0

    def __post_init__(self) -> None:
        if not (math.isfinite(self.centre_hz) and 1e6 <= self.centre_hz <= 2.5e9):
            raise ParameterError(f"--centre-hz {self.centre_hz:g} lies outside what an RTL2832U-class receiver tunes "
                                 f"(about 24 MHz to 1.7 GHz with the usual tuners)")
        if not any(lo <= self.rate_hz <= hi for lo, hi in RATE_RANGES_HZ):
            raise ParameterError(f"--rate {self.rate_hz:g}: the RTL2832U runs at 225001-300000 or 900001-3200000 "
                                 f"samples/s; choose one of those (2400000 is the usual steady rate)")
        if not (math.isfinite(self.gain_db) and 0 <= self.gain_db <= 60):
            raise ParameterError(f"--gain {self.gain_db:g} dB: give the tuner gain in dB, 0 to about 50")
        if not -1000 <= self.ppm <= 1000:
            raise ParameterError(f"--ppm {self.ppm}: a frequency correction is a few ppm to a few hundred")

    def metadata(self) -> dict[str, Any]:
        return {"sdr_centre_hz": self.centre_hz, "sdr_rate_hz": self.rate_hz, "sdr_gain_db": self.gain_db,
                "sdr_ppm": self.ppm, "sdr_gain_mode": "manual"}


def parse_gain(text: str) -> float:
    """``--gain DB``; "auto" is refused: a noise measurement needs a fixed gain."""
    if text.strip().lower() in ("auto", "agc", "automatic"):
        raise ParameterError("automatic gain changes the receiver's gain between the hot and cold states: give a "
                             "fixed tuner gain in dB, --gain 30 for example")
    try:
        return float(text)
    except ValueError:
        raise ParameterError(f"--gain {text!r} is not a number of dB") from None


def parse_sdr_address(text: str) -> tuple[str, str, int]:
    """``rtl_tcp://HOST[:PORT]`` (port 1234 by default) or ``rtlsdr://INDEX`` (a receiver on this computer)."""
    scheme, sep, rest = text.partition("://")
    parts = urlsplit("//" + rest) if sep else urlsplit("")
    if scheme == "rtl_tcp":
        try:
            port = parts.port or 1234
        except ValueError:
            raise ParameterError(f"--sdr {text}: the port must be a number, rtl_tcp://HOST:1234") from None
        if not parts.hostname:
            raise ParameterError(f"--sdr {text}: name the host, rtl_tcp://HOST:PORT")
        return "rtl_tcp", parts.hostname, port
    if scheme == "rtlsdr":
        index = parts.netloc or "0"
        if not index.isdigit():
            raise ParameterError(f"--sdr {text}: a local receiver is named by its index, rtlsdr://0")
        return "rtlsdr", "", int(index)
    raise ParameterError(f"--sdr {text}: give rtl_tcp://HOST:PORT (a receiver shared by rtl_tcp) or rtlsdr://0 "
                         f"(one on this computer)")


def to_complex(raw: NDArray[np.uint8]) -> NDArray[np.complex64]:
    """Interleaved unsigned 8-bit I/Q to complex full-scale units, (x - 128)/128 as SigMF reads ``cu8``."""
    x = (raw.astype(np.float32) - 128.0) / 128.0
    return (x[0::2] + 1j * x[1::2]).astype(np.complex64)


def overloaded_fraction(raw: NDArray[np.uint8]) -> float:
    """The fraction of I and Q values at either end of the 8-bit range: the converter clipped them."""
    if raw.size == 0:
        return 0.0
    return float(np.count_nonzero((raw == 0) | (raw == 255))) / raw.size


@dataclass
class SdrStream:
    """What every receiver stream counts: samples delivered, against the clock, and overloaded values."""

    settings: SdrSettings
    describe: str = ""
    tuner: str = "unknown"
    delivered: int = 0
    overloaded: int = 0
    started: float | None = field(default=None, repr=False)

    def read(self, n: int) -> NDArray[np.uint8]:
        """The next `n` complex samples as 2n interleaved bytes; fewer only when the stream ended."""
        raise NotImplementedError

    def close(self) -> None:
        raise NotImplementedError

    def _count(self, raw: NDArray[np.uint8]) -> None:
        if self.started is None:
            self.started = time.monotonic()
        self.delivered += raw.size // 2
        self.overloaded += int(np.count_nonzero((raw == 0) | (raw == 255)))

    def lost_samples(self) -> int:
        """Samples the receiver should have delivered by now but did not (a slow network or computer makes the
        server drop buffers); 0 within two tenths of a second of slack."""
        if self.started is None:
            return 0
        expected = (time.monotonic() - self.started) * self.settings.rate_hz
        missing = expected - self.delivered - 0.2 * self.settings.rate_hz
        return int(missing) if missing > 0.02 * expected else 0

    def __enter__(self) -> "SdrStream":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()


class RtlTcpStream(SdrStream):
    """A receiver shared by an ``rtl_tcp`` server."""

    def __init__(self, host: str, port: int, settings: SdrSettings, *, timeout_s: float = 5.0) -> None:
        super().__init__(settings, describe=f"rtl_tcp at {host}:{port}")
        self.host, self.port, self.timeout_s = host, port, timeout_s
        try:
            self._sock = socket.create_connection((host, port), timeout=timeout_s)
        except OSError as err:
            raise AcquisitionError(f"cannot reach rtl_tcp at {host}:{port} ({err.strerror or err}): is rtl_tcp "
                                   f"running there, and does it listen on that address (rtl_tcp -a)?") from err
        try:
            head = self._exactly(12, what="its greeting").tobytes()
            if head[:4] != b"RTL0":
                raise AcquisitionError(f"{host}:{port} answered, but not as an rtl_tcp server (it sent "
                                       f"{head[:4]!r} instead of 'RTL0'): check the address and port")
            tuner, self.gain_count = struct.unpack(">II", head[4:])
            self.tuner = TUNERS.get(tuner, f"type {tuner}")
            self._send_settings()
            self._exactly(2 * int(_SETTLE_S * settings.rate_hz), what="the first samples")
        except BaseException:
            self._sock.close()
            raise
        self.describe = f"rtl_tcp at {host}:{port} ({self.tuner} tuner)"

    def _command(self, name: str, value: int) -> None:
        self._sock.sendall(struct.pack(">BI", _COMMANDS[name], value & 0xFFFFFFFF))

    def _send_settings(self) -> None:
        s = self.settings
        self._command("rate", int(round(s.rate_hz)))
        self._command("frequency", int(round(s.centre_hz)))
        self._command("ppm", int(s.ppm))
        self._command("agc", 0)
        self._command("gain_mode", 1)
        self._command("gain", int(round(10 * s.gain_db)))

    def _exactly(self, n: int, *, what: str) -> NDArray[np.uint8]:
        buf = np.empty(n, dtype=np.uint8)
        view = memoryview(buf)  # type: ignore[arg-type]
        got = 0
        while got < n:
            try:
                k = self._sock.recv_into(view[got:], n - got)
            except socket.timeout:
                raise AcquisitionError(f"rtl_tcp at {self.host}:{self.port} sent nothing for {self.timeout_s:g} s "
                                       f"while benchnf waited for {what}: is the receiver plugged in?") from None
            except OSError as err:
                raise AcquisitionError(f"the connection to rtl_tcp at {self.host}:{self.port} failed ({err}) "
                                       f"while benchnf waited for {what}") from err
            if k == 0:
                if what == "samples":
                    return buf[:got - got % 2]
                raise AcquisitionError(f"rtl_tcp at {self.host}:{self.port} closed the connection before "
                                       f"{what}: is another program using the receiver?")
            got += k
        return buf

    def read(self, n: int) -> NDArray[np.uint8]:
        raw = self._exactly(2 * n, what="samples")
        self._count(raw)
        return raw

    def close(self) -> None:
        try:
            self._sock.close()
        except OSError:  # pragma: no cover - closing a socket that failed
            pass


class LocalRtlStream(SdrStream):
    """A receiver on this computer through librtlsdr (``pip install 'benchnf[sdr]'``)."""

    def __init__(self, index: int, settings: SdrSettings) -> None:
        super().__init__(settings, describe=f"RTL receiver {index} on this computer")
        from .._optional import require
        rtlsdr = require("rtlsdr", extra="sdr", purpose="a receiver on this computer")
        try:
            self._dev = rtlsdr.RtlSdr(device_index=index)
            self._dev.sample_rate = settings.rate_hz
            self._dev.center_freq = settings.centre_hz
            if settings.ppm:
                self._dev.freq_correction = settings.ppm
            self._dev.gain = settings.gain_db
            self._dev.read_bytes(2 * int(_SETTLE_S * settings.rate_hz))
        except (OSError, IOError, ValueError) as err:
            raise AcquisitionError(f"RTL receiver {index} cannot be opened or set ({err}): is it plugged in and "
                                   f"free (no other program using it)?") from err

    def read(self, n: int) -> NDArray[np.uint8]:
        try:
            raw = np.frombuffer(bytes(self._dev.read_bytes(2 * n)), dtype=np.uint8)
        except (OSError, IOError) as err:
            raise AcquisitionError(f"reading the RTL receiver failed ({err}): was it unplugged?") from err
        self._count(raw)
        return raw

    def close(self) -> None:
        self._dev.close()


def open_sdr(address: str, settings: SdrSettings, *, timeout_s: float = 5.0) -> SdrStream:
    """Open the receiver an ``--sdr`` address names, set it and let it settle."""
    kind, host, port = parse_sdr_address(address)
    if kind == "rtl_tcp":
        return RtlTcpStream(host, port, settings, timeout_s=timeout_s)
    return LocalRtlStream(port, settings)


def live_chunks(stream: SdrStream, seconds: float, warn: Any) -> Any:
    """Complex chunks of `seconds` each from a running receiver, for as long as the caller takes them.

    Each of the receiver's troubles is passed to ``warn(text)`` once (overloaded values, samples lost on the
    way); a connection that ends raises :class:`AcquisitionError`.
    """
    chunk, said = max(1024, int(seconds * stream.settings.rate_hz)), set()
    while True:
        raw = stream.read(chunk)
        if raw.size < 2 * chunk:
            raise AcquisitionError(f"the connection to {stream.describe} ended after {stream.delivered} samples: "
                                   f"check the network and that rtl_tcp is still running")
        for key, bad, text in (
                ("overload", overloaded_fraction(raw) > OVERLOADED,
                 "I/Q values at the converter's rails (overload): lower the tuner gain (--gain)"),
                ("lost", stream.lost_samples() > 0,
                 f"samples are being lost on the way: the network or this computer is too slow for "
                 f"{stream.settings.rate_hz:g} samples/s; choose a lower --rate")):
            if bad and key not in said:
                said.add(key)
                warn(text)
        yield to_complex(raw)
