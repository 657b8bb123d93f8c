"""SDR IQ recordings: SigMF (through the `sigmf` package) and two-channel WAV as I/Q.

A SigMF recording is ``name.sigmf-meta`` (JSON) beside ``name.sigmf-data``.
benchnf needs a complex datatype (``cf32_le``, ``ci16_le``, ...) and
``core:sample_rate``; the centre frequency comes from the first capture's
``core:frequency``.  Annotations labelled ``hot`` or ``cold`` mark segments of
one recording (alternating noise-source states).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .._optional import require
from ..errors import CaptureError, ParameterError

__all__ = ["IqCapture", "open_sigmf", "open_wav_iq", "write_sigmf"]

_BLOCK = 1 << 16


@dataclass(frozen=True)
class IqCapture:
    """Complex samples in full-scale units with their centre frequency.

    Attributes
    ----------
    sample_rate_hz, centre_hz : float
        Complex sample rate and the RF frequency of 0 Hz in the baseband.
    n_frames : int
        Samples in the recording (or in this segment of it).
    start : int
        First sample of this segment in the recording.
    label : str
        For messages.
    segments : tuple[tuple[str, int, int], ...]
        (label, start, count) of annotated segments.
    """

    sample_rate_hz: float
    centre_hz: float
    n_frames: int
    label: str
    start: int = 0
    segments: tuple[tuple[str, int, int], ...] = ()
    metadata: dict[str, Any] = field(default_factory=dict)
    path: Path | None = None
    _read: Any = field(default=None, repr=False, compare=False)

    def blocks(self, block_frames: int = _BLOCK) -> Iterator[NDArray[np.complex128]]:
        """Yield the samples in complex128 blocks."""
        for s in range(self.start, self.start + self.n_frames, block_frames):
            count = min(block_frames, self.start + self.n_frames - s)
            yield self._read(s, count)

    def segment(self, label: str) -> list["IqCapture"]:
        """The annotated segments with this label, as captures of their own."""
        from dataclasses import replace
        return [replace(self, start=s, n_frames=c, label=f"{self.label} [{lab} @ {s}]", segments=())
                for lab, s, c in self.segments if lab == label]


def _check_meta_shape(meta_path: Path) -> None:
    """The metadata's outline (global object, captures and annotations lists of objects) before the sigmf
    library reads it: that library fails with a bare AttributeError on some malformed files."""
    import json
    try:
        meta = json.loads(meta_path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError) as err:
        raise CaptureError(f"{meta_path} is not a readable SigMF recording ({err})") from err
    if not isinstance(meta, dict) or not isinstance(meta.get("global"), dict):
        raise CaptureError(f"{meta_path}: the SigMF metadata must be an object with a 'global' object")
    for key in ("captures", "annotations"):
        rows = meta.get(key, [])
        if not (isinstance(rows, list) and all(isinstance(r, dict) for r in rows)):
            raise CaptureError(f"{meta_path}: '{key}' must be a list of objects (SigMF core)")


def open_sigmf(path: str | Path) -> IqCapture:
    """Open a SigMF recording (give the .sigmf-meta, the .sigmf-data or the base name)."""
    sigmffile = require("sigmf.sigmffile", extra=None, purpose="reading SigMF recordings")
    errors = require("sigmf.error", extra=None, purpose="reading SigMF recordings")
    path = Path(path)
    base = path.with_suffix("") if path.suffix in (".sigmf-meta", ".sigmf-data") else path
    meta_path = base.with_name(base.name + ".sigmf-meta")  # exactly: 'hot.2' is not 'hot'
    if not meta_path.is_file():
        raise CaptureError(f"{meta_path}: no such SigMF metadata file")
    _check_meta_shape(meta_path)
    try:
        rec = sigmffile.fromfile(str(meta_path))
    except (errors.SigMFError, ValueError, OSError, KeyError) as err:
        raise CaptureError(f"{meta_path} is not a readable SigMF recording ({err})") from err
    g = rec.get_global_info()
    datatype = str(g.get("core:datatype", ""))
    if not datatype.startswith("c"):
        raise CaptureError(f"{meta_path.name}: datatype {datatype!r} is not complex IQ; benchnf reads "
                           f"complex SigMF recordings (cf32_le, ci16_le, ...)")
    rate = g.get("core:sample_rate")
    if rate is None:
        raise CaptureError(f"{meta_path.name} states no core:sample_rate: add it to the metadata")
    from .toml_file import number
    try:
        rate = number(rate, where=str(meta_path), key="core:sample_rate", low=0.0, high=1e12, low_open=True)
        captures = rec.get_captures()
        if not isinstance(captures, list) or not all(isinstance(c, dict) for c in captures):
            raise CaptureError(f"{meta_path}: 'captures' must be a list of objects (SigMF core)")
        centre = (number(captures[0].get("core:frequency", 0.0), where=str(meta_path), key="core:frequency",
                         low=0.0, high=1e12) if captures else 0.0)
    except ParameterError as err:
        raise CaptureError(str(err)) from None
    try:
        total = int(rec.sample_count)
    except (AttributeError, TypeError):
        total = int(len(rec.read_samples()))
    if total <= 0:
        raise CaptureError(f"{meta_path.name} holds no samples")
    segments = []
    for a in rec.get_annotations():
        lab = str(a.get("core:label", "")).strip().lower()
        if lab in ("hot", "cold"):
            segments.append((lab, int(a["core:sample_start"]), int(a.get("core:sample_count", 0))))

    def read(start: int, count: int) -> NDArray[np.complex128]:
        try:
            return np.asarray(rec.read_samples(start_index=start, count=count), dtype=np.complex128)
        except (errors.SigMFError, ValueError, OSError) as err:
            raise CaptureError(f"{meta_path.name} could not be read ({err})") from err

    return IqCapture(float(rate), centre, total, meta_path.name, 0, tuple(segments),
                     {"datatype": datatype, **{k: v for k, v in g.items() if isinstance(v, (str, int, float))}},
                     meta_path, read)


def open_wav_iq(path: str | Path, *, centre_hz: float) -> IqCapture:
    """A two-channel audio file read as I (channel 0) and Q (channel 1)."""
    from .audio_file import open_capture
    cap = open_capture(path)
    if cap.n_channels != 2:
        raise CaptureError(f"{cap.label} has {cap.n_channels} channel(s): I/Q needs exactly two")
    sf = require("soundfile", extra=None, purpose="reading audio captures")

    def read(start: int, count: int) -> NDArray[np.complex128]:
        with sf.SoundFile(str(cap.path)) as fh:
            fh.seek(start)
            d = fh.read(count, dtype="float64", always_2d=True)
        return d[:, 0] + 1j * d[:, 1]

    return IqCapture(cap.sample_rate_hz, float(centre_hz), cap.n_frames, cap.label, 0, (),
                     dict(cap.metadata), cap.path, read)


def write_sigmf(base: str | Path, samples: NDArray[np.complexfloating], *, sample_rate_hz: float,
                centre_hz: float, datatype: str = "ci16_le", annotations: Sequence[tuple[str, int, int]] = (),
                description: str = "") -> Path:
    """Write complex samples (full scale 1.0) as a SigMF recording; never overwrite."""
    sigmffile = require("sigmf.sigmffile", extra=None, purpose="writing SigMF recordings")
    base = Path(base)
    data_path = base.with_name(base.name + ".sigmf-data")
    meta_path = base.with_name(base.name + ".sigmf-meta")
    for p in (data_path, meta_path):
        if p.exists():
            raise CaptureError(f"{p} exists already: choose another name")
    x = np.asarray(samples)
    if datatype == "ci16_le":
        inter = np.empty(2 * x.size, dtype="<i2")
        inter[0::2] = np.clip(np.round(x.real * 32767), -32768, 32767)
        inter[1::2] = np.clip(np.round(x.imag * 32767), -32768, 32767)
    elif datatype == "cf32_le":
        inter = np.empty(2 * x.size, dtype="<f4")
        inter[0::2], inter[1::2] = x.real, x.imag
    else:
        raise CaptureError(f"writing datatype {datatype!r} is not supported (ci16_le, cf32_le)")
    inter.tofile(data_path)
    rec = sigmffile.SigMFFile(data_file=str(data_path), global_info={
        "core:datatype": datatype, "core:sample_rate": float(sample_rate_hz),
        "core:description": description, "core:recorder": "benchnf"})
    rec.add_capture(0, metadata={"core:frequency": float(centre_hz)})
    for label, start, count in annotations:
        rec.add_annotation(start, count, metadata={"core:label": label})
    rec.tofile(str(meta_path))
    return meta_path
