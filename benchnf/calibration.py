"""Volts per full scale from a reference tone of known RMS voltage.

A sound card has no volt scale.  Feed it a sine whose RMS voltage V_ref was
read on a true-RMS meter; the sine fit gives its peak amplitude A in
full-scale units; then

.. math:: k_{V/FS} = \\frac{\\sqrt{2}\\, V_{ref}}{A}

is the voltage a sample value of 1.0 represents.  A calibration holds only
for the input, gain setting, sample rate and device it was made with; the
file stores them so that a mismatch can be refused.

References
----------
.. [1] IEEE Std 1057-2017 (sine fit), see :mod:`benchnf.dsp.tones`.
.. [2] AES17-2020 (full-scale sine = 0 dBFS).
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import warnings
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from .capture import Capture, SampleStats
from .io.hashing import sha256_of
from .errors import CalibrationError, CalibrationWarning
from .units import fs_to_dbfs

__all__ = ["Calibration", "calibrate_from_tone", "apply_calibration", "DEFAULT_METER_BAND_HZ",
           "CALIBRATION_SCHEMA"]

#: Hand-held true-RMS meters read low above a few hundred hertz (common practice).
DEFAULT_METER_BAND_HZ = (50.0, 640.0)
CALIBRATION_SCHEMA = "benchnf.calibration/1"
_MAX_TONE_SECONDS = 10.0


@dataclass(frozen=True)
class Calibration:
    """A volts-per-full-scale calibration and the conditions it holds for."""

    volts_per_fs: float
    channel: int
    sample_rate_hz: float
    reference_vrms: float
    reference_frequency_hz: float
    reference_level_dbfs: float
    tone_snr_db: float
    made_at: str
    source_file: str | None = None
    source_sha256: str | None = None
    device: str | None = None
    notes: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict with a ``schema`` key."""
        return {"schema": CALIBRATION_SCHEMA, **asdict(self)}

    def save(self, path: str | Path) -> Path:
        """Write to `path` through the one writer; refuse to overwrite an existing file."""
        from .write import Writer
        return Writer().json(path, self.to_dict())

    @classmethod
    def load(cls, path: str | Path) -> "Calibration":
        """Read a calibration file written by :meth:`save`."""
        path = Path(path)
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError as err:
            raise CalibrationError(f"calibration file {path} not found: make one with "
                                   f"'benchnf calibrate'") from err
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as err:
            raise CalibrationError(f"calibration file {path} is not readable JSON ({err})") from err
        if not isinstance(data, dict) or data.get("schema") != CALIBRATION_SCHEMA:
            raise CalibrationError(f"{path} is not a benchnf calibration file "
                                   f"(expected schema {CALIBRATION_SCHEMA!r})")
        data.pop("schema")
        try:
            cal = cls(**data)
        except TypeError as err:
            raise CalibrationError(f"calibration file {path} has unexpected contents ({err})") from err
        _check_fields(cal, path)
        return cal


# Each numeric field of a calibration file and the open range it must lie in.
_FIELD_RANGES = {"volts_per_fs": (0.0, 1e4), "sample_rate_hz": (0.0, 1e9), "reference_vrms": (0.0, 1e3),
                 "reference_frequency_hz": (0.0, 1e9), "reference_level_dbfs": (-400.0, 10.0)}


def _check_fields(cal: "Calibration", path: Path) -> None:
    """Types and ranges of every field: one line naming the file, the key, what was found and expected."""
    for key, (low, high) in _FIELD_RANGES.items():
        value = getattr(cal, key)
        if not (isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
                and low < value <= high):
            raise CalibrationError(f"calibration file {path}: {key}={value!r} must be a number > {low:g} and "
                                   f"<= {high:g}")
    if not (isinstance(cal.channel, int) and not isinstance(cal.channel, bool) and cal.channel >= 0):
        raise CalibrationError(f"calibration file {path}: channel={cal.channel!r} must be a whole number >= 0")
    if not (cal.tone_snr_db is None or isinstance(cal.tone_snr_db, (int, float))):
        raise CalibrationError(f"calibration file {path}: tone_snr_db={cal.tone_snr_db!r} must be a number")
    for key in ("made_at", "source_file", "source_sha256", "device", "notes"):
        value = getattr(cal, key)
        if value is not None and not isinstance(value, str):
            raise CalibrationError(f"calibration file {path}: {key}={value!r} must be text")


