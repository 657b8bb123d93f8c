"""Y-factor noise figure: noise-diode (ENR) and two-temperature methods, second-stage correction.

With the source at a hot temperature Th and a cold one Tc, the noise powers
at the receiver give ``Y = N_hot / N_cold`` and

.. math::

    T_e = \\frac{T_h - Y T_c}{Y - 1},\\qquad F = 1 + \\frac{T_e}{T_0}

A noise source states its excess noise ratio ``ENR = (T_h - T0) / T0``, so
``T_h = T0 (1 + 10^{ENR/10})``; its cold temperature is its physical
temperature (not assumed to be T0).  With ``T_c = T0`` this reduces to
``NF = ENR_dB - 10 lg(Y - 1)``.

Second stage: measuring the source straight into the receiver (the
calibration pair) gives the receiver's own F2; then the DUT's gain and noise
factor follow from the same data,

.. math::

    G_1 = \\frac{N_{12,h} - N_{12,c}}{N_{2,h} - N_{2,c}},\\qquad
    F_1 = F_{12} - \\frac{F_2 - 1}{G_1}

A matched loss L at physical temperature T has ``F = 1 + (L - 1) T / T0``
and gain 1/L; a loss before the DUT is removed as
``F_DUT = 1 + (F_sys - F_L) / L``; a loss after the DUT joins the second
stage: ``F_2' = F_L + L (F_2 - 1)`` and ``G_DUT = L G_1``.

References
----------
.. [1] H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32(7),
       419-422, 1944.
.. [2] M. G. Arthur, NBS Monograph 142, National Bureau of Standards, 1974
       (Y-factor and second-stage equations).
.. [3] IEEE Std 161, T0 = 290 K.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import MeasurementError, ParameterError
from ..units import T0_K

__all__ = ["EnrTable", "load_enr_table", "hot_temperature_from_enr", "noise_temperature_from_y",
           "noise_factor_from_temperature", "noise_temperature_from_factor", "second_stage_correction",
           "dut_gain_from_powers", "loss_noise_factor", "remove_input_loss", "join_output_loss",
           "check_temperature"]


#: The ENR a noise source may have, dB: below 0 dB its hot state is less than T0 above T0 (no diode source is so weak), above
#: 40 dB it would compress any DUT worth measuring (common practice: diode sources give about 5-35 dB).
ENR_RANGE_DB = (0.0, 40.0)


def check_temperature(value_k: float, what: str) -> float:
    """Return `value_k` if it is a temperature above 0 K, else raise."""
    if not (math.isfinite(value_k) and value_k > 0):
        raise ParameterError(f"{what} {value_k!r} K is not a temperature above 0 K")
    return float(value_k)


def hot_temperature_from_enr(enr_db: ArrayLike) -> NDArray[np.float64]:
    """``T_h = T0 (1 + 10^(ENR/10))``, kelvin.

    Examples
    --------
    >>> round(float(hot_temperature_from_enr(15.0)), 1)
    9460.6
    """
    return T0_K * (1.0 + 10.0 ** (np.asarray(enr_db, dtype=np.float64) / 10.0))


def noise_temperature_from_y(y: ArrayLike, *, t_hot_k: ArrayLike, t_cold_k: ArrayLike) -> NDArray[np.float64]:
    """``T_e = (T_h - Y T_c) / (Y - 1)``; Y must exceed 1.

    Raises
    ------
    MeasurementError
        Y <= 1 somewhere: the hot capture is not hotter than the cold one.
    """
    y = np.asarray(y, dtype=np.float64)
    if np.any(~(y > 1.0)):
        raise MeasurementError("Y <= 1: the hot capture is not hotter than the cold one; check which "
                               "file is which, and that the noise source is switching")
    return (np.asarray(t_hot_k) - y * np.asarray(t_cold_k)) / (y - 1.0)


def noise_factor_from_temperature(te_k: ArrayLike) -> NDArray[np.float64]:
    """``F = 1 + T_e / T0``."""
    return 1.0 + np.asarray(te_k, dtype=np.float64) / T0_K


def noise_temperature_from_factor(f: ArrayLike) -> NDArray[np.float64]:
    """``T_e = (F - 1) T0``."""
    return (np.asarray(f, dtype=np.float64) - 1.0) * T0_K


def dut_gain_from_powers(n12_hot: ArrayLike, n12_cold: ArrayLike, n2_hot: ArrayLike,
                         n2_cold: ArrayLike) -> NDArray[np.float64]:
    """``G1 = (N12h - N12c) / (N2h - N2c)``: the DUT's available gain from the same data."""
    return (np.asarray(n12_hot) - np.asarray(n12_cold)) / (np.asarray(n2_hot) - np.asarray(n2_cold))


