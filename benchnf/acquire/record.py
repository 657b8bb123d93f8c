"""Recording that loses nothing: callback to a queue, a writer thread to disk, checked afterwards.

* The PortAudio callback only copies each block into a queue; a writer thread
  streams the queue into a WAV (RF64 beyond 2 GiB) through soundfile, and the
  queue is drained before the file is closed.
* The header is rewritten after every write (libsndfile's
  SFC_SET_UPDATE_HEADER_AUTO), so the file is valid after a crash or a kill;
  a file whose header is stale anyway is rescued by ``benchnf recover``.
* Overflow flags are counted, and independently the frames received are
  compared with the elapsed clock; a capture with a dropout is marked so in
  its sidecar and refused for noise analysis unless the user accepts it.
* A capture or sidecar already on disk is never overwritten.
"""

from __future__ import annotations

import datetime as _dt
import math
import queue
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

from ..errors import OutputError, AcquisitionError, CaptureError
from ..io.sidecar import sidecar_candidates
from ..write import Writer
from .devices import DeviceInfo, find_device, rate_note, sounddevice

__all__ = ["Recorder", "FakeRecorder", "SoundcardRecorder", "RecordingReport", "record_to_file", "recover_wav"]

_SFC_SET_UPDATE_HEADER_AUTO = 0x1061  # libsndfile sndfile.h


class Recorder(Protocol):
    """Anything that records `n_frames` in full-scale float32 units."""

    def record(self, n_frames: int, *, sample_rate_hz: float, channels: int = 1) -> NDArray[np.float32]: ...


class FakeRecorder:
    """Deterministic recorder for tests: a tone plus seeded white noise."""

    def __init__(self, tone_hz: float = 1000.0, tone_amplitude_fs: float = 0.5, noise_rms_fs: float = 1e-4,
                 seed: int = 0) -> None:
        self.tone_hz, self.tone_amplitude_fs, self.noise_rms_fs, self.seed = (tone_hz, tone_amplitude_fs,
                                                                              noise_rms_fs, seed)

    def record(self, n_frames: int, *, sample_rate_hz: float, channels: int = 1) -> NDArray[np.float32]:
        rng = np.random.default_rng(self.seed)
        t = np.arange(n_frames) / sample_rate_hz
        x = self.tone_amplitude_fs * np.sin(2 * np.pi * self.tone_hz * t)
        return (x[:, None] + rng.normal(0, self.noise_rms_fs, (n_frames, channels))).astype(np.float32)


class SoundcardRecorder:
    """A sound card through sounddevice, chosen by name (and host API)."""

    def __init__(self, device: str | None = None, *, host_api: str | None = None) -> None:
        self._sd = sounddevice()
        self.input = find_device(device, host_api=host_api, kind="input")
        self.device_name = device

    def record(self, n_frames: int, *, sample_rate_hz: float, channels: int = 1) -> NDArray[np.float32]:
        try:
            # A stream of its own, not sounddevice's shared default stream (which other code may be using).
            with self._sd.InputStream(samplerate=sample_rate_hz, channels=channels, dtype="float32",
                                      device=self.input.index) as stream:
                data, overflowed = stream.read(int(n_frames))
            if overflowed:
                raise AcquisitionError(f"input overflow while recording from {self.input.describe()}: record again")
            return data
        except self._sd.PortAudioError as err:
            raise AcquisitionError(f"{n_frames} frames at {sample_rate_hz:g} Hz from {self.input.describe()} "
                                   f"failed: {err}") from err

    def play_and_record(self, signal: NDArray[np.float32], *, sample_rate_hz: float, channels: int = 1,
                        output_device: str | None = None) -> NDArray[np.float32]:
        """Play `signal` (frames, or frames x out-channels) and record at once, on one device if possible."""
        out = find_device(output_device or self.device_name, kind="output")
        try:
            return self._sd.playrec(signal, samplerate=sample_rate_hz, channels=channels, dtype="float32",
                                    device=(self.input.index, out.index), blocking=True)
        except self._sd.PortAudioError as err:
            raise AcquisitionError(f"play and record at {sample_rate_hz:g} Hz on {out.describe()} failed: "
                                   f"{err}") from err


