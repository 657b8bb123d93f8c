"""A stand-in rtl_tcp server for the tests: the protocol's greeting and 5-byte commands (as written in the team's
references, from memory), streaming seeded complex noise as unsigned 8-bit I/Q about 127.5 whose level steps
between a hot and a cold state like a noise diode switched by hand.

Invented data for seeded tests. The truth it carries: with an excess noise ratio ENR and a cold source at
T0, a system noise factor F gives Y = 1 + ENR/F between the hot and the cold noise power (Friis 1944; the
team's references), so the cold state's noise has a standard deviation ``cold_lsb`` per component and the
hot state's ``cold_lsb * sqrt(Y)``.
"""

from __future__ import annotations

import socket
import struct
import threading
import time
from dataclasses import dataclass, field

import numpy as np


@dataclass
class Schedule:
    """How the noise source is switched: states of roughly `period_s` each, their lengths jittered by up to
    `jitter_s` (a hand on the switch), with a `ramp_s` transition; after `step_at_s` the system NF changes to
    `nf_after_db` (a trimmer turned). From `dut_at_s` on (:meth:`StandIn.insert_dut`), `nf_db` is the
    receiver's own and a DUT of `dut_gain_db` and `dut_nf_db` sits ahead of it."""

    enr_db: float = 15.0
    nf_db: float = 3.0
    period_s: float = 0.5
    jitter_s: float = 0.1
    ramp_s: float = 0.01
    first: str = "cold"
    step_at_s: float | None = None
    nf_after_db: float | None = None
    cold_lsb: float = 4.0
    seed: int = 0
    dut_at_s: float | None = None  # a DUT connected ahead of the receiver from this time on (nf_db: the receiver)
    dut_gain_db: float = 10.0
    dut_nf_db: float = 1.0

    def _system(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The noise factor seen at times `t` and the cold noise power relative to the receiver's alone."""
        t = np.asarray(t)
        after = self.nf_after_db if self.nf_after_db is not None else self.nf_db
        f = 10 ** (np.where(t >= (self.step_at_s if self.step_at_s is not None else np.inf), after,
                            self.nf_db) / 10)
        if self.dut_at_s is None:
            return f, np.ones_like(f)
        # Friis 1944: F12 = F1 + (F2 - 1)/G1; the cold power grows from k T0 F2 to k T0 G1 F12 (cold at T0).
        g1, f1 = 10 ** (self.dut_gain_db / 10), 10 ** (self.dut_nf_db / 10)
        f12 = f1 + (f - 1) / g1
        inside = t >= self.dut_at_s
        return np.where(inside, f12, f), np.where(inside, g1 * f12 / f, 1.0)

    def y_at(self, t: np.ndarray) -> np.ndarray:
        """Y at times `t` (s)."""
        return 1 + 10 ** (self.enr_db / 10) / self._system(t)[0]

    def cold_at(self, t: np.ndarray) -> np.ndarray:
        """The cold state's standard deviation per component at times `t`, in converter steps."""
        return self.cold_lsb * np.sqrt(self._system(t)[1])


@dataclass
class StandIn:
    """Serve rtl_tcp on 127.0.0.1 (port chosen by the system) from a thread; one client at a time."""

    schedule: Schedule = field(default_factory=Schedule)
    tuner: int = 5
    gains: int = 29
    paced: bool = True  # real time (False: as fast as the client reads)
    drop_after_s: float | None = None  # close the connection after this much streamed time
    overload: bool = False  # drive the converter into its rails
    greeting: bytes = b"RTL0"
    dc_lsb: float = 1.5  # the receiver's DC offset on I (its spike at the centre)
    speed: float = 1.0  # paced at this fraction of the sample rate (below 1: a receiver that loses samples)

    def __post_init__(self) -> None:
        self.commands: list[tuple[int, int]] = []
        self.transitions: list[tuple[str, float]] = []  # (state, start time s) as streamed
        self.rate_hz = 2_048_000.0
        self.streamed_s = 0.0
        self._srv = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
        self._srv.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self._srv.bind(("127.0.0.1", 0))
        self._srv.listen(1)
        self.port = self._srv.getsockname()[1]
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._serve, daemon=True)
        self._thread.start()

    @property
    def address(self) -> str:
        return f"rtl_tcp://127.0.0.1:{self.port}"

    def close(self) -> None:
        self._stop.set()
        self._srv.close()
        self._thread.join(timeout=5)

    def __enter__(self) -> "StandIn":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def insert_dut(self) -> float:
        """Connect the schedule's DUT from now on (the stream's time); that time in seconds."""
        self.schedule.dut_at_s = self.streamed_s
        return self.schedule.dut_at_s

    def gain_db(self) -> float | None:
        vals = [v for c, v in self.commands if c == 0x04]
        return vals[-1] / 10 if vals else None

    # -- serving ----------------------------------------------------------------------------------------------
    def _serve(self) -> None:
        while not self._stop.is_set():
            try:
                conn, _ = self._srv.accept()
            except OSError:
                return
            with conn:
                self._client(conn)

    def _commands(self, conn: socket.socket) -> None:
        buf = b""
        while not self._stop.is_set():
            try:
                data = conn.recv(64)
            except OSError:
                return
            if not data:
                return
            buf += data
            while len(buf) >= 5:
                cmd, val = struct.unpack(">BI", buf[:5])
                buf = buf[5:]
                self.commands.append((cmd, val))
                if cmd == 0x02:
                    self.rate_hz = float(val)

    def _levels(self, t: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """The noise's standard deviation per component at times `t` (s): each state's level, ramped linearly
        over `ramp_s` from the previous state's at each switch."""
        s = self.schedule
        while self._bounds[-1] <= t[-1]:
            self._bounds.append(self._bounds[-1] + s.period_s + rng.uniform(-s.jitter_s, s.jitter_s))
            self._states.append("hot" if self._states[-1] == "cold" else "cold")
            self.transitions.append((self._states[-1], self._bounds[-1]))
        k = np.searchsorted(np.asarray(self._bounds), t, side="right") - 1
        cold = s.cold_at(t)
        hot = np.sqrt(s.y_at(t)) * cold
        is_hot = np.array([st == "hot" for st in self._states])
        now = np.where(is_hot[k], hot, cold)
        before = np.where(is_hot[np.maximum(k - 1, 0)], hot, cold)
        since = t - np.asarray(self._bounds)[k]
        frac = np.clip(since / s.ramp_s, 0, 1) if s.ramp_s > 0 else np.ones_like(t)
        frac[k == 0] = 1.0
        return before + (now - before) * frac

    def _client(self, conn: socket.socket) -> None:
        conn.sendall(self.greeting + struct.pack(">II", self.tuner, self.gains))
        threading.Thread(target=self._commands, args=(conn,), daemon=True).start()
        time.sleep(0.05)  # the client's settings arrive first, as from a real receiver's first buffers
        s = self.schedule
        rng = np.random.default_rng(s.seed)
        self._bounds = [0.0, s.period_s + rng.uniform(-s.jitter_s, s.jitter_s)]
        self._states = [s.first, "hot" if s.first == "cold" else "cold"]
        self.transitions = [(s.first, 0.0), (self._states[1], self._bounds[1])]
        n_sent, t0, chunk = 0, time.monotonic(), 16384
        while not self._stop.is_set():
            rate = self.rate_hz
            if self.drop_after_s is not None and n_sent / rate >= self.drop_after_s:
                conn.shutdown(socket.SHUT_RDWR)
                return
            t = (n_sent + np.arange(chunk)) / rate
            z = rng.normal(0, 1, (chunk, 2)) * self._levels(t, rng)[:, None]
            if self.overload:
                z *= 40
            z[:, 0] += self.dc_lsb
            raw = np.clip(np.round(z + 127.5), 0, 255).astype(np.uint8).reshape(-1)
            try:
                conn.sendall(raw.tobytes())
            except OSError:
                return
            n_sent += chunk
            self.streamed_s = n_sent / rate
            if self.paced:
                ahead = n_sent / (rate * self.speed) - (time.monotonic() - t0)
                if ahead > 0:
                    time.sleep(ahead)
