"""Physical constants, decibel conversions and thermal noise.

All dB conversions in benchnf live here.  Power quantities are added and
subtracted in linear units, never in dB.

References
----------
.. [1] BIPM, "The International System of Units (SI)", 9th ed., 2019:
       k = 1.380649e-23 J/K exactly.
.. [2] IEEE Std 161, noise-factor definitions: standard temperature
       T0 = 290 K.
.. [3] AES17-2020, "AES standard method for digital audio engineering -
       Measurement of digital audio equipment": 0 dBFS is the RMS value of
       a full-scale sine.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "eng",
    "BOLTZMANN_J_PER_K",
    "T0_K",
    "ELEMENTARY_CHARGE_C",
    "DBU_REF_VRMS",
    "power_db",
    "amplitude_db",
    "from_power_db",
    "from_amplitude_db",
    "vrms_to_dbu",
    "vrms_to_dbv",
    "dbu_to_vrms",
    "fs_to_dbfs",
    "celsius_to_kelvin",
    "thermal_density_v2_per_hz",
    "thermal_vrms",
]

#: Boltzmann constant, exact in the 2019 SI (same value as scipy.constants.k).
BOLTZMANN_J_PER_K = 1.380649e-23
#: Elementary charge, exact in the 2019 SI (same value as scipy.constants.e).
ELEMENTARY_CHARGE_C = 1.602176634e-19
#: Standard noise temperature of IEEE Std 161.
T0_K = 290.0
#: 0 dBu: the voltage that dissipates 1 mW in 600 ohm, sqrt(0.6) V RMS.
DBU_REF_VRMS = math.sqrt(0.6)


def power_db(ratio: ArrayLike) -> NDArray[np.float64]:
    """Return ``10 log10(ratio)`` for a power ratio (``-inf`` at 0)."""
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(ratio, dtype=np.float64))


def amplitude_db(ratio: ArrayLike) -> NDArray[np.float64]:
    """Return ``20 log10(ratio)`` for an amplitude ratio (``-inf`` at 0)."""
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.asarray(ratio, dtype=np.float64))


def from_power_db(level_db: ArrayLike) -> NDArray[np.float64]:
    """Inverse of :func:`power_db`."""
    return 10.0 ** (np.asarray(level_db, dtype=np.float64) / 10.0)


def from_amplitude_db(level_db: ArrayLike) -> NDArray[np.float64]:
    """Inverse of :func:`amplitude_db`."""
    return 10.0 ** (np.asarray(level_db, dtype=np.float64) / 20.0)


def vrms_to_dbu(vrms: ArrayLike) -> NDArray[np.float64]:
    """RMS volts to dBu (0 dBu = 0.774597 V RMS).

    Examples
    --------
    >>> round(float(vrms_to_dbu(1.0)), 4)
    2.2185
    """
    return amplitude_db(np.asarray(vrms, dtype=np.float64) / DBU_REF_VRMS)


def vrms_to_dbv(vrms: ArrayLike) -> NDArray[np.float64]:
    """RMS volts to dBV (0 dBV = 1 V RMS)."""
    return amplitude_db(vrms)


def dbu_to_vrms(level_dbu: ArrayLike) -> NDArray[np.float64]:
    """dBu to RMS volts."""
    return DBU_REF_VRMS * from_amplitude_db(level_dbu)


def fs_to_dbfs(rms_fs: ArrayLike) -> NDArray[np.float64]:
    """RMS in full-scale units (1.0 = positive full scale) to dBFS per AES17.

    A full-scale sine has RMS 1/sqrt(2) and reads 0 dBFS; a full-scale
    square wave reads +3.01 dBFS.
    """
    return amplitude_db(np.asarray(rms_fs, dtype=np.float64) * math.sqrt(2.0))


def celsius_to_kelvin(temperature_c: float) -> float:
    """Degrees Celsius to kelvin."""
    return float(temperature_c) + 273.15


def thermal_density_v2_per_hz(*, resistance_ohm: ArrayLike, temperature_k: float) -> NDArray[np.float64]:
    """Open-circuit thermal (Johnson-Nyquist) noise density of a resistor, ``4 k T R``.

    Parameters
    ----------
    resistance_ohm : array_like
        Resistance in ohm, >= 0.
    temperature_k : float
        Physical temperature in kelvin, >= 0.

    Returns
    -------
    numpy.ndarray
        One-sided voltage noise density in V^2/Hz.

    References
    ----------
    .. [1] H. Nyquist, "Thermal agitation of electric charge in conductors",
           Phys. Rev. 32, 110 (1928).

    Examples
    --------
    >>> round(float(np.sqrt(thermal_density_v2_per_hz(resistance_ohm=1e3, temperature_k=290.0))) * 1e9, 4)
    4.0019
    """
    return 4.0 * BOLTZMANN_J_PER_K * float(temperature_k) * np.asarray(resistance_ohm, dtype=np.float64)


def thermal_vrms(*, resistance_ohm: float, temperature_k: float, bandwidth_hz: float) -> float:
    """RMS thermal noise voltage ``sqrt(4 k T R B)`` of a resistor over a bandwidth."""
    return float(np.sqrt(thermal_density_v2_per_hz(resistance_ohm=resistance_ohm,
                                                    temperature_k=temperature_k) * bandwidth_hz))


_PREFIXES = ((1e-12, "p"), (1e-9, "n"), (1e-6, "u"), (1e-3, "m"), (1.0, ""), (1e3, "k"), (1e6, "M"))


def eng(value: float, unit: str, digits: int = 3) -> str:
    """Engineering notation for reports: 4.65e-06 V -> '4.65 uV'.

    >>> eng(4.65e-6, "V")
    '4.65 uV'
    """
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    scale, prefix = next(((s, p) for s, p in reversed(_PREFIXES) if abs(value) >= s), _PREFIXES[0])
    return f"{value / scale:.{digits}g} {prefix}{unit}"
