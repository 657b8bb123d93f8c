"""The one way benchnf opens an input: what kind of file it is (audio, SigMF IQ, instrument CSV trace, a
results JSON), its sidecar, and the reader for it. Every front end and every measurement goes through here,
so a suffix, a sidecar name or a reader is decided in one place.

``.csv`` and ``.txt`` files are instrument traces or time series (docs/csv.md); ``.sigmf-meta``,
``.sigmf-data`` and ``.sigmf`` are SigMF recordings; the audio suffixes are read by libsndfile (and WAV/RF64
straight by numpy). A two-channel audio file is read as I and Q only when asked (``iq_centre_hz``).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

from ..errors import CaptureError

__all__ = ["AUDIO_SUFFIXES", "SIGMF_SUFFIXES", "TRACE_SUFFIXES", "InputKind", "TraceReading", "input_kind",
           "is_audio", "open_input", "sidecar_condition"]

#: Audio containers libsndfile reads (one list for every front end).
AUDIO_SUFFIXES = (".wav", ".flac", ".aif", ".aiff", ".w64", ".rf64", ".caf")
SIGMF_SUFFIXES = (".sigmf-meta", ".sigmf-data", ".sigmf")
TRACE_SUFFIXES = (".csv", ".txt")

InputKind = Literal["audio", "sigmf", "trace", "results", "unknown"]


@dataclass(frozen=True)
class TraceReading:
    """How to read an instrument CSV trace (docs/csv.md); None means the file's own statement or the default."""

    rbw_hz: float | None = None
    detector: str | None = None
    reference_ohm: float | None = None
    enbw_ratio: float | None = None


def input_kind(path: str | Path) -> InputKind:
    """What a file is, by its name."""
    name = Path(path).name.lower()
    if name.endswith(SIGMF_SUFFIXES):
        return "sigmf"
    suffix = Path(name).suffix
    if suffix in AUDIO_SUFFIXES:
        return "audio"
    if suffix in TRACE_SUFFIXES:
        return "trace"
    if suffix == ".json":
        return "results"
    return "unknown"


def is_audio(path: str | Path) -> bool:
    return input_kind(path) == "audio"


def open_input(path: str | Path, *, channel: int | None = None, condition: str | None = None,
               accept_dropouts: bool = False, trace: TraceReading | None = None,
               iq_centre_hz: float | None = None) -> Any:
    """Open any capture: a :class:`~benchnf.capture.Capture` (audio, with its sidecar), an
    :class:`~benchnf.io.sigmf_iq.IqCapture` (SigMF, or two-channel audio read as I/Q at `iq_centre_hz`), or a
    :class:`~benchnf.dsp.spectrum.Psd` / Capture from an instrument CSV.

    Raises
    ------
    CaptureError
        A file of no kind benchnf reads (one line naming the kinds it does).
    """
    path = Path(path)
    kind = input_kind(path)
    if kind == "sigmf":
        from .sigmf_iq import open_sigmf
        return open_sigmf(path)
    if kind == "trace":
        from .csv_trace import load_csv
        t = trace or TraceReading()
        return load_csv(path, rbw_hz=t.rbw_hz, detector=t.detector, reference_ohm=t.reference_ohm,
                        enbw_ratio=t.enbw_ratio)
    if kind == "audio" and iq_centre_hz is not None:
        from .sigmf_iq import open_wav_iq
        return open_wav_iq(path, centre_hz=iq_centre_hz)
    if kind == "audio":
        from .audio_file import open_capture
        return open_capture(path, channel=channel, condition=condition, accept_dropouts=accept_dropouts)
    if kind == "results":
        raise CaptureError(f"{path.name} is a results JSON, not a capture: give the capture it was made from")
    raise CaptureError(f"{path.name}: benchnf reads audio ({', '.join(AUDIO_SUFFIXES)}), SigMF "
                       f"(.sigmf-meta) and instrument traces (.csv); convert the file to one of those")


def sidecar_condition(path: str | Path) -> str | None:
    """The condition a capture's sidecar states (``terminated``, ``tone``...), None where it states none.

    The sidecar is read and checked as the capture's opener reads it (a bad sidecar is refused in one line).
    """
    from .sidecar import read_sidecar
    value = read_sidecar(Path(path)).get("condition")
    return str(value) if value is not None else None