def calibrate_from_tone(reference: Capture, *, vrms: float,
                        meter_band_hz: tuple[float, float] = DEFAULT_METER_BAND_HZ,
                        frequency_hz: float | None = None) -> Calibration:
    """Volts per full scale from a capture of a sine of known RMS voltage.

    Parameters
    ----------
    reference : Capture
        The reference tone as the analyzer input sees it.
    vrms : float
        The tone's RMS voltage as read on the meter, in V.
    meter_band_hz : (float, float)
        Band where the meter is trusted; outside it a CalibrationWarning is
        issued.
    frequency_hz : float, optional
        The stated tone frequency; the tone must be found there.

    Returns
    -------
    Calibration

    Raises
    ------
    CalibrationError
        Non-physical voltage, clipped or missing tone.
    """
    from .dsp.tones import fit_sine, locate_tone

    if not (math.isfinite(vrms) and vrms > 0):
        raise CalibrationError(f"--vrms {vrms!r} must be a positive voltage in V RMS")
    lo, hi = meter_band_hz
    if not 0 < lo < hi:
        raise CalibrationError(f"meter band {lo:g}-{hi:g} Hz is not a band")
    samples = reference.read(max_frames=int(_MAX_TONE_SECONDS * reference.sample_rate_hz))
    stats = SampleStats(label=reference.label)
    stats.update(samples)
    stats.check_tone()
    f0 = locate_tone(samples, sample_rate_hz=reference.sample_rate_hz, expected_hz=frequency_hz)
    fit = fit_sine(samples, sample_rate_hz=reference.sample_rate_hz, frequency_hz=f0)
    if not lo <= fit.frequency_hz <= hi:
        warnings.warn(
            f"the reference tone is at {fit.frequency_hz:.0f} Hz, outside the meter's trusted band "
            f"{lo:g}-{hi:g} Hz: hand-held meters read low at high frequencies; use a 50-640 Hz tone "
            f"or state the meter's band", CalibrationWarning, stacklevel=2)
    level_dbfs = float(fs_to_dbfs(fit.rms))
    if level_dbfs < -40.0:
        warnings.warn(f"the reference tone is only {level_dbfs:.1f} dBFS: raise it to -20..-3 dBFS "
                      f"for an accurate calibration", CalibrationWarning, stacklevel=2)
    if fit.snr_db < 40.0:
        warnings.warn(f"the reference tone stands only {fit.snr_db:.0f} dB above noise and "
                      f"distortion: the calibration is uncertain", CalibrationWarning, stacklevel=2)
    meta = reference.metadata
    return Calibration(
        volts_per_fs=math.sqrt(2.0) * vrms / fit.amplitude,
        channel=reference.channel,
        sample_rate_hz=reference.sample_rate_hz,
        reference_vrms=float(vrms),
        reference_frequency_hz=fit.frequency_hz,
        reference_level_dbfs=level_dbfs,
        tone_snr_db=fit.snr_db,
        made_at=_dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        source_file=str(reference.path) if reference.path else None,
        source_sha256=sha256_of(reference.path) if reference.path else None,
        device=meta.get("device"),
        notes=meta.get("notes"),
    )


def apply_calibration(capture: Capture, calibration: Calibration) -> Capture:
    """Return `capture` with the calibration's volts per full scale, if it applies.

    Raises
    ------
    CalibrationError
        The capture's sample rate or channel differ from the calibration's.
    """
    if capture.sample_rate_hz != calibration.sample_rate_hz:
        raise CalibrationError(
            f"{capture.label} was recorded at {capture.sample_rate_hz:g} Hz but the calibration "
            f"was made at {calibration.sample_rate_hz:g} Hz: calibrate at this rate, or give "
            f"--volts-per-fs if you know it still holds")
    if capture.channel != calibration.channel:
        raise CalibrationError(
            f"{capture.label} is read from channel {capture.channel} but the calibration is for "
            f"channel {calibration.channel}: calibrate that channel, or choose --channel "
            f"{calibration.channel}")
    return capture.replace(volts_per_fs=calibration.volts_per_fs)