@dataclass(frozen=True)
class RecordingReport:
    """What a recording did."""

    path: Path
    frames: int
    seconds_requested: float
    elapsed_s: float
    overflows: int
    clock_mismatch_frames: int
    dropouts: bool
    interrupted: bool
    device: str
    host_api: str
    notes: tuple[str, ...]


def _refuse_existing(path: Path) -> None:
    for p in (path, *sidecar_candidates(path)):
        if p.exists():
            raise CaptureError(f"{p} exists already: choose another name (nothing was overwritten)")


def _start_files(path: Path, writer: Writer, sidecar: dict[str, Any], *, sample_rate_hz: float, channels: int,
                 subtype: str, big: bool) -> Any:
    """Write the sidecar (marked as recording) first, then create the audio file; on failure remove both.

    The sidecar comes first so that a recording killed at any moment still says what it is.
    """
    import soundfile as sf
    side = writer.json(sidecar_candidates(path)[0], sidecar)
    try:
        writer.claim(path)
        return sf.SoundFile(str(path), mode="w", samplerate=int(sample_rate_hz), channels=channels,
                            subtype=subtype, format="RF64" if big else "WAV")
    except BaseException as err:
        side.unlink(missing_ok=True)
        if path in writer.written:
            path.unlink(missing_ok=True)
        if isinstance(err, (OSError, RuntimeError)) and not isinstance(err, CaptureError):
            raise AcquisitionError(f"{path} cannot be created ({err}): check the folder exists and is "
                                   f"writable") from err
        raise


class _Session:
    """One recording's moving parts: the callback (copies into a queue), the disk thread (drains it),
    the counters of both, and the clock check afterwards."""

    def __init__(self, fh: Any, *, target: int, on_progress: Callable[[int], None] | None, stop_cls: type) -> None:
        self.fh, self.target, self.on_progress, self.stop_cls = fh, target, on_progress, stop_cls
        self.q: queue.Queue = queue.Queue()
        self.done = threading.Event()
        self.queued = self.overflows = self.written = self.first_frames = self.max_block = 0
        self.first: float | None = None
        self.last: float | None = None
        self.error: BaseException | None = None
        self.thread = threading.Thread(target=self._drain, name="benchnf-writer", daemon=True)

    def callback(self, indata: Any, frames: int, _time: Any, status: Any) -> None:
        now = time.monotonic()
        if self.first is None:
            self.first, self.first_frames = now, frames
        self.last = now
        self.max_block = max(self.max_block, frames)
        if status.input_overflow:
            self.overflows += 1
        take = min(frames, self.target - self.queued)
        if take > 0:
            self.q.put(indata[:take].copy())
            self.queued += take
        if self.queued >= self.target:
            self.done.set()
            raise self.stop_cls

    def _drain(self) -> None:
        while True:
            block = self.q.get()
            if block is None:
                return
            if self.error is not None:
                continue
            try:
                self.fh.write(block)
                self.written += len(block)
                if self.on_progress:
                    self.on_progress(len(block))
            except (OSError, RuntimeError) as err:  # disk full, device removed...
                self.error = err
                self.done.set()

    def close(self) -> None:
        self.q.put(None)
        self.thread.join()
        self.fh.close()

    def clock_check(self, sample_rate_hz: float, interrupted: bool) -> tuple[int, bool]:
        """Frames delivered between the first and the last callback against the wall clock over the same span
        (the stream's start-up latency left out); host APIs deliver in bursts, so a few blocks of slack are
        allowed. Returns the mismatch in frames and whether the capture has dropouts."""
        if self.first is None or self.last is None:
            return 0, self.overflows > 0
        expected = (self.last - self.first) * sample_rate_hz + self.first_frames
        mismatch = int(abs(self.queued - expected))
        slack = max(0.02 * expected, 0.2 * sample_rate_hz, 4 * self.max_block)
        return mismatch, self.overflows > 0 or (not interrupted and mismatch > slack)


def _check_channels(dev: DeviceInfo, channels: int) -> DeviceInfo:
    """Refuse more channels than the device has, before any file is created."""
    if channels > dev.max_input_channels:
        raise AcquisitionError(f"{dev.describe()} has {dev.max_input_channels} input channels, not {channels}")
    return dev


