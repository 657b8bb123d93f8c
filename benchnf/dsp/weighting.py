"""Frequency weightings and measurement bands.

Weightings are applied to power spectra in the frequency domain, from the
analytic curves of the standards, so no digital filter sags near Nyquist.

References
----------
.. [1] IEC 61672-1:2013, "Electroacoustics - Sound level meters - Part 1:
       Specifications", Annex E (analytic A and C curves).
.. [2] ITU-R BS.468-4, "Measurement of audio-frequency noise voltage level
       in sound broadcasting", 1986, Table 1 and the network of Fig. 1a.
.. [3] AES17-2020, measurement band 20 Hz to 20 kHz.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ParameterError

__all__ = ["WEIGHTINGS", "weighting_power_gain", "a_weighting_db", "c_weighting_db",
           "itu468_weighting_db", "itu468_response", "Band", "BAND_PRESETS", "DEFAULT_BAND_HZ", "parse_band",
           "above_hum_band", "ABOVE_HUM_HARMONIC"]

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


def _c_raw_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    f2 = f * f
    return (_F4_HZ ** 2 * f2) ** 2 / ((f2 + _F1_HZ ** 2) ** 2 * (f2 + _F4_HZ ** 2) ** 2)


_C_1KHZ_POWER = float(_c_raw_power(np.array(1000.0)))


def c_weighting_db(frequency_hz: ArrayLike) -> NDArray[np.float64]:
    """C-weighting in dB, 0 dB at 1 kHz.

    .. math::

        C(f) = 20\\log_{10}\\frac{f_4^2 f^2}{(f^2+f_1^2)(f^2+f_4^2)} - C_{1000}

    with the pole frequencies of :func:`a_weighting_db` and C_1000 = -0.062 dB.

    References
    ----------
    .. [1] IEC 61672-1:2013, Annex E, eq. (E.1).
    """
    f = np.asarray(frequency_hz, dtype=np.float64)
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(_c_raw_power(f) / _C_1KHZ_POWER)


# ITU-R BS.468-4: the weighting network of Fig. 1a has the response
#   R(f) = 1.246332637532143e-4 f / |h1(f) + j h2(f)|
# with h1 an even and h2 an odd polynomial in f.  As a rational function of s = j 2 pi f the
# denominator is D(s) = sum_k d_k s^k, d_k = c_k / ((2 pi)^k j^k) taken real, and the
# numerator N(s) = 1.246332637532143e-4 s / (2 pi).  Coefficients of the Recommendation's
# closed form (from memory of its published transcription; checked against Table 1 and the
# itu-r-468-weighting package in the tests).
_H1 = {0: 1.0, 2: -1.363894795463638e-07, 4: 2.043828333606125e-15, 6: -4.737338981378384e-24}
_H2 = {1: 5.559488023498643e-04, 3: -2.118150887518656e-11, 5: 1.306612257412824e-19}
_R468_GAIN = 1.246332637532143e-4


def _itu468_polys() -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(numerator, denominator) of the analogue 468 network in s, highest power first."""
    den = np.zeros(7)
    for k, c in {**_H1, **_H2}.items():
        # j^k for even k is (-1)^(k/2); for odd k it is j (-1)^((k-1)/2), and h2 is the
        # imaginary part, so the same sign rule applies to both.
        den[6 - k] = c / (2 * np.pi) ** k * (-1) ** (k // 2)
    num = np.array([_R468_GAIN / (2 * np.pi), 0.0])
    return num, den


_468_NUM, _468_DEN = _itu468_polys()


def itu468_response(frequency_hz: ArrayLike, *, normalise_hz: float = 1000.0) -> NDArray[np.complex128]:
    """Complex response of the ITU-R BS.468-4 network, unity gain at `normalise_hz`."""
    f = np.asarray(frequency_hz, dtype=np.float64)
    s = 2j * np.pi * f
    h = np.polyval(_468_NUM, s) / np.polyval(_468_DEN, s)
    s0 = 2j * np.pi * normalise_hz
    return h / abs(np.polyval(_468_NUM, s0) / np.polyval(_468_DEN, s0))


def itu468_weighting_db(frequency_hz: ArrayLike, *, normalise_hz: float = 1000.0) -> NDArray[np.float64]:
    """ITU-R BS.468-4 weighting in dB, 0 dB at 1 kHz (or at `normalise_hz`).

    Normalised at 2 kHz it is the RMS-detector variant used with AES17
    (the curve 5.63 dB lower).

    References
    ----------
    .. [1] ITU-R BS.468-4, Table 1 and Fig. 1a.
    """
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(itu468_response(frequency_hz, normalise_hz=normalise_hz)))


def _none_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return np.ones_like(f)


def _a_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return _a_raw_power(f) / _A_1KHZ_POWER


def _c_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return _c_raw_power(f) / _C_1KHZ_POWER


def _468_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return np.abs(itu468_response(f)) ** 2


def _468_2k_power(f: NDArray[np.float64]) -> NDArray[np.float64]:
    return np.abs(itu468_response(f, normalise_hz=2000.0)) ** 2


#: Weighting name -> function of frequency giving the power gain |W(f)|^2.
#: ``468`` is ITU-R BS.468-4 normalised at 1 kHz; ``468-2k`` the same curve
#: normalised at 2 kHz (5.63 dB lower), as used with an RMS detector.
WEIGHTINGS = {"none": _none_power, "A": _a_power, "C": _c_power, "468": _468_power,
              "468-2k": _468_2k_power}


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


#: Named fixed bands.  20 Hz-20 kHz is the AES17 audio band; 22 Hz-22 kHz a common wider audio band
#: (from memory, no clause cited).
#: The band of every figure unless one is stated: 20 Hz-20 kHz (the AES17 measurement band).
DEFAULT_BAND_HZ = (20.0, 20_000.0)
BAND_PRESETS = {"audio": Band(*DEFAULT_BAND_HZ), "audio-22k": Band(22.0, 22_000.0)}

#: The 'above-hum' band starts at this harmonic of the mains frequency found, so that the mains family and
#: its strongest rectifier harmonics lie below it (common practice), and ends at 20 kHz.
ABOVE_HUM_HARMONIC = 8
ABOVE_HUM_HIGH_HZ = 20_000.0
#: Assumed when no mains family is found (the lower of the two mains frequencies, so the band is wider).
ABOVE_HUM_DEFAULT_MAINS_HZ = 50.0


def above_hum_band(mains_hz: float | None) -> Band:
    """The band from the 8th harmonic of the mains frequency (50 Hz when none was found) to 20 kHz.

    >>> above_hum_band(60.0).label()
    '480 Hz-20 kHz'
    """
    mains = mains_hz if mains_hz else ABOVE_HUM_DEFAULT_MAINS_HZ
    return Band(ABOVE_HUM_HARMONIC * mains, ABOVE_HUM_HIGH_HZ)


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
