"""Comparing a golden output with a new one: the text around the numbers exactly, each number within a tolerance.

Exact float text is not behaviour: another CPU, BLAS or a library patch release changes the last digits of a
float (seen: ``...38424769822`` against ``...821`` with numpy 2.4.6 and scipy 1.17.1). A golden file is
therefore split into numbers and the text between them; the text must match exactly, each number within
``rel_tol`` of the recorded one (or within ``abs_tol`` of it, for values that are zero up to rounding), so a
real change in a figure still fails.
"""

from __future__ import annotations

import math
import re

__all__ = ["REL_TOL", "ABS_TOL", "first_difference"]

#: Relative tolerance of a number. The recorded values are doubles: 1e-9 is some 10^7 times their rounding,
#: and a millionth of the smallest change any figure of benchnf is reported to.
REL_TOL = 1e-9
#: Absolute tolerance, for quantities that are zero up to rounding (a drift of 1e-17 dB against 3e-18).
ABS_TOL = 1e-15

# A number as benchnf writes one: optional sign, digits with an optional fraction, optional exponent. Digits
# inside a word (a SHA-256, "x2", "HA-0001") are part of the text, compared exactly.
_NUMBER = re.compile(r"(?<![\w.])[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?(?![\w.])")


def _split(text: str) -> tuple[list[str], list[str]]:
    numbers = _NUMBER.findall(text)
    return _NUMBER.split(text), numbers


def _same_number(a: str, b: str, rel_tol: float, abs_tol: float) -> bool:
    if a == b:
        return True
    x, y = float(a), float(b)
    return math.isclose(x, y, rel_tol=rel_tol, abs_tol=abs_tol)


def first_difference(got: str, want: str, *, rel_tol: float = REL_TOL, abs_tol: float = ABS_TOL) -> str | None:
    """None when `got` matches `want`; else where and how they first differ, in one line."""
    got_text, got_numbers = _split(got)
    want_text, want_numbers = _split(want)
    for i, (a, b) in enumerate(zip(got_text, want_text)):
        if a != b:
            at = next((k for k, (x, y) in enumerate(zip(a, b)) if x != y), min(len(a), len(b)))
            line = "".join(w + n for w, n in zip(want_text[:i], want_numbers[:i])).count("\n") + b[:at].count("\n") + 1
            return f"line {line}: text {a[at:at + 60]!r} where the golden output has {b[at:at + 60]!r}"
    if len(got_text) != len(want_text):
        return f"{len(got_numbers)} numbers where the golden output has {len(want_numbers)}"
    for i, (a, b) in enumerate(zip(got_numbers, want_numbers)):
        if not _same_number(a, b, rel_tol, abs_tol):
            line = "".join(w + n for w, n in zip(want_text[:i + 1], want_numbers[:i])).count("\n") + 1
            return f"line {line}: {a} where the golden output has {b} (beyond rel {rel_tol:g} / abs {abs_tol:g})"
    return None