def second_stage_correction(f12: ArrayLike, f2: ArrayLike, g1: ArrayLike) -> NDArray[np.float64]:
    """``F1 = F12 - (F2 - 1) / G1`` (Friis, solved for the first stage).

    Examples
    --------
    >>> f1, f2, g1 = 10 ** 0.2, 10.0, 10 ** 1.5
    >>> f12 = f1 + (f2 - 1) / g1
    >>> round(10 * math.log10(f12), 4), round(float(second_stage_correction(f12, f2, g1)), 6) == round(f1, 6)
    (2.7173, True)
    """
    return np.asarray(f12, dtype=np.float64) - (np.asarray(f2, dtype=np.float64) - 1.0) / np.asarray(g1)


def loss_noise_factor(loss_db: float, temperature_k: float) -> float:
    """Noise factor of a matched loss L at physical temperature T: ``1 + (L - 1) T / T0``.

    Examples
    --------
    >>> round(10 * math.log10(loss_noise_factor(6.0, 290.0)), 3)
    6.0
    """
    check_temperature(temperature_k, "loss temperature")
    if not (math.isfinite(loss_db) and loss_db >= 0):
        raise ParameterError(f"loss {loss_db!r} dB must be >= 0 dB")
    loss = 10 ** (loss_db / 10)
    return 1.0 + (loss - 1.0) * temperature_k / T0_K


def remove_input_loss(f_system: ArrayLike, loss_db: float, temperature_k: float) -> NDArray[np.float64]:
    """DUT noise factor behind a loss: ``F_DUT = 1 + (F_sys - F_L) / L``."""
    loss = 10 ** (loss_db / 10)
    return 1.0 + (np.asarray(f_system) - loss_noise_factor(loss_db, temperature_k)) / loss


def join_output_loss(f2: ArrayLike, loss_db: float, temperature_k: float) -> NDArray[np.float64]:
    """Second stage including a loss after the DUT: ``F_2' = F_L + L (F_2 - 1)``."""
    loss = 10 ** (loss_db / 10)
    return loss_noise_factor(loss_db, temperature_k) + loss * (np.asarray(f2) - 1.0)


@dataclass(frozen=True)
class EnrTable:
    """A noise source's ENR against frequency, with its cold (off) temperature.

    Values between points are interpolated linearly in frequency on the dB
    values (the way calibration tables are read); outside the table nothing is
    extrapolated.
    """

    frequency_hz: NDArray[np.float64]
    enr_db: NDArray[np.float64]
    cold_k: float = T0_K
    enr_uncertainty_db: float | None = None
    name: str = ""
    cold_stated: bool = True  # False where cold_k is T0 only because nothing stated it

    def __post_init__(self) -> None:
        f = np.asarray(self.frequency_hz, dtype=np.float64)
        e = np.asarray(self.enr_db, dtype=np.float64)
        if f.ndim != 1 or f.shape != e.shape or f.size < 1:
            raise ParameterError("an ENR table needs matching lists of frequencies and ENR values")
        if f.size > 1 and np.any(np.diff(f) <= 0):
            raise ParameterError("the ENR table's frequencies must increase")
        bad = e[~((e >= ENR_RANGE_DB[0]) & (e <= ENR_RANGE_DB[1]))]
        if bad.size:
            raise ParameterError(f"an ENR of {float(bad[0]):g} dB is not a noise source's: noise sources give "
                                 f"{ENR_RANGE_DB[0]:g} to {ENR_RANGE_DB[1]:g} dB (check the table's units and its "
                                 f"columns, or the --enr-db value)")
        check_temperature(self.cold_k, "the noise source's cold temperature")
        object.__setattr__(self, "frequency_hz", f)
        object.__setattr__(self, "enr_db", e)

    @classmethod
    def constant(cls, enr_db: float, *, cold_k: float | None = None) -> "EnrTable":
        """One ENR at every frequency (cold temperature T0 when not given, and marked as assumed)."""
        return cls(np.array([0.0]), np.array([float(enr_db)]), T0_K if cold_k is None else cold_k, None,
                   f"{enr_db:g} dB", cold_stated=cold_k is not None)

    def at(self, frequency_hz: ArrayLike) -> NDArray[np.float64]:
        """ENR (dB) at the given frequencies; refuse any outside the table."""
        f = np.asarray(frequency_hz, dtype=np.float64)
        if self.frequency_hz.size == 1:
            return np.full(f.shape, float(self.enr_db[0]))
        lo, hi = self.frequency_hz[0], self.frequency_hz[-1]
        if np.any(f < lo * (1 - 1e-9)) or np.any(f > hi * (1 + 1e-9)):
            raise ParameterError(f"the ENR table covers {lo:g}-{hi:g} Hz, not {float(np.min(f)):g}-"
                                 f"{float(np.max(f)):g} Hz: choose a band inside it or give a fuller table")
        return np.interp(f, self.frequency_hz, self.enr_db)


