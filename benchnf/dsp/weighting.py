"""Frequency weightings and measurement bands.

Weightings are applied to power spectra in the frequency domain, from the
analytic curves of the standards, so no digital filter sags near Nyquist.

References
----------
.. [1] IEC 61672-1:2013, "Electroacoustics - Sound level meters - Part 1:
       Specifications", Annex E (analytic A and C curves).
.. [2] AES17-2020, measurement band 20 Hz to 20 kHz.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ParameterError

__all__ = ["WEIGHTINGS", "weighting_power_gain", "a_weighting_db", "Band", "BAND_PRESETS",
           "parse_band"]

# IEC 61672-1:2013, Annex E, equations (E.1)-(E.6): pole frequencies in Hz.
_F1_HZ = 20.598997
_F2_HZ = 107.65265
_F3_HZ = 737.86223
_F4_HZ = 12194.217


def _a_raw_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    f2 = f * f
    num = (_F4_HZ ** 2 * f2 * f2) ** 2
    den = ((f2 + _F1_HZ ** 2) ** 2 * (f2 + _F2_HZ ** 2) * (f2 + _F3_HZ ** 2) * (f2 + _F4_HZ ** 2) ** 2)
    return num / den


_A_1KHZ_POWER = float(_a_raw_power(np.array(1000.0)))


def a_weighting_db(frequency_hz: ArrayLike) -> NDArray[np.float64]:
    """A-weighting in dB at the given frequencies, 0 dB at 1 kHz.

    .. math::

        A(f) = 20\\log_{10}\\frac{f_4^2 f^4}{(f^2+f_1^2)\\sqrt{(f^2+f_2^2)(f^2+f_3^2)}(f^2+f_4^2)} - A_{1000}

    with f1 = 20.598997 Hz, f2 = 107.65265 Hz, f3 = 737.86223 Hz and
    f4 = 12194.217 Hz; A_1000 = -2.000 dB normalises 1 kHz to 0 dB.

    Parameters
    ----------
    frequency_hz : array_like
        Frequencies in Hz, > 0.

    Returns
    -------
    numpy.ndarray
        Weighting in dB.

    References
    ----------
    .. [1] IEC 61672-1:2013, Annex E, eq. (E.6).

    Examples
    --------
    >>> round(float(a_weighting_db(1000.0)), 3)
    0.0
    """
    f = np.asarray(frequency_hz, dtype=np.float64)
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(_a_raw_power(f) / _A_1KHZ_POWER)


def _none_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return np.ones_like(f)


def _a_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return _a_raw_power(f) / _A_1KHZ_POWER


#: Weighting name -> function of frequency giving the power gain |W(f)|^2.
WEIGHTINGS = {"none": _none_power, "A": _a_power}


def weighting_power_gain(name: str, frequency_hz: ArrayLike) -> NDArray[np.float64]:
    """Power gain |W(f)|^2 of weighting `name` (one of :data:`WEIGHTINGS`)."""
    try:
        fn = WEIGHTINGS[name]
    except KeyError:
        raise ParameterError(f"weighting {name!r} is not one of {', '.join(WEIGHTINGS)}") from None
    return fn(np.asarray(frequency_hz, dtype=np.float64))


@dataclass(frozen=True)
class Band:
    """A measurement band [low_hz, high_hz] in Hz."""

    low_hz: float
    high_hz: float

    def __post_init__(self) -> None:
        if not (np.isfinite(self.low_hz) and np.isfinite(self.high_hz)
                and 0.0 <= self.low_hz < self.high_hz):
            raise ParameterError(f"band {self.low_hz:g}-{self.high_hz:g} Hz is not a band: "
                                 f"it needs 0 <= low < high")

    @property
    def width_hz(self) -> float:
        """high - low, in Hz."""
        return self.high_hz - self.low_hz

    def check_within(self, sample_rate_hz: float) -> None:
        """Raise unless the band lies inside 0..fs/2."""
        if self.high_hz > sample_rate_hz / 2:
            raise ParameterError(
                f"band {self.low_hz:g}-{self.high_hz:g} Hz reaches beyond half the sample rate "
                f"({sample_rate_hz / 2:g} Hz): lower its top or record at a higher rate")

    def label(self) -> str:
        """E.g. ``20 Hz-20 kHz``."""
        def fmt(f: float) -> str:
            return f"{f / 1000:g} kHz" if f >= 1000 else f"{f:g} Hz"
        return f"{fmt(self.low_hz)}-{fmt(self.high_hz)}"


#: Named bands.  20 Hz-20 kHz is the AES17 audio band; 22 Hz-22 kHz is a
#: common wider audio band (from memory, no clause cited).
BAND_PRESETS = {"audio": Band(20.0, 20_000.0), "wide": Band(22.0, 22_000.0)}


def parse_band(text: str) -> Band:
    """A preset name or ``LO-HI`` / ``LO,HI`` in Hz (``k`` suffix allowed)."""
    if text in BAND_PRESETS:
        return BAND_PRESETS[text]
    parts = text.replace(",", "-").split("-")
    if len(parts) != 2:
        raise ParameterError(f"band {text!r} is neither a preset ({', '.join(BAND_PRESETS)}) "
                             f"nor LO-HI in Hz")
    try:
        lo, hi = (float(p[:-1]) * 1000 if p.lower().endswith("k") else float(p) for p in parts)
    except ValueError:
        raise ParameterError(f"band {text!r}: LO and HI must be numbers in Hz") from None
    return Band(lo, hi)
