"""SDR IQ recordings: SigMF (through the `sigmf` package) and two-channel WAV as I/Q.

A SigMF recording is ``name.sigmf-meta`` (JSON) beside ``name.sigmf-data``.
benchnf needs a complex datatype (``cf32_le``, ``ci16_le``, ...) and
``core:sample_rate``; the centre frequency comes from the first capture's
``core:frequency``.  Annotations labelled ``hot`` or ``cold`` mark segments of
one recording (alternating noise-source states).
"""

from __future__ import annotations

import re
import warnings

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from .._optional import require
from ..errors import CaptureError, ParameterError

__all__ = ["IqCapture", "open_sigmf", "open_wav_iq", "write_sigmf", "OVERLOADED"]

_BLOCK = 1 << 16
#: A larger fraction of a receiver's I/Q values at the converter's rails is an overload (common practice).
OVERLOADED = 1e-4


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

    @property
    def rails(self) -> tuple[float, float] | None:
        """The lowest and highest values the converter's integer codes give after scaling to full scale
        (cu8/ci8: -1 and 127/128), or None for floating-point samples, which have no rails."""
        match = _DATATYPE.match(str(self.metadata.get("datatype", "")))
        if match is None or match.group(2)[0] == "f":
            return None
        half = 2.0 ** (int(match.group(2)[1:]) - 1)
        return -1.0, (half - 1) / half

    def segment(self, label: str) -> list["IqCapture"]:
        """The annotated segments with this label, as captures of their own."""
        from dataclasses import replace
        return [replace(self, start=s, n_frames=c, label=f"{self.label} [{lab} @ {s}]", segments=())
                for lab, s, c in self.segments if lab == label]


_DATATYPE = re.compile(r"^(c|r)(f64|f32|i32|i16|u32|u16|i8|u8)(_le|_be)?$")
_SAMPLE_BYTES = {"64": 8, "32": 4, "16": 2, "8": 1}


def _fail(meta_path: Path, what: str) -> CaptureError:
    return CaptureError(f"{meta_path}: {what} (SigMF core); correct the metadata or record again")


def _is_int(v: Any, low: int = 0) -> bool:
    return isinstance(v, int) and not isinstance(v, bool) and v >= low


def _check_meta_shape(meta_path: Path) -> None:
    """The metadata's outline and every value benchnf uses, before the sigmf library reads it (that library
    fails with bare errors on some malformed files): a global object with a string datatype, a whole number of
    channels, a positive sample rate; captures and annotations as lists of objects with whole-number starts and
    counts; and a data file that holds a whole number of samples of the stated type."""
    import json
    try:
        meta = json.loads(meta_path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError) as err:
        raise CaptureError(f"{meta_path} is not a readable SigMF recording ({err})") from err
    if not isinstance(meta, dict) or not isinstance(meta.get("global"), dict):
        raise _fail(meta_path, "the SigMF metadata must be an object with a 'global' object")
    g = meta["global"]
    datatype = g.get("core:datatype")
    if not (isinstance(datatype, str) and _DATATYPE.match(datatype)):
        raise _fail(meta_path, f"core:datatype {datatype!r} is not a SigMF sample type such as cf32_le or ci16_le")
    channels = g.get("core:num_channels", 1)
    if not _is_int(channels, 1):
        raise _fail(meta_path, f"core:num_channels {channels!r} must be a whole number >= 1")
    if channels != 1:
        raise CaptureError(f"{meta_path}: {channels} channels; benchnf reads one-channel IQ recordings: record one "
                           f"receiver channel per file")
    rate = g.get("core:sample_rate")
    if rate is not None and not (isinstance(rate, (int, float)) and not isinstance(rate, bool) and rate > 0):
        raise _fail(meta_path, f"core:sample_rate {rate!r} must be a number > 0")
    for key, fields in (("captures", ("core:sample_start",)), ("annotations", ("core:sample_start", "core:sample_count"))):
        rows = meta.get(key, [])
        if not (isinstance(rows, list) and all(isinstance(r, dict) for r in rows)):
            raise _fail(meta_path, f"'{key}' must be a list of objects")
        for row in rows:
            for f in fields:
                if f in row and not _is_int(row[f]):
                    raise _fail(meta_path, f"{key} {f} {row[f]!r} must be a whole number >= 0")
            freq = row.get("core:frequency")
            if freq is not None and not (isinstance(freq, (int, float)) and not isinstance(freq, bool)):
                raise _fail(meta_path, f"{key} core:frequency {freq!r} must be a number")
            if "core:label" in row and not isinstance(row["core:label"], str):
                raise _fail(meta_path, f"{key} core:label {row['core:label']!r} must be text")
    _check_data_size(meta_path, datatype, channels)


def _check_data_size(meta_path: Path, datatype: str, channels: int) -> None:
    """Refuse a sample type that does not fit the data: the file must hold whole samples of it."""
    data_path = meta_path.with_name(meta_path.name[: -len(".sigmf-meta")] + ".sigmf-data")
    if not data_path.is_file():
        return  # the sigmf library names the missing data file
    match = _DATATYPE.match(datatype)
    if match is None:
        return
    per_sample = _SAMPLE_BYTES[match.group(2)[1:]] * (2 if datatype.startswith("c") else 1)
    size = data_path.stat().st_size
    if size % (per_sample * channels):
        raise _fail(meta_path, f"the data file holds {size} bytes, not a whole number of {datatype} samples "
                               f"({per_sample * channels} bytes each): the stated sample type does not fit the data")


def _check_samples(meta_path: Path, datatype: str, rec: Any, errors: Any) -> None:
    """Refuse samples that cannot be of the stated type: a float type must give finite values of
    sensible size (bytes of another type read as floats give NaN, infinities and 1e30s), an integer type
    must not sit at full scale (bytes of floats read as integers spread over the whole range)."""
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            x = np.asarray(rec.read_samples(start_index=0, count=min(int(rec.sample_count), 65_536)),
                           dtype=np.complex128)
        except (errors.SigMFError, ValueError, OSError, TypeError) as err:
            raise CaptureError(f"{meta_path.name} could not be read ({err})") from err
        parts = np.concatenate([x.real, x.imag])
        odd = (not np.all(np.isfinite(parts)) or float(np.max(np.abs(parts), initial=0.0)) > 1e6
               if datatype[1] == "f" else float(np.mean(np.abs(parts) >= 0.999)) > 0.01)
    if odd:
        raise CaptureError(f"{meta_path.name}: the samples do not look like {datatype} (non-finite, absurdly large, "
                           f"or at full scale throughout): the stated sample type does not fit the data; correct "
                           f"core:datatype, or record again with the receiver's gain lowered")


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
    datatype = str(g["core:datatype"])
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
    over = g.get("benchnf:overloaded_fraction", 0)
    if isinstance(over, (int, float)) and over > OVERLOADED:
        raise CaptureError(f"{meta_path.name}: {100 * over:.3f} % of its I/Q values sit at the converter's rails: the "
                           f"receiver was overloaded, which compresses the hot state; record again with less --gain")
    _check_samples(meta_path, datatype, rec, errors)
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