def _stream(sd: Any, session: _Session, dev: DeviceInfo, *, path: Path, channels: int, sample_rate_hz: float,
            seconds: float, stop: threading.Event | None, notes: list[str]) -> tuple[bool, float]:
    """Run the input stream until the target, a stop or Ctrl-C; returns (interrupted, elapsed seconds)."""
    interrupted = False
    t0 = time.monotonic()
    try:
        try:
            stream = sd.InputStream(samplerate=sample_rate_hz, channels=channels, dtype="float32", device=dev.index,
                                    callback=session.callback, blocksize=0)
        except sd.PortAudioError as err:
            session.fh.close()
            for p in (path, sidecar_candidates(path)[0]):  # nothing was recorded: leave nothing behind
                p.unlink(missing_ok=True)
            raise AcquisitionError(f"{dev.describe()} cannot record {channels} channel(s) at {sample_rate_hz:g} Hz: "
                                   f"{err}") from err
        session.thread.start()
        with stream:
            t0 = time.monotonic()
            while not session.done.wait(0.1):
                if stop is not None and stop.is_set():
                    interrupted = True
                    break
                if time.monotonic() - t0 > seconds * 2 + 10:
                    notes.append("the device delivered too few frames in twice the requested time")
                    break
    except KeyboardInterrupt:
        interrupted = True
    finally:
        elapsed = time.monotonic() - t0
        if session.thread.is_alive():
            session.close()
    return interrupted, elapsed


def record_to_file(path: str | Path, *, seconds: float, sample_rate_hz: float, channels: int = 1,
                   device: str | None = None, host_api: str | None = None, condition: str | None = None,
                   metadata: dict[str, Any] | None = None, subtype: str = "FLOAT",
                   on_progress: Callable[[int], None] | None = None,
                   stop: threading.Event | None = None, writer: Writer | None = None) -> RecordingReport:
    """Record from a sound card straight to disk; see the module docstring.

    Raises
    ------
    CaptureError
        The file or its sidecar exists.
    AcquisitionError
        The device cannot be found or opened at this rate and channel count, or the disk
        cannot be written (what was recorded is kept).
    KeyboardInterrupt
        Re-raised after the file and its sidecar are closed and written.
    """
    sd = sounddevice()
    import soundfile as sf
    path = Path(path)
    writer = writer or Writer()
    _refuse_existing(path)
    if not (math.isfinite(seconds) and seconds > 0):
        raise AcquisitionError(f"--seconds {seconds!r} must be > 0")
    dev = _check_channels(find_device(device, host_api=host_api, kind="input"), channels)
    notes = [n for n in (rate_note(dev, sample_rate_hz),) if n]
    target = int(round(seconds * sample_rate_hz))
    from .. import __version__
    started = {**(metadata or {}), "condition": condition, "device": dev.name, "host_api": dev.host_api,
               "sample_rate_hz": sample_rate_hz, "channels": channels, "status": "recording",
               "recorded_at": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
               "software": f"benchnf {__version__}"}
    fh = _start_files(path, writer, started, sample_rate_hz=sample_rate_hz, channels=channels, subtype=subtype,
                      big=target * channels * 4 > 2 ** 31)
    try:
        sf._snd.sf_command(fh._file, _SFC_SET_UPDATE_HEADER_AUTO, sf._ffi.NULL, 1)
    except AttributeError:  # pragma: no cover - another soundfile layout: recover covers it
        notes.append("the header is updated only at the end: after a crash use 'benchnf recover'")
    session = _Session(fh, target=target, on_progress=on_progress, stop_cls=sd.CallbackStop)
    interrupted, elapsed = _stream(sd, session, dev, path=path, channels=channels, sample_rate_hz=sample_rate_hz,
                                   seconds=seconds, stop=stop, notes=notes)
    mismatch, dropouts = session.clock_check(sample_rate_hz, interrupted)
    Writer(overwrite=True).json(sidecar_candidates(path)[0], {  # our own sidecar, completed in place
        **started, "status": "interrupted" if interrupted else "complete", "frames": session.written,
        "elapsed_s": round(elapsed, 3), "input_overflows": session.overflows,
        "clock_mismatch_frames": mismatch, "dropouts": bool(dropouts), "interrupted": interrupted})
    if session.error is not None:
        raise AcquisitionError(f"writing {path} failed after {session.written} frames ({session.error}): disk "
                               f"full or not writable; what was recorded is kept")
    if interrupted and stop is None:
        raise KeyboardInterrupt
    return RecordingReport(path, session.written, seconds, elapsed, session.overflows, mismatch, dropouts,
                           interrupted, dev.name, dev.host_api, tuple(notes))


