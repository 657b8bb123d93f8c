"""Gauge repeatability and reproducibility (GR&R) of a figure by the ANOVA method.

The same units (parts) measured by several stations or operators (appraisers), each unit repeatedly: a
crossed two-factor design with p parts, o appraisers and r trials per cell. With x̄ the grand mean, x̄_i
the part means, x̄_j the appraiser means and x̄_ij the cell means:

    SS_P  = o r Σ_i (x̄_i - x̄)²                df_P  = p - 1
    SS_A  = p r Σ_j (x̄_j - x̄)²                df_A  = o - 1
    SS_E  = Σ_ijk (x_ijk - x̄_ij)²             df_E  = p o (r - 1)        (equipment: within the cells)
    SS_AP = SS_T - SS_P - SS_A - SS_E         df_AP = (p - 1)(o - 1)      (appraiser by part)
    MS = SS / df

    repeatability   σ²_E  = MS_E
    interaction     σ²_AP = (MS_AP - MS_E) / r
    appraiser       σ²_A  = (MS_A - MS_AP) / (p r)
    part            σ²_P  = (MS_P - MS_AP) / (o r)
    reproducibility σ²_R  = σ²_A + σ²_AP,   GRR² = σ²_E + σ²_R,   TV² = GRR² + σ²_P

with a negative component taken as zero. When the interaction is not significant (F = MS_AP / MS_E with
p-value >= 0.05) it is pooled with the repeatability: SS_E and df_E then include SS_AP and df_AP, and
σ²_A = (MS_A - MS_E)/(p r), σ²_P = (MS_P - MS_E)/(o r). Then %GRR = 100 GRR / TV, the percentage of a
tolerance width W is 100 · 6 GRR / W, and the number of distinct categories ndc = ⌊1.41 σ_P / GRR⌋.

References
----------
.. [1] AIAG, Measurement Systems Analysis Reference Manual, 4th ed., 2010, chapter III, section B: the ANOVA
       method of GR&R and its table of variance components (from memory; the pooling rule at 0.05 and the
       6-sigma width of the tolerance percentage as there, from memory).
.. [2] D. C. Montgomery, Design and Analysis of Experiments: the two-factor random-effects model and its
       expected mean squares.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..codec import figure as described
from ..errors import ParameterError

__all__ = ["GrrResult", "gauge_rr", "unit_means", "MIN_PARTS", "MIN_APPRAISERS", "MIN_TRIALS"]

MIN_PARTS = 5  # below this the part variation, and so %GRR and ndc, mean little
MIN_APPRAISERS = 2
MIN_TRIALS = 2
POOLING_P = 0.05


@dataclass(frozen=True)
class GrrResult:
    """A GR&R study of one figure: standard deviations of each component, the ANOVA table, the percentages."""

    figure: str
    by: str
    parts: tuple[str, ...]
    appraisers: tuple[str, ...]
    trials: int
    repeatability_sd: float = described(minimum=0)
    reproducibility_sd: float = described(minimum=0)
    appraiser_sd: float = described(minimum=0)
    interaction_sd: float = described(minimum=0)
    grr_sd: float = described(minimum=0)
    part_sd: float = described(minimum=0)
    total_sd: float = described(minimum=0)
    grr_percent_of_variation: float = described(minimum=0)
    ndc: int = described(minimum=0)
    interaction_f: float | None = None
    interaction_p: float | None = None
    interaction_pooled: bool = False
    tolerance_width: float | None = None
    grr_percent_of_tolerance: float | None = None
    anova: tuple[tuple[str, float, int, float], ...] = ()  # (source, SS, df, MS)
    notes: tuple[str, ...] = ()

    def percent_of_variation(self, sd: float) -> float:
        return 100.0 * sd / self.total_sd if self.total_sd > 0 else math.nan

    def to_dict(self) -> dict[str, Any]:
        from ..codec import to_data
        return {"kind": "grr", **to_data(self)}


def _cube(rows: Sequence[tuple[str, str, float]]) -> tuple[list[str], list[str], np.ndarray, list[str]]:
    """The values as an array [part, appraiser, trial]; each cell keeps its first r values (r the fewest)."""
    parts = sorted({p for p, _a, _v in rows})
    apps = sorted({a for _p, a, _v in rows})
    cells: dict[tuple[str, str], list[float]] = {}
    for p, a, v in rows:
        cells.setdefault((p, a), []).append(float(v))
    missing = [(p, a) for p in parts for a in apps if (p, a) not in cells]
    if missing:
        raise ParameterError(f"unit {missing[0][0]} has no record by {missing[0][1]}: a GR&R study needs every unit "
                             f"measured by every station (or operator)")
    r = min(len(v) for v in cells.values())
    notes = []
    if any(len(v) > r for v in cells.values()):
        notes.append(f"each unit and {r} trial(s) per station used (the first {r} of each; some had more)")
    x = np.array([[cells[(p, a)][:r] for a in apps] for p in parts], dtype=float)
    return parts, apps, x, notes


def _f_sf(f: float, d1: int, d2: int) -> float:
    from scipy import stats
    return float(stats.f.sf(f, d1, d2))


def gauge_rr(rows: Sequence[tuple[str, str, float]], *, figure_name: str, by: str = "station",
             tolerance_width: float | None = None) -> GrrResult:
    """The ANOVA GR&R of (part, appraiser, value) rows (see the module's equations).

    Raises
    ------
    ParameterError
        Fewer than MIN_PARTS parts, MIN_APPRAISERS appraisers or MIN_TRIALS trials per cell; a unit not
        measured by every appraiser.
    """
    parts, apps, x, notes = _cube(rows)
    p, o, r = x.shape
    for have, need, what in ((p, MIN_PARTS, "units, each measured by every " + by),
                             (o, MIN_APPRAISERS, f"{by}s measuring the same units"),
                             (r, MIN_TRIALS, f"trials of each unit by each {by}")):
        if have < need:
            raise ParameterError(f"a GR&R study needs at least {need} {what}; the records of {figure_name} have "
                                 f"{have}: record more checks")
    grand = x.mean()
    ss_p = o * r * float(((x.mean(axis=(1, 2)) - grand) ** 2).sum())
    ss_a = p * r * float(((x.mean(axis=(0, 2)) - grand) ** 2).sum())
    ss_e = float(((x - x.mean(axis=2, keepdims=True)) ** 2).sum())
    ss_t = float(((x - grand) ** 2).sum())
    ss_ap = max(ss_t - ss_p - ss_a - ss_e, 0.0)
    df_p, df_a, df_ap, df_e = p - 1, o - 1, (p - 1) * (o - 1), p * o * (r - 1)
    ms_p, ms_a, ms_ap, ms_e = ss_p / df_p, ss_a / df_a, ss_ap / df_ap, ss_e / df_e
    f_ap = ms_ap / ms_e if ms_e > 0 else math.inf
    p_ap = _f_sf(f_ap, df_ap, df_e) if math.isfinite(f_ap) else 0.0
    pooled = p_ap >= POOLING_P
    anova = [("part", ss_p, df_p, ms_p), (by, ss_a, df_a, ms_a)]
    if pooled:
        ms_pool = (ss_ap + ss_e) / (df_ap + df_e)
        var_e, var_ap = ms_pool, 0.0
        var_a, var_p = max((ms_a - ms_pool) / (p * r), 0.0), max((ms_p - ms_pool) / (o * r), 0.0)
        anova.append(("repeatability (pooled with the interaction)", ss_ap + ss_e, df_ap + df_e, ms_pool))
    else:
        var_e, var_ap = ms_e, max((ms_ap - ms_e) / r, 0.0)
        var_a, var_p = max((ms_a - ms_ap) / (p * r), 0.0), max((ms_p - ms_ap) / (o * r), 0.0)
        anova += [(f"{by} by part", ss_ap, df_ap, ms_ap), ("repeatability", ss_e, df_e, ms_e)]
    anova.append(("total", ss_t, p * o * r - 1, ss_t / (p * o * r - 1)))
    grr = math.sqrt(var_e + var_a + var_ap)
    total = math.sqrt(grr ** 2 + var_p)
    return GrrResult(
        figure_name, by, tuple(parts), tuple(apps), r, math.sqrt(var_e), math.sqrt(var_a + var_ap), math.sqrt(var_a),
        math.sqrt(var_ap), grr, math.sqrt(var_p), total, 100.0 * grr / total if total > 0 else 0.0,
        int(math.floor(1.41 * math.sqrt(var_p) / grr)) if grr > 0 else 0, f_ap if math.isfinite(f_ap) else None,
        p_ap, pooled, tolerance_width,
        600.0 * grr / tolerance_width if tolerance_width else None, tuple(anova), tuple(notes))


def unit_means(rows: Sequence[tuple[str, str, float]], study: GrrResult) -> dict[str, list[float]]:
    """Each appraiser's mean of each unit (in the study's order of units), for the plot of units."""
    parts, apps, x, _notes = _cube(rows)
    return {a: [float(v) for v in x[:, j, :study.trials].mean(axis=1)] for j, a in enumerate(apps)}
