"""Numbers as practitioners type them: SI prefixes and the trade's letter-as-decimal-point forms.

``150``, ``1.5e3``, ``1.5k``, ``2k2`` (2.2 k), ``4M7`` (4.7 M), ``150R`` and ``4R7`` (R as the decimal point
of a resistor code), ``1m`` (milli), ``10u`` or ``10µ`` (micro), ``100n``, ``2p``, ``1G``. Prefixes are
case-sensitive (``m`` milli, ``M`` mega); ``K`` is accepted as kilo only inside a resistor code (``4K7``),
since a trailing K is the kelvin. An option may allow its own unit after the number (``ohm``, ``V``,
``Hz``, ``s``, ``K``...), given as `units`. No numpy here: the command line's argument types use it.

>>> [parse_number(t) for t in ("2k2", "4M7", "150R", "1m", "100n", "10u", "1.5e3")]
[2200.0, 4700000.0, 150.0, 0.001, 1e-07, 1e-05, 1500.0]
"""

from __future__ import annotations

import math
import re

__all__ = ["parse_number", "PREFIXES"]

#: SI prefixes accepted after a number (as powers of ten), and R (10^0) for resistor codes.
PREFIXES = {"p": -12, "n": -9, "u": -6, "\u00b5": -6, "\u03bc": -6, "m": -3, "k": 3, "K": 3, "M": 6, "G": 9,
            "R": 0, "r": 0}
_CODE = re.compile(r"(\d+)([pnu\u00b5\u03bcmkKMGRr])(\d+)")
_PLAIN = re.compile(r"([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)([pnu\u00b5\u03bcmkMGRr]?)")


def parse_number(text: str, *, units: tuple[str, ...] = ()) -> float:
    """The value of `text`; raise ValueError naming the accepted forms when it is none of them.

    Parameters
    ----------
    text : str
        E.g. ``2k2``, ``150R``, ``1m``, ``-3.5``, ``1e-3``.
    units : tuple of str
        Unit symbols the caller accepts after the number (case-sensitive), e.g. ``("ohm", "\u03a9")``.
    """
    s = text.strip().replace("\u2212", "-")
    for unit in sorted(units, key=len, reverse=True):
        if s.endswith(unit) and len(s) > len(unit):
            s = s[: -len(unit)].rstrip()
            break
    m = _CODE.fullmatch(s)
    if m:
        whole, letter, frac = m.groups()
        return float(f"{whole}.{frac}e{PREFIXES[letter]}")  # decimal text: 100n is exactly 1e-07
    m = _PLAIN.fullmatch(s)
    if not m:
        raise ValueError(f"{text!r} is not a number (forms: 150, 1.5e3, 1.5k, 2k2, 4M7, 150R, 4R7, 1m, 10u)")
    number, letter = m.groups()
    exponent = PREFIXES.get(letter, 0)
    if "e" in number.lower():
        mantissa, _, own = number.lower().partition("e")
        number, exponent = mantissa, exponent + int(own)
    value = float(f"{number}e{exponent}")
    if math.isnan(value):
        raise ValueError(f"{text!r} is not a number")
    return value
