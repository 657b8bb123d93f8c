"""Numbers as every view shows them: the one place a figure becomes text.

A :class:`Quantity` holds a value in SI units with its unit, its expanded uncertainty U (k = 2) and the
digits to show. Its text follows the trade's habits, the same in the terminal, the HTML report, the PNG
plots and the desk:

* noise densities in nV/√Hz (voltage) and pA/√Hz (current), three significant digits;
* levels and ratios in dB, dBu, dBV with two decimals (or as stated);
* volts in engineering notation (``7.10 µV``), three significant digits;
* resistances in the resistor code from 1 kΩ up (``2k2``, ``47k``, ``1M5``) and in ohms below (``150 Ω``);
* frequencies in Hz, kHz from 10 kHz, MHz from 1 MHz (RF centre frequencies keep seven digits);
* temperatures in K with one decimal.

>>> Quantity(8.07e-10, "V/√Hz", u=0.21, u_unit="dB").text()
'0.807 nV/√Hz ± 0.21 dB'
>>> Quantity(2200.0, "Ω").text(), Quantity(150.0, "Ω").text()
('2k2', '150 Ω')
>>> Quantity(-136.7336, "dBu", u=0.1027).text()
'-136.73 dBu ± 0.10 dB'
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["Quantity", "resistance_text", "ascii_text", "DASH"]

DASH = "-"  # a figure the result does not have

# Fixed display units of the densities (the trade reads noise in these, whatever its size).
_FIXED = {"V/√Hz": (1e9, "nV/√Hz"), "A/√Hz": (1e12, "pA/√Hz")}
_LEVELS = ("dB", "dBu", "dBV", "dBFS")
_PREFIXES = ((1e-12, "p"), (1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""), (1e3, "k"), (1e6, "M"), (1e9, "G"))


def _sig(x: float, digits: int) -> str:
    """`x` to `digits` significant digits, without an exponent for everyday magnitudes."""
    if x == 0:
        return "0"
    exponent = math.floor(math.log10(abs(x)))
    decimals = max(digits - 1 - exponent, 0)
    text = f"{x:.{decimals}f}"
    if decimals == 0 and abs(round(x)) >= 10 ** digits:  # 123456 with 3 digits: 123000, not 123456
        text = f"{round(x, digits - 1 - exponent):.0f}"
    return text


def _prefix(x: float) -> tuple[float, str]:
    """The engineering scale of a magnitude: (factor, prefix)."""
    a = abs(x)
    chosen = _PREFIXES[0]
    for factor, prefix in _PREFIXES:
        if a >= factor * 0.9995:
            chosen = (factor, prefix)
    return chosen


def _trim(text: str) -> str:
    """``20.000`` -> ``20``, ``31.50`` -> ``31.5`` (nominal values carry no false precision)."""
    return text.rstrip("0").rstrip(".") if "." in text else text


def resistance_text(ohm: float, digits: int = 3) -> str:
    """A resistance as the trade writes it: ``150 Ω``, ``2k2``, ``47k``, ``1M5``."""
    if not math.isfinite(ohm):
        return DASH
    if abs(ohm) < 999.5:
        return f"{_trim(_sig(ohm, digits))} Ω"
    factor, prefix = (1e6, "M") if abs(ohm) >= 999_500 else (1e3, "k")
    mantissa = _sig(ohm / factor, digits)
    if "." in mantissa:
        whole, frac = mantissa.split(".")
        frac = frac.rstrip("0")
        return f"{whole}{prefix}{frac}"
    return f"{mantissa}{prefix}"


@dataclass(frozen=True)
class Quantity:
    """A value with its unit, its expanded uncertainty (k = 2) and the digits to show.

    `unit` is the SI unit of `value` (``V/√Hz``, ``A/√Hz``, ``V``, ``Ω``, ``Hz``, ``K``, ``dB``, ``dBu``, ``dBV``,
    ``%`` or ``""``); `u_unit` the unit of `u` where it differs (``dB`` for the relative uncertainty of a
    density or a voltage); `digits` the decimals of a level, temperature or percentage, else the significant
    digits.
    """

    value: float | None
    unit: str
    u: float | None = None
    u_unit: str | None = None
    digits: int | None = None
    display: str | None = None  # a fixed display unit (a table column's: "Hz", "µV"), else chosen by size

    @property
    def known(self) -> bool:
        return self.value is not None and math.isfinite(self.value)

    # -- the value --------------------------------------------------------------------------------------
    def _scale(self) -> tuple[float, str]:
        """(factor, display unit) for the value."""
        if self.display is not None:
            prefix = self.display[: len(self.display) - len(self.unit)] if self.display.endswith(self.unit) else ""
            factors = {p: f for f, p in _PREFIXES}
            return 1 / factors.get(prefix, 1.0), self.display
        if self.unit in _FIXED:
            return _FIXED[self.unit]
        if self.unit in ("V", "A") and self.known:
            factor, prefix = _prefix(self.value)  # type: ignore[arg-type]
            return 1 / factor, prefix + self.unit
        if self.unit == "Hz" and self.known:
            a = abs(self.value)  # type: ignore[arg-type]
            return (1e-6, "MHz") if a >= 1e6 else ((1e-3, "kHz") if a >= 1e4 else (1.0, "Hz"))
        return 1.0, self.unit

    def _number(self, x: float, factor: float, *, for_u: bool = False) -> str:
        unit = self.u_unit if for_u and self.u_unit else self.unit
        if unit in _LEVELS:
            return f"{x:.{2 if self.digits is None or for_u else self.digits}f}"
        if unit in ("K", "%"):
            return f"{x:.{1 if self.digits is None else self.digits}f}"
        if unit == "Hz" and factor == 1e-6:
            return f"{x * factor:.{7 - 1 - math.floor(math.log10(abs(x * factor)))}f}" if x else "0"
        digits = self.digits or (2 if for_u else (4 if unit == "Hz" else 3))
        text = _sig(x * factor, digits)
        return _trim(text) if unit == "Hz" and not for_u else text

    def number_text(self) -> str:
        """The value alone in its display unit (``0.807``), or ``-``."""
        if not self.known:
            return DASH
        if self.unit == "Ω":
            return resistance_text(self.value, self.digits or 3).removesuffix(" Ω")  # type: ignore[arg-type]
        factor, _unit = self._scale()
        return self._number(self.value, factor)  # type: ignore[arg-type]

    def unit_text(self) -> str:
        """The display unit (``nV/√Hz``); for a resistance shown in the resistor code, none."""
        if self.unit == "Ω":
            return "Ω" if self.known and abs(self.value) < 999.5 else ""  # type: ignore[arg-type]
        return self._scale()[1]

    # -- its uncertainty ---------------------------------------------------------------------------------
    def u_text(self) -> str:
        """``± 0.21 dB`` (expanded, k = 2), or empty where there is none."""
        if self.u is None or not math.isfinite(self.u) or not self.known:
            return ""
        if self.u_unit:
            return f"± {self._number(self.u, 1.0, for_u=True)} {self.u_unit}"
        if self.unit == "Ω":
            return f"± {resistance_text(self.u, 2)}"
        factor, unit = self._scale()
        unit = "dB" if self.unit in _LEVELS else unit
        return f"± {self._number(self.u, factor, for_u=True)} {unit}".rstrip()

    # -- together ------------------------------------------------------------------------------------------
    def value_text(self, *, with_u: bool = False) -> str:
        """The number without its unit (a table cell), optionally with ``± U`` in the column's unit."""
        out = self.number_text()
        if with_u and (u := self.u_text()):
            bare = not self.u_unit and self.unit != "Ω" and self.unit_text()
            out += " " + (u.rsplit(" ", 1)[0] if bare else u)
        return out

    def text(self) -> str:
        """Value, unit and U: ``0.807 nV/√Hz ± 0.21 dB``; ``-`` where there is no value."""
        if not self.known:
            return DASH
        unit = self.unit_text()
        out = self.number_text() + (f" {unit}" if unit else "")
        u = self.u_text()
        return f"{out} {u}" if u else out


_ASCII = str.maketrans({"√": "rt", "Ω": "ohm", "µ": "u", "±": "+/-", "–": "-", "—": "-", "²": "^2", "°": "",
                        "×": "x", "≥": ">=", "≤": "<=", "≈": "~"})


def ascii_text(text: str) -> str:
    """The same text in ASCII for a terminal that may not show Unicode (``nV/rtHz``, ``ohm``, ``+/-``)."""
    return text.translate(_ASCII)
