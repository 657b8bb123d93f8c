"""Typed gain-method results for tests that need a result with stated figures (INVENTED DATA).

A complete result (the demo's recorded one, tests/golden/expected/demo.results.json.golden) is the template;
the figures a test states replace its own. Spot and spur rows and expanded uncertainties may be given as plain
dicts, as a results JSON holds them.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path
from typing import Any

from benchnf.measure.results import AnalysisResult, SpotValue, SpurValue
from benchnf.noise.uncertainty import Budget, Contribution, Uncertainty

TEMPLATE = Path(__file__).resolve().parent / "golden" / "expected" / "demo.results.json.golden"
_SPOT = {"input_density_v_per_rthz": None, "noise_figure_db": None, "output_density_v_per_rthz": None,
         "floor_margin_db": None, "voltage_noise_v_per_rthz": None}
_SPUR = {"input_vrms": 0.0, "harmonic": None, "excess_db": 10.0}


def expanded(values: dict[str, float]) -> Uncertainty:
    """Budgets whose expanded uncertainties (k = 2) are the stated values (one contribution each)."""
    return Uncertainty({k: Budget(k, 0.0, (Contribution("stated in the test", u / 2, "INVENTED"),))
                        for k, u in values.items()})


def analysis_result(**over: Any) -> AnalysisResult:
    """The template result with the stated fields replaced."""
    base = AnalysisResult.from_dict(json.loads(TEMPLATE.read_text()), where="the test template")
    fields: dict[str, Any] = {}
    for key, value in over.items():
        if key == "uncertainty" and isinstance(value, dict):
            value = expanded(value)
        elif key == "spot":
            value = tuple(v if isinstance(v, SpotValue) else SpotValue(**{**_SPOT, **v}) for v in value)
        elif key == "spurs":
            value = tuple(v if isinstance(v, SpurValue) else SpurValue(**{**_SPUR, **v}) for v in value)
        elif key == "band_hz":
            value = tuple(value)
        fields[key] = value
    return dataclasses.replace(base, **fields)
