"""Noise by the gain method: input-referred density, EIN and noise figure.

With the DUT's input terminated in a source resistance Rs at temperature T,
the output noise density S_out(f) (analyzer floor already subtracted) and the
power gain |G(f)|^2 from the source EMF to the output give

.. math::

    e_{ni}^2(f) = \\frac{S_{out}(f)}{|G(f)|^2}                          \\quad (1)

    F(f) = 1 + \\frac{e_{ni}^2(f) - 4kTR_s}{4kT_0R_s}                     \\quad (2)

    F_B = 1 + \\frac{\\int_B (e_{ni}^2 - 4kTR_s)\\,|W|^2 df}{4kT_0R_s\\int_B |W|^2 df}  \\quad (3)

    \\mathrm{EIN} = \\sqrt{\\int_B e_{ni}^2(f)\\,|W(f)|^2 df}              \\quad (4)

(2) is the IEEE noise factor: the DUT's own noise (everything above the
source's thermal noise at its real temperature T) added to the noise a
source at T0 = 290 K would give, over the latter.  (3) is the same over a
band with weighting W.  EIN (4) includes the source resistor's noise, as it
is quoted at the bench.

References
----------
.. [1] IEEE Std 161, definitions of noise factor and T0 = 290 K.
.. [2] H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32(7),
       419-422, 1944.
.. [3] C. D. Motchenbacher and J. A. Connelly, "Low-Noise Electronic System
       Design", Wiley 1993, ch. 2 (equivalent input noise, noise factor).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..dsp.integrate import band_bin_weights
from ..dsp.weighting import Band
from ..errors import ParameterError
from ..units import BOLTZMANN_J_PER_K, T0_K, thermal_density_v2_per_hz

__all__ = ["spot_noise_factor", "band_noise_factor", "band_rms", "third_octave_centres_hz",
           "third_octave_weights", "spot_means", "check_source"]


def check_source(*, rs_ohm: float, temperature_k: float) -> None:
    """Raise a ParameterError unless Rs > 0 ohm and 0 < T (K)."""
    if not (np.isfinite(rs_ohm) and rs_ohm > 0):
        raise ParameterError(f"source resistance {rs_ohm!r} ohm must be > 0: a noise figure needs a "
                             f"source; for a shorted input give it with --shorted")
    if not (np.isfinite(temperature_k) and temperature_k > 0):
        raise ParameterError(f"temperature {temperature_k!r} K must be above 0 K")


def spot_noise_factor(input_density_v2_per_hz: ArrayLike, *, rs_ohm: float,
                      temperature_k: float) -> NDArray[np.float64]:
    """Spot noise factor F(f), equation (2) of this module.

    Parameters
    ----------
    input_density_v2_per_hz : array_like
        Total input-referred noise density e_ni^2 with the input terminated
        in `rs_ohm`, in V^2/Hz (source noise included).
    rs_ohm : float
        Source resistance in ohm, > 0.
    temperature_k : float
        Physical temperature of the source resistor in kelvin.

    Returns
    -------
    numpy.ndarray
        Noise factor (linear, >= 1 up to estimation scatter); NaN where the
        density is NaN.

    References
    ----------
    .. [1] IEEE Std 161 (noise factor, T0 = 290 K).
    """
    check_source(rs_ohm=rs_ohm, temperature_k=temperature_k)
    e2 = np.asarray(input_density_v2_per_hz, dtype=np.float64)
    source_t = thermal_density_v2_per_hz(resistance_ohm=rs_ohm, temperature_k=temperature_k)
    source_t0 = 4.0 * BOLTZMANN_J_PER_K * T0_K * rs_ohm
    return 1.0 + (e2 - source_t) / source_t0


def band_noise_factor(frequency_hz: ArrayLike, input_density_v2_per_hz: ArrayLike, band: Band, *,
                      weighting: str, rs_ohm: float, temperature_k: float) -> float:
    """Band noise factor F_B, equation (3) of this module."""
    check_source(rs_ohm=rs_ohm, temperature_k=temperature_k)
    w = band_bin_weights(frequency_hz, band, weighting=weighting)
    e2 = np.asarray(input_density_v2_per_hz, dtype=np.float64)
    used = w > 0
    excess = float(np.dot(w[used], e2[used])) - float(
        thermal_density_v2_per_hz(resistance_ohm=rs_ohm, temperature_k=temperature_k)) * float(w.sum())
    return 1.0 + excess / (4.0 * BOLTZMANN_J_PER_K * T0_K * rs_ohm * float(w.sum()))


def band_rms(frequency_hz: ArrayLike, density: ArrayLike, band: Band, *, weighting: str) -> float:
    """RMS over a band of a density (equation (4) of this module for e_ni^2)."""
    w = band_bin_weights(frequency_hz, band, weighting=weighting)
    s = np.asarray(density, dtype=np.float64)
    used = w > 0
    return float(np.sqrt(np.dot(w[used], s[used])))


def third_octave_centres_hz(band: Band) -> list[tuple[float, float]]:
    """(nominal, exact) one-third-octave centres that lie in `band` (within 1 %), base 10.

    Exact centres are ``1000 * 10^(n/10)`` (IEC 61260-1:2014, base-ten
    system); nominal labels are the preferred numbers (R10 series).
    """
    nominal = [1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0]
    out = []
    for n in range(-30, 21):
        exact = 1000.0 * 10 ** (n / 10)
        label = nominal[n % 10] * 10 ** (3 + n // 10)
        if band.low_hz / 1.01 <= exact <= band.high_hz * 1.01:
            out.append((label, exact))
    return out


def third_octave_weights(frequency_hz: ArrayLike, exact_centre_hz: float) -> NDArray[np.float64]:
    """Bin weights of the one-third-octave band around an exact centre, ``f c 10^(+-1/20)``."""
    f = np.asarray(frequency_hz, dtype=np.float64)
    w = band_bin_weights(f, Band(exact_centre_hz * 10 ** (-1 / 20), exact_centre_hz * 10 ** (1 / 20)))
    if not np.any(w > 0):
        raise ParameterError(f"no spectrum bin falls near {exact_centre_hz:.1f} Hz")
    return w


def spot_means(weights: list[NDArray[np.float64]], density: ArrayLike) -> NDArray[np.float64]:
    """Mean density over each band given by its bin weights (see :func:`third_octave_weights`).

    Bins cut by a band edge count by the fraction inside.
    """
    s = np.asarray(density, dtype=np.float64)
    return np.array([float(np.dot(w, s) / w.sum()) for w in weights])
