"""Hum and spurs: narrowband lines found against a robust local baseline.

A bin is part of a line when it stands above the local baseline by more than
Welch statistics allow for noise.  The baseline is a running median of the
spectrum over `baseline_bins` bins, divided by the median of a chi-square
variable with nu degrees of freedom over nu (the median of a noise bin lies
slightly below its mean).  A bin exceeding

.. math:: S_k > b_k\\, \\frac{\\chi^2_{\\nu,\\,1-p}}{\\nu},\\qquad p = \\frac{10^{-3}}{N_{bins}}

is a candidate, so that noise alone gives a false line in about one spectrum
in a thousand.  Neighbouring candidates are merged; a merged group wider than
nine bins that nowhere stands 10 dB above the baseline is a broad rise of the
noise (the 1/f region, a resonance), not a line.  Each line's power is
the excess over the baseline summed over its bins and the window's main lobe:
``P = sum_k (S_k - b_k) df`` (for a density, the sum over a tone's lobe times
the bin width is the tone's power).

Mains families: the fundamental (50 or 60 Hz, found automatically or stated)
and its harmonics within 0.5 % or 1.5 bins; odd harmonics (and the fundamental)
are labelled ``mains``, even ones ``ripple`` (twice-mains family typical of
rectifier ripple); other lines ``unclassified``.

References
----------
.. [1] J. S. Bendat and A. G. Piersol, "Random Data", 4th ed., Wiley 2010,
       ch. 8 (chi-square distribution of PSD estimates).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .spectrum import Psd

__all__ = ["Line", "LineSearch", "find_lines", "classify_mains", "hum_hints", "MAINS_CANDIDATES_HZ"]

MAINS_CANDIDATES_HZ = (50.0, 60.0)
_LOBE_BINS = 3  # Hann main lobe is +-2 bins; one more catches the leakage
_MIN_HALF_WINDOW = 5
_MAX_SOFT_LINE_BINS = 9  # a group wider than this must peak 10 dB over the baseline to count


@dataclass(frozen=True)
class Line:
    """One narrowband line.

    Attributes
    ----------
    freq_hz : float
        Power-weighted centre of its bins, Hz.
    power : float
        Its power above the baseline, in the spectrum's unit squared (V^2).
    excess_db : float
        Peak bin over baseline, dB.
    family : str
        ``mains``, ``ripple`` or ``unclassified``.
    harmonic : int or None
        Harmonic number of the mains fundamental, if in a mains family.
    bins : tuple[int, int]
        First and last bin (inclusive) attributed to it.
    """

    freq_hz: float
    power: float
    excess_db: float
    family: str
    harmonic: int | None
    bins: tuple[int, int]

    @property
    def vrms(self) -> float:
        """RMS of the line (square root of its power)."""
        return math.sqrt(self.power)


@dataclass(frozen=True)
class LineSearch:
    """Lines found in a spectrum, with the baseline and the cleaned density.

    Attributes
    ----------
    lines : tuple[Line, ...]
        Strongest first.
    baseline : numpy.ndarray
        Local noise level per bin (same unit as the density).
    cleaned : numpy.ndarray
        The density with every line's bins replaced by the baseline.
    mains_hz : float or None
        The mains fundamental used for the families.
    cleaned_variance : numpy.ndarray or None
        For a cross-spectrum estimate, each bin's variance with the lines' bins bridged from their
        neighbours (what the cleaned density's bins would have without the line).
    """

    lines: tuple[Line, ...]
    baseline: NDArray[np.float64]
    cleaned: NDArray[np.float64]
    mains_hz: float | None
    cleaned_variance: NDArray[np.float64] | None = None


def _baseline(density: NDArray[np.float64], dof: float, width: int) -> NDArray[np.float64]:
    """Running median; near DC the window shrinks so that it stays centred on the bin.

    A centred median follows a monotonic slope (such as the 1/f rise) exactly;
    a window clipped at DC would not.
    """
    from .special import chi2_median
    half_width = width // 2
    padded = np.pad(density, half_width, mode="edge")  # as scipy.ndimage.median_filter's mode "nearest"
    med = np.median(np.lib.stride_tricks.sliding_window_view(padded, width), axis=-1)
    for k in range(1, min(half_width, density.size)):
        half = max(k - 1, _MIN_HALF_WINDOW)  # centred where it can be, never fewer than 11 bins
        med[k] = np.median(density[max(1, k - half): k + half + 1])
    return med / (chi2_median(dof) / dof) if math.isfinite(dof) else med  # symmetric scatter: median = mean


def find_lines(psd: Psd, *, mains_hz: float | None = None, min_hz: float = 15.0,
               baseline_bins: int = 41, false_alarm: float = 1e-3) -> LineSearch:
    """Find narrowband lines in a Welch spectrum and classify them.

    Parameters
    ----------
    psd : Psd
        The spectrum (any unit).
    mains_hz : float, optional
        Mains fundamental; found among 50 and 60 Hz when omitted.
    min_hz : float
        Lines below this are not searched (DC and drift).
    baseline_bins : int
        Width of the running median, bins (odd).
    false_alarm : float
        Expected number of false lines per spectrum from noise alone.
    """
    s = psd.psd_per_hz
    f = psd.frequency_hz
    df = psd.bin_width_hz
    base, cand = _candidates(psd, baseline_bins | 1, false_alarm)
    cand &= f >= min_hz
    cand[-(_MIN_HALF_WINDOW + 1):] = False  # the Nyquist bin is not doubled and skews the median
    groups: list[tuple[int, int]] = []
    k = 0
    idx = np.flatnonzero(cand)
    while k < idx.size:
        start = end = int(idx[k])
        while k + 1 < idx.size and idx[k + 1] - end <= 2 * _LOBE_BINS:
            k += 1
            end = int(idx[k])
        groups.append((max(start - _LOBE_BINS, 1), min(end + _LOBE_BINS, s.size - 1)))
        k += 1
    raw = []
    cleaned = s.copy()
    variance = psd.bin_variance.copy() if psd.bin_variance is not None else None
    for lo, hi in groups:
        if hi - lo + 1 > _MAX_SOFT_LINE_BINS + 2 * _LOBE_BINS and \
                np.max(s[lo:hi + 1] / base[lo:hi + 1]) < 10.0:
            continue  # a broad, gentle rise (1/f, a resonance) is noise, not a line
        excess = np.clip(s[lo:hi + 1] - base[lo:hi + 1], 0.0, None)
        power = float(excess.sum() * df)
        if power <= 0:
            continue
        centre = float(np.dot(excess, f[lo:hi + 1]) / excess.sum())
        peak = int(lo + np.argmax(s[lo:hi + 1]))
        above = s[peak] / base[peak] if base[peak] > 0 else np.inf  # a cross-spectrum's baseline may be ~0
        raw.append((centre, power, float(10 * np.log10(above)), (lo, hi)))
        cleaned[lo:hi + 1] = base[lo:hi + 1]
        if variance is not None:
            edges = [max(lo - 1, 0), min(hi + 1, s.size - 1)]
            variance[lo:hi + 1] = np.interp(np.arange(lo, hi + 1), edges, variance[edges])
    fundamental = mains_hz if mains_hz is not None else classify_mains(
        [(c, p) for c, p, _e, _b in raw], bin_width_hz=df)
    lines = []
    for centre, power, exc, bins in raw:
        family, harmonic = _family(centre, fundamental, df)
        lines.append(Line(centre, power, exc, family, harmonic, bins))
    lines.sort(key=lambda ln: ln.power, reverse=True)
    return LineSearch(tuple(lines), base, cleaned, fundamental, variance)


def _candidates(psd: Psd, width: int, false_alarm: float) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """The baseline and the bins standing out of it by more than noise allows at `false_alarm` lines per
    spectrum: Welch bins by their chi-square ratio; cross-spectrum bins (which may be negative) by their
    excess over the baseline in standard deviations of the estimate (normal quantile)."""
    from .special import chi2_isf, normal_isf
    s = psd.psd_per_hz
    if psd.bin_variance is None:
        base = _baseline(s, psd.dof, width)
        return base, s > base * (chi2_isf(false_alarm / s.size, psd.dof) / psd.dof)
    base = _baseline(s, math.inf, width)
    return base, s - base > normal_isf(false_alarm / s.size) * np.sqrt(psd.bin_variance)


def _harmonic_of(freq_hz: float, fundamental: float, bin_width_hz: float) -> int | None:
    h = int(round(freq_hz / fundamental))
    if h < 1:
        return None
    tol = max(0.005 * h * fundamental, 1.5 * bin_width_hz)
    return h if abs(freq_hz - h * fundamental) <= tol else None


def _family(freq_hz: float, fundamental: float | None, bin_width_hz: float) -> tuple[str, int | None]:
    if fundamental is None:
        return "unclassified", None
    h = _harmonic_of(freq_hz, fundamental, bin_width_hz)
    if h is None or h > 40:
        return "unclassified", None
    return ("ripple" if h % 2 == 0 else "mains"), h


def classify_mains(lines: list[tuple[float, float]], *, bin_width_hz: float) -> float | None:
    """The mains fundamental (50 or 60 Hz) whose harmonics carry more line power, if any."""
    best, best_power = None, 0.0
    for f0 in MAINS_CANDIDATES_HZ:
        power = sum(p for f, p in lines if _harmonic_of(f, f0, bin_width_hz) is not None
                    and f <= 40 * f0)
        if power > best_power:
            best, best_power = f0, power
    return best


def hum_hints(lines: tuple[Line, ...]) -> list[str]:
    """Usual causes of the line pattern, worded as suggestions (general trade knowledge).

    Never suggests lifting a safety earth.
    """
    mains = sum(ln.power for ln in lines if ln.family == "mains")
    ripple = sum(ln.power for ln in lines if ln.family == "ripple")
    other = [ln for ln in lines if ln.family == "unclassified"]
    hints = []
    if ripple > mains and ripple > 0:
        hints.append("lines at even multiples of mains dominate: typical of rectifier ripple; check the "
                     "supply's reservoir and filter capacitors and the regulator")
    if mains >= ripple and mains > 0:
        fundamental = next((ln for ln in lines if ln.harmonic == 1), None)
        if fundamental is not None and fundamental.power >= 0.5 * mains:
            hints.append("the mains fundamental dominates: typical of magnetic pickup or a ground loop; "
                         "check lead routing, transformer orientation and shielding, or try an isolation "
                         "transformer or battery power (never lift a safety earth)")
        else:
            hints.append("odd mains harmonics dominate: typical of a ground loop carrying charging "
                         "currents; try a single grounding point, an isolation transformer or battery "
                         "power (never lift a safety earth)")
    high = [ln for ln in other if ln.freq_hz > 1000]
    if high:
        hints.append("unclassified lines above 1 kHz: typical of switch-mode supplies or USB/computer "
                     "interference; try battery power, ferrites on leads, or moving the supply away")
    return hints
