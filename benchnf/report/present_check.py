"""The view of a unit's check against a profile: the verdict, each limit in words with the measured value and
the limit in the same unit and digits, the margin, U and the suggestion, and the conditions."""

from __future__ import annotations

from ..check.decision import rule_text
from ..check.limits import CheckResult
from ..quantity import Quantity
from .labels import condition_rows, limit_label
from .view import Table, View

__all__ = ["present", "MARGINAL_WORDS", "limit_rows"]

MARGINAL_WORDS = ("MARGINAL: within the expanded measurement uncertainty of the limit, on either side: neither a "
                  "confident pass nor a proven failure; measure longer or check the setup before deciding.")


def limit_rows(check: CheckResult) -> tuple[tuple[str | Quantity, ...], ...]:
    """One row per limit: label, measured, limit, margin, U, verdict, suggestion."""
    w = check.conditions.weighting
    return tuple((limit_label(v.name, weighting=w), v.measured_text(), v.limit,
                  Quantity(v.margin, v.unit, digits=2 if v.unit.startswith("dB") else None) if v.unit
                  else Quantity(v.margin, ""),
                  Quantity(v.uncertainty, v.unit or "dB", digits=2), v.verdict, v.hint or "") for v in check.limits)


def present(check: CheckResult) -> View:
    """The view of one unit's check."""
    table = Table("Limits (U: expanded, k=2)", ("limit", "measured", "limit", "margin", "U", "verdict", "suggestion"),
                  limit_rows(check))
    conditions = (*condition_rows(check.conditions), ("decision rule", rule_text(check.decision_rule)))
    floor_note = ("" if check.conditions.floor_corrected is not False
                  else "the analyzer floor was NOT subtracted: the figures include the analyzer's own noise")
    notes = tuple(n for n in (floor_note, MARGINAL_WORDS if any(v.verdict == "MARGINAL" for v in check.limits) else "")
                  if n)
    findings = Table("Findings, in the order to act on them", ("finding",), tuple((f,) for f in check.diagnosis))
    return View("check", f"{check.unit} against profile {check.profile!r}: {check.verdict} "
                f"(decision rule: {check.decision_rule})", conditions, (), (table, findings), (), notes, (), (),
                f"{check.verdict} ({check.decision_rule})")
