"""benchnf: from bench captures to a trustworthy gain, noise density, EIN and noise figure.

The public names are imported on first use, so that ``import benchnf`` (and
``benchnf --help``) stays fast and never touches scipy, matplotlib or audio
hardware.

>>> import benchnf
>>> round(float(benchnf.units.vrms_to_dbu(0.775)), 2)
0.0
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

_PUBLIC = {
    "Capture": "benchnf.capture",
    "open_capture": "benchnf.io",
    "Calibration": "benchnf.calibration",
    "calibrate_from_tone": "benchnf.calibration",
    "apply_calibration": "benchnf.calibration",
    "welch_psd": "benchnf.dsp.spectrum",
    "Psd": "benchnf.dsp.spectrum",
    "fit_sine": "benchnf.dsp.tones",
    "Band": "benchnf.dsp.weighting",
    "GainSetup": "benchnf.analysis",
    "analyze_gain_method": "benchnf.analysis",
    "AnalysisResult": "benchnf.analysis",
}
_SUBMODULES = {"units", "errors", "capture", "io", "dsp", "noise", "analysis", "calibration",
               "report", "cli", "demo"}

__all__ = sorted(_PUBLIC) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    if name in _SUBMODULES:
        return importlib.import_module(f"benchnf.{name}")
    raise AttributeError(f"module 'benchnf' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC) | _SUBMODULES)
