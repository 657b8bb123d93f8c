"""Decision rules: how a measured value, its expanded uncertainty U (k = 2) and a limit make a verdict.

The margin is how far the value lies inside the limit (positive inside). Three rules, after ILAC-G8:09/2019
(guidelines on decision rules and statements of conformity) and ISO 14253-1:2017 (the uncertainty zone):

* ``simple`` - simple acceptance (shared risk, guard band w = 0): PASS when margin >= 0, else FAIL.
  Up to about half of the units whose true value sits right at the limit are passed.
* ``guarded`` - guarded acceptance (guard band w = U): PASS only when margin >= U, else FAIL. The chance of
  passing a unit whose true value lies beyond the limit is at most about 2.5 % (one-sided, k = 2); the price
  is good units near the limit failed.
* ``zones`` - the uncertainty zones of ISO 14253-1: PASS when margin >= U (conformance proven), FAIL when
  margin <= -U (non-conformance proven), MARGINAL between (neither proven: measure again or decide).

Without a stated U the limit is sharp under every rule (w = 0). The references are from memory.
"""

from __future__ import annotations

from typing import Literal

__all__ = ["DECISION_RULES", "Verdict", "check_rule", "classify", "rule_text"]

Verdict = Literal["PASS", "MARGINAL", "FAIL"]

#: The rules by name, each in the words a test engineer reads beside the verdict.
DECISION_RULES = {
    "simple": "simple acceptance (ILAC-G8, guard band 0): PASS inside the limit",
    "guarded": "guarded acceptance (ILAC-G8, guard band U, k=2): PASS only inside the limit by U",
    "zones": "uncertainty zones (ISO 14253-1): PASS inside by U, FAIL outside by U, MARGINAL within U of the limit",
}


def check_rule(name: str) -> str:
    """The rule's name if it is one of DECISION_RULES, else ParameterError."""
    if name not in DECISION_RULES:
        from ..errors import ParameterError
        raise ParameterError(f"decision rule {name!r}: one of {', '.join(DECISION_RULES)}")
    return name


def rule_text(name: str) -> str:
    return DECISION_RULES[check_rule(name)]


def classify(margin: float | None, u: float | None, rule: str) -> Verdict:
    """The verdict on one limit: `margin` (positive inside), `u` its expanded uncertainty (None: sharp)."""
    if margin is None:
        return "FAIL"
    w = u or 0.0
    if rule == "simple":
        return "PASS" if margin >= 0 else "FAIL"
    if rule == "guarded":
        return "PASS" if margin >= w and margin >= 0 else "FAIL"
    if margin >= w and margin >= 0:
        return "PASS"
    return "MARGINAL" if margin > -w else "FAIL"
