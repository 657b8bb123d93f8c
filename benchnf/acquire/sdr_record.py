"""Recording a receiver's IQ to a SigMF file without losing what was recorded.

The samples are kept exactly as the receiver sends them (``cu8``: unsigned 8-bit I/Q), appended to the
``.sigmf-data`` file as they arrive. The sound card's sidecar rule holds for the ``.sigmf-meta`` beside it:
it is written first, saying ``benchnf:status`` "recording", and completed at the end (samples, overloaded
values, lost samples, "complete" or "interrupted"); a recording killed at any moment keeps what reached the
disk and its metadata says it was cut short. Nothing is overwritten.
"""

from __future__ import annotations

import datetime as _dt
import threading
import time
from collections.abc import Callable
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import AcquisitionError, CaptureError
from ..write import Writer
from ..io.sigmf_iq import OVERLOADED
from .sdr import SdrSettings, SdrStream, open_sdr
from .source_drive import SourceDrive

__all__ = ["SdrRecording", "sigmf_paths", "record_sdr"]

_CHUNK_S = 0.05  # samples read and appended at a time


@dataclass(frozen=True)
class SdrRecording:
    """What a receiver recording did."""

    meta_path: Path
    samples: int
    seconds: float
    overloaded_fraction: float
    lost_samples: int
    interrupted: bool
    dropped: bool  # the connection ended before the time asked
    receiver: str
    notes: tuple[str, ...]


def sigmf_paths(output: str | Path) -> tuple[Path, Path]:
    """The metadata and data paths of ``-o X.sigmf-meta`` (or X, or X.sigmf-data)."""
    p = Path(output)
    base = p.with_suffix("") if p.suffix in (".sigmf-meta", ".sigmf-data") else p
    return base.with_name(base.name + ".sigmf-meta"), base.with_name(base.name + ".sigmf-data")


def _metadata(settings: SdrSettings, stream: SdrStream, condition: str | None, status: str,
              extra: dict[str, Any]) -> dict[str, Any]:
    from .. import __version__
    g = {"core:datatype": "cu8", "core:sample_rate": float(settings.rate_hz), "core:version": "1.0.0",
         "core:recorder": f"benchnf {__version__}", "core:hw": f"RTL2832U-class receiver, {stream.describe}",
         "core:description": f"benchnf recording, condition {condition}" if condition else "benchnf recording",
         "benchnf:status": status, "benchnf:condition": condition or "", "benchnf:tuner": stream.tuner,
         "benchnf:gain_db": settings.gain_db, "benchnf:gain_mode": "manual", "benchnf:ppm": settings.ppm}
    g.update(extra)
    start = _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds").replace("+00:00", "Z")
    return {"global": g, "captures": [{"core:sample_start": 0, "core:frequency": float(settings.centre_hz),
                                       "core:datetime": start}], "annotations": []}


def record_sdr(output: str | Path, *, address: str, settings: SdrSettings, seconds: float,
               condition: str | None = None, writer: Writer | None = None,
               on_progress: Callable[[int], None] | None = None, stop: threading.Event | None = None,
               timeout_s: float = 5.0, drive: Any = None) -> SdrRecording:
    """Record `seconds` of IQ from the receiver `address` names into a SigMF recording; with `drive`
    (:class:`benchnf.acquire.source_drive.DriveSettings`) the noise source is keyed meanwhile.

    Raises
    ------
    CaptureError
        The recording's files exist already.
    AcquisitionError
        The receiver cannot be reached or set, or the disk cannot be written (what was recorded is kept).
    KeyboardInterrupt
        Re-raised after the files are closed and the metadata completed.
    """
    writer = writer or Writer()
    meta_path, data_path = sigmf_paths(output)
    for p in (meta_path, data_path):
        if p.exists():
            raise CaptureError(f"{p} exists already: choose another name (nothing was overwritten)")
        writer.target(p)
    with ExitStack() as keyed:
        keying = keyed.enter_context(SourceDrive(drive)) if drive is not None else None  # fails before any file
        stream = open_sdr(address, settings, timeout_s=timeout_s)
        started = _metadata(settings, stream, condition, "recording", {})
        writer.json(meta_path, started)
        rec = _stream_to(data_path, stream, writer, seconds=seconds, rate=settings.rate_hz, stop=stop,
                         on_progress=on_progress)
    if keying is not None:
        started["global"].update({f"benchnf:drive_{k}": v for k, v in keying.metadata().items()})
    return _finish(meta_path, started, stream, **rec, stop=stop, data_path=data_path)


def _stream_to(data_path: Path, stream: SdrStream, writer: Writer, *, seconds: float, rate: float,
               stop: threading.Event | None, on_progress: Callable[[int], None] | None) -> dict[str, Any]:
    """Append the receiver's bytes to the data file until `seconds` are in, the stream ends or it is stopped."""
    target, chunk = int(round(seconds * rate)), max(1024, int(_CHUNK_S * rate))
    written, interrupted, dropped, error = 0, False, False, None
    t0 = time.monotonic()
    try:
        writer.claim(data_path)
        with open(data_path, "ab") as fh:
            while written < target:
                if stop is not None and stop.is_set():
                    interrupted = True
                    break
                want = min(chunk, target - written)
                raw = stream.read(want)
                try:
                    fh.write(raw.tobytes())
                    fh.flush()
                except OSError as err:
                    error = err
                    break
                written += raw.size // 2
                if on_progress:
                    on_progress(raw.size // 2)
                if raw.size < 2 * want:
                    dropped = True
                    break
    except KeyboardInterrupt:
        interrupted = True
    finally:
        stream.close()
    return dict(written=written, elapsed=time.monotonic() - t0, rate=rate, interrupted=interrupted, dropped=dropped,
                error=error)


def _finish(meta_path: Path, started: dict[str, Any], stream: SdrStream, *, written: int, elapsed: float,
            rate: float, interrupted: bool, dropped: bool, error: OSError | None, stop: threading.Event | None,
            data_path: Path) -> SdrRecording:
    """Complete the metadata in place, then say what went wrong, one line each."""
    lost = stream.lost_samples()
    overloaded = stream.overloaded / max(2 * written, 1)
    status = "interrupted" if interrupted else ("connection dropped" if dropped else "complete")
    done = dict(started)
    done["global"] = {**started["global"], "benchnf:status": status, "benchnf:samples": written,
                      "benchnf:elapsed_s": round(elapsed, 3), "benchnf:overloaded_fraction": overloaded,
                      "benchnf:lost_samples": lost}
    Writer(overwrite=True).json(meta_path, done)  # our own metadata, completed in place
    notes = []
    if dropped:
        notes.append(f"the receiver's connection ended after {written / rate:.2f} s: the {written} samples received "
                     f"are kept in {data_path.name}; check the network and that rtl_tcp is still running")
    if overloaded > OVERLOADED:
        notes.append(f"{100 * overloaded:.3f} % of the I/Q values sit at the converter's rails (overload): lower the "
                     f"tuner gain (--gain) and record again")
    if lost:
        notes.append(f"about {lost} samples were lost on the way ({lost / rate:.2f} s): the network or this computer "
                     f"is too slow for {rate:g} samples/s; choose a lower --rate")
    if error is not None:
        raise AcquisitionError(f"writing {data_path} failed after {written} samples ({error}): disk full or not "
                               f"writable; what was recorded is kept")
    if dropped:
        raise AcquisitionError(notes[0])
    if interrupted and stop is None:
        raise KeyboardInterrupt
    return SdrRecording(meta_path, written, written / rate, overloaded, lost, interrupted, dropped, stream.describe,
                        tuple(notes))
