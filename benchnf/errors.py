"""Errors and warnings that benchnf raises on purpose.

Every message says what is wrong and what to do.  The command line turns a
:class:`BenchError` into one line on stderr and exit status 2 (3 for a
missing optional dependency).
"""

from __future__ import annotations

__all__ = [
    "BenchError",
    "CaptureError",
    "CalibrationError",
    "ParameterError",
    "MeasurementError",
    "MissingDependencyError",
    "OutputError",
    "AcquisitionError",
    "DeviceNotFoundError",
    "BenchWarning",
    "ClippingWarning",
    "FloorMarginWarning",
    "CalibrationWarning",
]


class BenchError(Exception):
    """Base of every error benchnf raises on purpose."""


class CaptureError(BenchError, ValueError):
    """A capture cannot be read or is not fit for the analysis asked of it."""


class CalibrationError(BenchError, ValueError):
    """A calibration value is missing, non-physical or does not apply."""


class ParameterError(BenchError, ValueError):
    """A parameter is outside its physical or allowed range."""


class MeasurementError(BenchError, ValueError):
    """The captures do not support the result asked for (no tone, no margin over the floor...)."""


class OutputError(BenchError, OSError):
    """An output cannot be written where asked (exists, is an input, no folder, no space, no permission)."""


class MissingDependencyError(BenchError, ImportError):
    """An optional library is not installed."""


class AcquisitionError(BenchError, RuntimeError):
    """A sound device could not be found, opened or read; or a recording is not fit."""


class DeviceNotFoundError(AcquisitionError):
    """No audio device matches (exit status 3, like a missing dependency)."""


class BenchWarning(UserWarning):
    """Base of benchnf's warnings."""


class ClippingWarning(BenchWarning):
    """A capture reached full scale."""


class FloorMarginWarning(BenchWarning):
    """The device under test is less than 3 dB above the analyzer's floor."""


class CalibrationWarning(BenchWarning):
    """A calibration was made under doubtful conditions."""
