"""Making result dicts JSON-safe: NaN and infinities become null, numpy scalars plain numbers."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

__all__ = ["json_safe"]


def json_safe(value: Any) -> Any:
    """A copy of `value` that json.dump(..., allow_nan=False) accepts."""
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    if isinstance(value, np.integer):
        return int(value)
    return value
