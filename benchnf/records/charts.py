"""Individuals and moving-range control chart of one figure over units, with the usual run rules.

- Individuals chart: centre x-bar, limits ``x-bar +/- 2.660 MR-bar`` (3/d2, d2 = 1.128 for ranges of two).
- Moving-range chart: centre MR-bar, upper limit ``3.267 MR-bar`` (D4), lower 0.
- Run rules (Western Electric Statistical Quality Control Handbook, 1956; from memory): 1 a point beyond
  3 sigma; 2 two of three beyond 2 sigma on one side; 3 four of five beyond 1 sigma on one side; 4 eight
  in a row on one side of the centre line. sigma = MR-bar / 1.128.

Constants: the standard control-chart tables (ASTM E2587; Montgomery, Introduction to Statistical Quality
Control); common practice.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from ..errors import ParameterError

__all__ = ["ControlChart", "control_chart", "E2", "D4", "RUN_RULES"]

#: Each run rule's number and what it says, as shown in reports.
RUN_RULES = {1: "a point beyond 3 sigma", 2: "two of three points beyond 2 sigma on one side",
             3: "four of five points beyond 1 sigma on one side", 4: "eight points in a row on one side of the centre"}

E2 = 2.660
D4 = 3.267
_D2 = 1.128


@dataclass(frozen=True)
class ControlChart:
    values: tuple[float, ...]
    centre: float
    lower: float
    upper: float
    moving_ranges: tuple[float, ...]
    mr_centre: float
    mr_upper: float
    signals: tuple[tuple[int, int], ...]  # (index of the point, rule number 1-4)


def _side_runs(z: Sequence[float], need: int, window: int, beyond: float) -> list[int]:
    hits = []
    for i in range(window - 1, len(z)):
        part = z[i - window + 1:i + 1]
        for sign in (1, -1):
            if sum(1 for v in part if sign * v > beyond) >= need and sign * z[i] > beyond:
                hits.append(i)
    return hits


def control_chart(values: Sequence[float]) -> ControlChart:
    """The I-MR chart of `values` in time order and the points that break a run rule."""
    x = [float(v) for v in values]
    if len(x) < 3:
        raise ParameterError(f"a control chart needs at least 3 units, the records hold {len(x)}")
    mean = sum(x) / len(x)
    mr = [abs(b - a) for a, b in zip(x, x[1:])]
    mr_bar = sum(mr) / len(mr)
    sigma = mr_bar / _D2
    z = [(v - mean) / sigma if sigma > 0 else 0.0 for v in x]
    signals = [(i, 1) for i, v in enumerate(z) if abs(v) > 3]
    signals += [(i, 2) for i in _side_runs(z, 2, 3, 2.0)]
    signals += [(i, 3) for i in _side_runs(z, 4, 5, 1.0)]
    signals += [(i, 4) for i in _side_runs(z, 8, 8, 0.0)]
    return ControlChart(tuple(x), mean, mean - E2 * mr_bar, mean + E2 * mr_bar, tuple(mr), mr_bar, D4 * mr_bar,
                        tuple(sorted(set(signals))))
