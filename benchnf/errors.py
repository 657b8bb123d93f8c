"""Errors and warnings that benchnf raises on purpose.

Every message says what is wrong and what to do.  The command line turns a
:class:`BenchError` into one line on stderr and exit status 2 (3 for a
missing optional dependency).
"""

from __future__ import annotations

import warnings
from collections.abc import Iterator
from contextlib import contextmanager

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
    "ShapeWarning",
    "warnings_into",
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


class ShapeWarning(BenchWarning):
    """A figure rests on an assumption about the response that was not measured."""


@contextmanager
def warnings_into(kept: list[str]) -> Iterator[None]:
    """Our warnings raised inside are kept (their one-line text, once each) for the result to carry; a
    library's pass through unchanged."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", BenchWarning)
        yield
    for w in caught:
        if issubclass(w.category, BenchWarning):
            text = " ".join(str(w.message).split())
            if text not in kept:
                kept.append(text)
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