def _chunk_follows(path: Path, offset: int) -> bool:
    """True when a RIFF chunk header (four printable ASCII bytes, then a size) starts at `offset`."""
    with open(path, "rb") as fh:
        fh.seek(offset + (offset & 1))
        head = fh.read(8)
    return len(head) == 8 and all(32 <= b < 127 for b in head[:4])


def recoverable_frames(path: Path, layout: Any) -> int:
    """Frames to rescue: the declared data size when the header was finished and a chunk follows it
    (what lies after is not samples), else every whole frame to the end of the file."""
    available = (layout.file_bytes - layout.data_offset) // layout.block_align
    declared = layout.declared_bytes
    if declared is not None and declared // layout.block_align <= available:
        end = layout.data_offset + declared
        if end >= layout.file_bytes or _chunk_follows(path, end):
            return declared // layout.block_align
    return available


def recover_wav(damaged: str | Path, output: str | Path, *, block_frames: int = 1 << 16,
                writer: Writer | None = None) -> int:
    """Rescue the samples of a WAV whose header is stale (a recorder killed before closing it).

    Reads the format chunk, then every whole frame from the start of the data chunk to the
    end of the file, block by block, and writes them to a new, valid file in the same
    encoding (RF64 beyond 2 GiB).  The damaged file is not changed.  Returns the number of
    frames rescued.
    """
    import soundfile as sf

    from ..io.wav_pcm import decode_samples, libsndfile_subtype, read_wav_layout
    damaged, output = Path(damaged), Path(output)
    writer = writer or Writer(inputs=[damaged])
    writer.protect(damaged)
    layout = read_wav_layout(damaged)
    if layout is None:
        raise CaptureError(f"{damaged} is not a WAV file with a format and a data chunk: "
                           f"nothing to recover")
    subtype = libsndfile_subtype(layout)
    if subtype is None:
        raise CaptureError(f"{damaged}: sample format {layout.format_tag}/{layout.bits}-bit is not one "
                           f"benchnf can recover")
    frames = recoverable_frames(damaged, layout)
    if frames == 0:
        raise CaptureError(f"{damaged} holds no whole sample frame after its header: nothing to recover")
    raw = bytearray(block_frames * layout.block_align + 1)
    view = memoryview(raw)
    tmp = writer.target(output).with_name(f".{output.name}.recovering.wav")
    try:
        with open(damaged, "rb") as src, sf.SoundFile(
                str(tmp), "x", samplerate=layout.sample_rate, channels=layout.channels, subtype=subtype,
                format="RF64" if frames * layout.block_align > 2 ** 31 else "WAV") as dst:
            src.seek(layout.data_offset)
            left = frames
            while left > 0:
                k = min(block_frames, left)
                src.readinto(view[:k * layout.block_align])
                dst.write(decode_samples(view, layout, k, native=True))
                left -= k
        writer.place(tmp, output)
    except RuntimeError as err:  # libsndfile's error while writing the rescued file
        raise OutputError(f"cannot write {output}: {_write_trouble(tmp.parent)} (libsndfile: {err}; nothing was "
                          f"written, the damaged file is unchanged)") from err
    finally:
        tmp.unlink(missing_ok=True)
    return frames


def _write_trouble(folder: Path) -> str:
    """Why writing in `folder` failed, as far as the file system tells: full, or something else."""
    import os
    try:
        st = os.statvfs(folder)
    except (OSError, AttributeError):
        return "the file could not be written"
    return ("the disk is full: free some space or write elsewhere" if st.f_bavail * st.f_frsize < 1 << 16
            else "the file could not be written")
