"""The view of a gauge R&R study: each component of variation as a standard deviation and a share of the total,
the number of distinct categories, the ANOVA table, and two plots (the components; each unit's mean by station
or operator)."""

from __future__ import annotations

from ..quantity import Quantity
from ..records.grr import GrrResult
from .view import Headline, Plot, Table, Trace, View, values

__all__ = ["present_grr"]


def _unit_of(figure: str) -> str:
    """The unit a spread of the figure is in: dB for levels in dB (dBu, dBV, dB), else none stated."""
    return "dB" if figure.endswith(("_db", "_dbu", "_dbv")) else ""


def _level_unit(figure: str) -> str:
    return next((u for end, u in (("_dbu", "dBu"), ("_dbv", "dBV"), ("_db", "dB"), ("_hz", "Hz")) if figure.endswith(end)),
                "")


def present_grr(g: GrrResult, unit_means: dict[str, list[float]] | None = None) -> View:
    """The study's view; `unit_means` (appraiser -> the mean of each unit, in the order of ``g.parts``) adds
    the plot of units by appraiser."""
    unit = _unit_of(g.figure)
    pct = g.percent_of_variation
    head = (Headline("repeatability (equipment)", Quantity(g.repeatability_sd, unit, digits=4),
                     f"{pct(g.repeatability_sd):.1f} % of total variation", "repeatability_sd"),
            Headline(f"reproducibility ({g.by}s)", Quantity(g.reproducibility_sd, unit, digits=4),
                     f"{pct(g.reproducibility_sd):.1f} % of total variation", "reproducibility_sd"),
            Headline("gauge R&R", Quantity(g.grr_sd, unit, digits=4), f"{g.grr_percent_of_variation:.1f} % of total "
                     f"variation" + (f", {g.grr_percent_of_tolerance:.1f} % of the tolerance"
                                     if g.grr_percent_of_tolerance is not None else ""), "grr_sd"),
            Headline("part-to-part (units)", Quantity(g.part_sd, unit, digits=4),
                     f"{pct(g.part_sd):.1f} % of total variation", "part_sd"),
            Headline("number of distinct categories", Quantity(float(g.ndc), "", digits=max(len(str(g.ndc)), 1)),
                     "5 or more: the station tells units apart (common practice)", "ndc"))
    interaction = ("not significant, pooled with the repeatability" if g.interaction_pooled
                   else "significant, kept as a component")
    conditions = (("figure", g.figure), ("units", f"{len(g.parts)}"), (f"{g.by}s", ", ".join(g.appraisers)),
                  ("trials per unit and " + g.by, str(g.trials)),
                  (f"{g.by} by unit interaction", f"F = {g.interaction_f:.3g}, p = {g.interaction_p:.3g}: {interaction}"
                   if g.interaction_f is not None and g.interaction_p is not None else interaction),
                  ("method", "ANOVA, two crossed random factors (AIAG measurement systems analysis)"))
    table = Table("Analysis of variance", ("source", "SS", "df", "MS"),
                  tuple((name, Quantity(ss, "", digits=6), str(df), Quantity(ms, "", digits=6))
                        for name, ss, df, ms in g.anova))
    names = ("repeatability", "reproducibility", "gauge R&R", "part-to-part")
    sds = (g.repeatability_sd, g.reproducibility_sd, g.grr_sd, g.part_sd)
    plots = [Plot("components", f"grr_{g.figure}.png", f"Components of variation, {g.figure}", "component",
                  "% of total variation (standard deviations)",
                  (Trace("share", tuple(float(i) for i in range(4)), values(pct(s) for s in sds), "bar",
                         labels=names),), log_x=False, categories=True, y_from_zero=True)]
    if unit_means:
        xs = tuple(float(i) for i in range(len(g.parts)))
        plots.append(Plot("by_unit", f"grr_{g.figure}_by_unit.png", f"Each unit's mean by {g.by}", "unit",
                          g.figure + (f" ({level})" if (level := _level_unit(g.figure)) else ""),
                          tuple(Trace(name, xs, values(means), "markers", labels=g.parts)
                                for name, means in unit_means.items()), log_x=False, categories=True))
    notes = (*g.notes, "U is not stated for these figures: they describe the station itself, not a unit")
    return View("grr", f"gauge R&R of {g.figure} by {g.by}", conditions, head, (table,), tuple(plots), notes, (), (),
                f"GRR {g.grr_percent_of_variation:.1f} % of total variation, ndc {g.ndc}")