_FREQUENCY_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}


def _header_frequency_scale(first_field: str, path: Path) -> float:
    """Hz per unit of the frequency column, from its header (``Freq MHz``, ``frequency (GHz)``, ...)."""
    import re
    found = [u for u in re.findall(r"[a-z]+", first_field.lower()) if u in _FREQUENCY_UNITS]
    if len(found) > 1:
        raise ParameterError(f"ENR table {path}: the header {first_field!r} names two frequency units")
    return _FREQUENCY_UNITS[found[0]] if found else 1.0


def load_enr_table(path: str | Path) -> EnrTable:
    """Read an ENR table: TOML (``points = [[f_hz, enr_db], ...]``, ``cold_k``,
    ``enr_uncertainty_db``, ``name``) or CSV (``frequency_hz,enr_db`` with
    optional ``# cold_k = ...`` lines; a header naming Hz, kHz, MHz or GHz for the
    first column sets its unit, e.g. ``Freq MHz,ENR dB``).  See docs/yfactor.md."""
    path = Path(path)
    if not path.is_file():
        raise ParameterError(f"ENR table {path}: no such file")
    if path.suffix.lower() == ".toml":
        from ..io.toml_file import check_keys, number, read_toml
        data = read_toml(path, "ENR table")
        where = f"ENR table {path}"
        check_keys(data, {"points", "cold_k", "enr_uncertainty_db", "name"}, where)
        pts = data.get("points")
        if not isinstance(pts, list) or not all(isinstance(p, list) and len(p) == 2 for p in pts):
            raise ParameterError(f"ENR table {path}: 'points' must be a list of [frequency_hz, enr_db]")
        arr = np.array([[number(f, where=where, key="frequency_hz", low=0.0, low_open=True),
                         number(e, where=where, key="enr_db", low=-50.0, high=100.0)] for f, e in pts],
                       dtype=np.float64).reshape(-1, 2)
        u = data.get("enr_uncertainty_db")
        return EnrTable(arr[:, 0], arr[:, 1],
                        number(data.get("cold_k", T0_K), where=where, key="cold_k", low=0.0, high=1e4,
                               low_open=True),
                        None if u is None else number(u, where=where, key="enr_uncertainty_db", low=0.0, high=10.0),
                        str(data.get("name", path.stem)), cold_stated="cold_k" in data)
    rows, cold, scale, cold_stated = [], T0_K, 1.0, False
    for line in path.read_text(encoding="utf-8").splitlines():
        line = line.strip()
        if not line:
            continue
        if line.startswith("#"):
            if "cold_k" in line and "=" in line:
                try:
                    cold, cold_stated = float(line.split("=", 1)[1]), True
                except ValueError:
                    raise ParameterError(f"ENR table {path}: {line!r} does not give cold_k as a number") from None
            continue
        parts = [p.strip() for p in line.replace(";", ",").split(",")]
        try:
            rows.append([float(parts[0]) * scale, float(parts[1])])
        except (ValueError, IndexError):
            if rows:
                raise ParameterError(f"ENR table {path}: row {line!r} is not two numbers") from None
            scale = _header_frequency_scale(parts[0], path)
    if not rows:
        raise ParameterError(f"ENR table {path} holds no rows of frequency_hz,enr_db")
    arr = np.array(rows)
    if not (np.all(np.isfinite(arr)) and np.all(arr[:, 0] > 0) and math.isfinite(cold) and cold > 0):
        raise ParameterError(f"ENR table {path}: frequencies and cold_k must be finite numbers > 0")
    return EnrTable(arr[:, 0], arr[:, 1], cold, None, path.stem, cold_stated=cold_stated)
