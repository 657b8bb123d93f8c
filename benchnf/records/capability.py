"""Process capability of a limit over many units: Cp, Cpk (within: moving range), Pp, Ppk (overall s),
with a lower confidence bound for Cpk.

- ``Cp = (USL - LSL) / (6 sigma_w)``, ``Cpk = min(USL - mean, mean - LSL) / (3 sigma_w)``; a one-sided limit
  uses its side only. Individuals: ``sigma_w = MR-bar / d2`` with ``d2 = 1.128`` for moving ranges of two.
- ``Pp``, ``Ppk``: the same with the overall sample standard deviation.
- Lower 95 % bound: ``Cpk - 1.645 sqrt(1/(9n) + Cpk^2 / (2(n - 1)))`` (Bissell 1990, from memory).

References
----------
.. [1] NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6 (process capability).
.. [2] D. C. Montgomery, Introduction to Statistical Quality Control (d2 for n = 2: 1.128).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from ..errors import ParameterError

__all__ = ["Capability", "capability", "capability_from", "MIN_UNITS", "D2_PAIRS"]

D2_PAIRS = 1.128
MIN_UNITS = 10
_Z95 = 1.645


@dataclass(frozen=True)
class Capability:
    n: int
    mean: float
    sigma_within: float
    sigma_overall: float
    lsl: float | None
    usl: float | None
    cp: float | None
    cpk: float
    pp: float | None
    ppk: float
    cpk_lower95: float


def _index(mean: float, sigma: float, lsl: float | None, usl: float | None) -> tuple[float | None, float]:
    sides = [s for s in ((usl - mean) if usl is not None else None, (mean - lsl) if lsl is not None else None)
             if s is not None]
    spread = (usl - lsl) / (6 * sigma) if usl is not None and lsl is not None else None
    return spread, min(sides) / (3 * sigma)


def capability_from(*, mean: float, sigma_within: float, sigma_overall: float, n: int, lsl: float | None,
                    usl: float | None) -> Capability:
    """The indices from summary statistics (see the module notes).

    >>> c = capability_from(mean=16.0, sigma_within=2.0, sigma_overall=2.0, n=50, lsl=8.0, usl=20.0)
    >>> round(c.cp, 3), round(c.cpk, 3)
    (1.0, 0.667)
    """
    if lsl is None and usl is None:
        raise ParameterError("capability needs at least one limit (a minimum or a maximum)")
    if not (sigma_within > 0 and sigma_overall > 0):
        raise ParameterError("capability needs a spread: every unit measured the same value")
    cp, cpk = _index(mean, sigma_within, lsl, usl)
    pp, ppk = _index(mean, sigma_overall, lsl, usl)
    bound = cpk - _Z95 * math.sqrt(1 / (9 * n) + cpk * cpk / (2 * (n - 1)))
    return Capability(n, mean, sigma_within, sigma_overall, lsl, usl, cp, cpk, pp, ppk, bound)


def capability(values: Sequence[float], *, lsl: float | None, usl: float | None,
               min_units: int = MIN_UNITS) -> Capability:
    """Capability of individual values in time order (refused with fewer than `min_units`)."""
    x = [float(v) for v in values]
    if len(x) < min_units:
        raise ParameterError(f"capability needs at least {min_units} units, the records hold {len(x)}: "
                             f"check more units first")
    mean = sum(x) / len(x)
    s = math.sqrt(sum((v - mean) ** 2 for v in x) / (len(x) - 1))
    mr = sum(abs(b - a) for a, b in zip(x, x[1:])) / (len(x) - 1)
    return capability_from(mean=mean, sigma_within=mr / D2_PAIRS, sigma_overall=s, n=len(x), lsl=lsl, usl=usl)
