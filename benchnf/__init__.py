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
    # every measurement and its result types
    "GainSetup": "benchnf.measure.gain",
    "GainEstimate": "benchnf.measure.gain",
    "analyze_gain_method": "benchnf.measure.gain_method",
    "AnalysisResult": "benchnf.measure.results",
    "AnalysisSpectra": "benchnf.measure.results",
    "SpotValue": "benchnf.measure.results",
    "SpurValue": "benchnf.measure.results",
    "RepeatSummary": "benchnf.measure.results",
    "analyze_yfactor": "benchnf.measure.yfactor",
    "HotColdSource": "benchnf.measure.yfactor",
    "PassiveStage": "benchnf.measure.yfactor_passive",
    "YFactorResult": "benchnf.measure.yfactor_result",
    "YRow": "benchnf.measure.yfactor_result",
    "measured_budget": "benchnf.measure.stages",
    "BudgetResult": "benchnf.measure.stages",
    "TapResult": "benchnf.measure.stages",
    "extract_en_in": "benchnf.measure.stages",
    "EniResult": "benchnf.measure.stages",
    "Chain": "benchnf.noise.cascade",
    "Stage": "benchnf.noise.cascade",
    "load_chain": "benchnf.noise.cascade",
    "predict": "benchnf.noise.cascade",
    "CascadeResult": "benchnf.noise.cascade",
    "CascadePrediction": "benchnf.measure.cascade",
    "run_cascade": "benchnf.measure.cascade",
    "Profile": "benchnf.check.profile",
    "load_profile": "benchnf.check.profile",
    "check_results": "benchnf.check.limits",
    "CheckResult": "benchnf.check.limits",
    "Writer": "benchnf.write",
    "read_result": "benchnf.registry",
    "Quantity": "benchnf.quantity",
}
_SUBMODULES = {"units", "errors", "capture", "io", "dsp", "noise", "measure", "calibration",
               "report", "cli", "demo", "check", "write", "registry", "codec", "records"}

__all__ = sorted(_PUBLIC) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    if name in _SUBMODULES:
        return importlib.import_module(f"benchnf.{name}")
    raise AttributeError(f"module 'benchnf' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC) | _SUBMODULES)
