"""The measurement layer every front end shares.

* :mod:`~benchnf.measure.inputs`: resolving what the user gave (the one priority rule).
* :mod:`~benchnf.measure.gain_method`, :mod:`~benchnf.measure.yfactor`, :mod:`~benchnf.measure.stages`: each
  measurement as named steps, from validated inputs to a frozen result.
* :mod:`~benchnf.measure.gain`, :mod:`~benchnf.measure.noise_inputs`, :mod:`~benchnf.measure.results`: their
  shared parts.

The measurement modules load numpy and scipy, so they are imported on first use of their names.
"""

from __future__ import annotations

import importlib
from typing import Any

from .inputs import agree, distinct_files, open_calibrated

_LAZY = {
    "GainSetup": "gain", "GainEstimate": "gain", "measure_gain": "gain",
    "capture_psd": "noise_inputs",
    "AnalysisResult": "results", "AnalysisSpectra": "results", "SpotValue": "results", "SpurValue": "results",
    "RepeatSummary": "results",
    "analyze_gain_method": "gain_method",
    "analyze_yfactor": "yfactor", "HotColdSource": "yfactor", "PassiveStage": "yfactor_passive", "YFactorResult": "yfactor",
    "YRow": "yfactor",
    "measured_budget": "stages", "BudgetResult": "stages", "TapResult": "stages", "extract_en_in": "stages",
    "EniResult": "stages",
}

__all__ = ["agree", "distinct_files", "open_calibrated", *sorted(_LAZY)]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        return getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
