"""Physics before figures: what a gain-method result may say, checked before it is returned.

An amplifier adds noise; it cannot take any away. So the input-referred density is at least the source
resistor's own thermal noise ``4 k T Rs`` (its temperature T), which is to say a noise figure of at least
0 dB, in band and at every spot frequency, within the measurement's uncertainty. A result that lies below
beyond its uncertainty is refused, with the likely causes named (IEEE Std 161: F = 1 + Te/T0 >= 1).

With one-third-octave spots, some lie below their k = 2 interval by chance; a spot is judged impossible
only beyond the family-wise interval of all the spots (Bonferroni: k = z(0.05/(2n)) for n spots, 3.0 for 31),
so a quiet, honest amplifier is not refused at random. A single tone gives the gain at one frequency only: on
a band wider than a decade it is a warning, since a shaped response (RIAA, a band-pass) then puts every
other spot off by many dB.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from ..dsp.special import normal_isf
from ..dsp.weighting import Band
from ..errors import MeasurementError
from ..units import BOLTZMANN_J_PER_K

__all__ = ["CAUSES", "check_physics", "single_tone_warning", "check_not_swapped", "check_noise_factor"]

CAUSES = ("the gain comes from a single tone on a response that is not flat (a phono stage, a band-pass): "
          "measure the response with --response (a two-channel broadband capture); the shorted and terminated "
          "captures are swapped; the source resistance is not what was stated (--rs, the sidecar); the tone's "
          "level was read elsewhere than at the source (--zin-ohm)")


def _below_by(ratio: float, u95_db: float | None, k_over_2: float) -> float | None:
    """How far (dB) a power `ratio` to the thermal floor lies below 1 beyond its interval, else None."""
    if not ratio > 0:
        return math.inf
    upper_db = 10 * math.log10(ratio) + k_over_2 * (u95_db or 0.0)
    return -upper_db if upper_db < 0 else None


def check_physics(*, rs_ohm: float, temperature_k: float, band_ratio: float, band_u95_db: float | None,
                  spots: Sequence[tuple[float, float | None, float | None]], where: str = "",
                  band_k: float = 2.0) -> None:
    """Refuse a result whose input-referred noise lies below the source's thermal noise beyond U.

    Parameters
    ----------
    band_ratio : float
        Input-referred band power over the source's thermal band power (same weighting).
    band_u95_db : float or None
        Its expanded uncertainty (k = 2), dB.
    spots : sequence of (frequency Hz, input density V/rtHz, U k=2 dB)
    where : str
        Where the figures were taken (a tap's name), for the message.
    band_k : float
        The coverage factor the band figure is judged at (2: beyond its U; a stage budget's taps use 3, since
        a tap's own U near the floor is itself uncertain).

    Raises
    ------
    MeasurementError
        Naming where, by how much, and the likely causes.
    """
    thermal = 4 * BOLTZMANN_J_PER_K * temperature_k * rs_ohm
    found = []
    below = _below_by(band_ratio, band_u95_db, band_k / 2)
    if below is not None:
        beyond = "its U" if band_k == 2.0 else f"{band_k / 2:g} times its U"
        found.append(f"in band by {below:.2f} dB beyond {beyond}" if math.isfinite(below) else "in band")
    resolved = [(f, d, u) for f, d, u in spots if d is not None and math.isfinite(d)]
    k_over_2 = normal_isf(0.05 / (2 * max(len(resolved), 1))) / 2
    low = [(f, b) for f, d, u in resolved if (b := _below_by(d * d / thermal, u, k_over_2)) is not None]
    if low:
        f, b = max(low, key=lambda x: x[1])
        found.append(f"at {len(low)} spot frequenc{'y' if len(low) == 1 else 'ies'} (most at {f:g} Hz, "
                     + (f"by {b:.1f} dB)" if math.isfinite(b) else "at or below zero)"))
    if found:
        raise MeasurementError(
            f"the input-referred noise{' ' + where if where else ''} is below the {rs_ohm:g} ohm source's own thermal noise "
            f"({math.sqrt(thermal) * 1e9:.3f} nV/rtHz at {temperature_k:.1f} K) {' and '.join(found)}: that is a "
            f"noise figure below 0 dB, which no amplifier gives. Likely causes: {CAUSES}")


def check_noise_factor(noise_factor: float, u95_db: float | None, *, what: str, causes: str) -> None:
    """Refuse a noise factor at or below zero, or below 1 (0 dB) beyond its expanded uncertainty `u95_db`."""
    if not noise_factor > 0:
        raise MeasurementError(f"the {what} came out at {noise_factor:.3g}, at or below zero, which no amplifier "
                               f"gives. Likely causes: {causes}")
    nf_db = 10 * math.log10(noise_factor)
    if nf_db + (u95_db if u95_db is not None else 0.0) < 0:  # an infinite U (not yet known) passes
        raise MeasurementError(f"the {what} came out at {nf_db:.2f} dB, below 0 dB beyond its U "
                               f"({u95_db:.2f} dB), which no amplifier gives. Likely causes: {causes}")


def check_not_swapped(*, shorted_power: float, terminated_power: float, rel_std: float) -> None:
    """Refuse a shorted capture noisier than the terminated one beyond three standard deviations.

    Both powers are output band powers, the terminated one already scaled by ``((Zin + Rs) / Zin)^2`` when
    the input impedance is known: the terminated input adds the source's noise (and in Rs) to the same en
    at the terminals, so it cannot be the quieter (common practice).
    """
    if terminated_power > 0 and shorted_power > terminated_power * (1 + 3 * rel_std):
        excess = 10 * math.log10(shorted_power / terminated_power)
        raise MeasurementError(f"the shorted capture carries {excess:.2f} dB more noise in band than the "
                               f"terminated one, which adds the source's noise to the same amplifier noise: are "
                               f"the shorted and terminated captures (or their sidecars) swapped? (If the input "
                               f"impedance is not high against Rs, give it with --zin-ohm.)")


def single_tone_warning(*, gain_kind: str, has_response: bool, band: Band, tone_hz: float) -> str | None:
    """The warning for a gain taken from one tone over a band wider than a decade (None otherwise)."""
    if has_response or gain_kind == "stated" or band.low_hz <= 0 or band.high_hz / band.low_hz <= 10:
        return None
    return (f"the gain comes from one tone at {tone_hz:g} Hz but the band {band.label()} spans "
            f"{math.log10(band.high_hz / band.low_hz):.1f} decades: every figure away from {tone_hz:g} Hz assumes "
            f"a flat response; measure it with --response (a two-channel broadband capture of input and output)")
