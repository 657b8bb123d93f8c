"""Instrument CSV: oscilloscope time series and spectrum-analyzer traces.

The layout is benchnf's own and is documented in docs/csv.md.  In short:

* ``#`` starts a comment line; ``# key = value`` comment lines are settings
  (``rbw_hz``, ``detector``, ``reference_ohm``, ``enbw_ratio``, ``averages``,
  ``condition``);
* the first other line names the two columns, with the unit in brackets or
  parentheses (``time (s)``, ``CH1 [mV]``, ``frequency (Hz)``, ``level (dBm)``)
  or on a second line of units alone;
* the delimiter is a comma, semicolon, tab or spaces; with semicolons a
  decimal comma is accepted.

A time series becomes a :class:`~benchnf.capture.Capture` in volts; it must be
uniformly sampled.  A spectrum trace becomes a :class:`~benchnf.dsp.spectrum.Psd`:

.. math:: S(f) = \\frac{V^2_{RBW}(f)}{B_n}\\, c_{det},\\qquad B_n = \\text{RBW}\\cdot r_{ENBW}

with V^2 per RBW from the level unit (dBm into ``reference_ohm``, dBV, dBu,
V), ``r_ENBW`` the noise bandwidth over the RBW (1 unless stated), and
``c_det`` the detector's noise correction: log-averaged traces read noise
``10 gamma / ln 10 = 2.507 dB`` low (gamma Euler's constant: the mean of
10 lg X for an exponentially distributed power X), so ``c_det = 10^0.2507``;
power-averaged (``rms``) and ``sample`` traces need none.  Density units
(``V/rtHz``, ``nV/rtHz``, ``V2/Hz``, ``dBV/rtHz``) are taken as they are.

References
----------
.. [1] M. Abramowitz and I. A. Stegun, "Handbook of Mathematical Functions",
       6.3.2 (psi(1) = -gamma), for the log-average correction.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import Any

import numpy as np

from ..capture import Capture, check_condition
from ..dsp.spectrum import Psd
from ..errors import CaptureError

__all__ = ["load_csv", "LOG_AVERAGE_CORRECTION_DB"]

#: Log-averaged noise reads this much low: 10 * gamma / ln(10) dB.
LOG_AVERAGE_CORRECTION_DB = 10 * 0.5772156649015329 / math.log(10)

_TIME_UNITS = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "ns": 1e-9}
_VOLT_UNITS = {"v": 1.0, "mv": 1e-3, "uv": 1e-6, "µv": 1e-6}
_FREQ_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6}
_LEVEL_UNITS = ("dbm", "dbv", "dbu", "v", "mv", "uv", "v/rthz", "nv/rthz", "uv/rthz", "v2/hz",
                "dbv/rthz", "dbm/hz")
_TIME_NAMES = ("time", "t", "seconds", "sec")
_FREQ_NAMES = ("frequency", "freq", "f")
_SETTINGS = {"rbw_hz", "detector", "reference_ohm", "enbw_ratio", "averages", "condition"}
_DETECTORS = ("rms", "sample", "log")


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    return [c.strip() for c in line.split(delimiter)]


def _guess_delimiter(line: str) -> str | None:
    for d in ("\t", ";", ","):
        if d in line:
            return d
    return None


def _name_and_unit(cell: str) -> tuple[str, str | None]:
    m = re.match(r"^\s*([^\(\[]*?)\s*[\(\[]\s*([^\)\]]*)\s*[\)\]]\s*$", cell)
    if m:
        return m.group(1).strip().lower(), m.group(2).strip().lower().replace("√", "rt")
    return cell.strip().lower(), None


def _number(text: str, decimal_comma: bool) -> float:
    if decimal_comma:
        text = text.replace(",", ".")
    return float(text)


def load_csv(path: str | Path, *, rbw_hz: float | None = None, detector: str | None = None,
             reference_ohm: float | None = None, enbw_ratio: float | None = None) -> Capture | Psd:
    """Read an instrument CSV as a time-series Capture (volts) or a spectrum Psd (V^2/Hz).

    Settings given here override the file's ``# key = value`` lines.

    Raises
    ------
    CaptureError
        Unreadable file, unidentifiable or mixed columns, non-uniform sampling,
        non-monotonic frequency, a missing RBW or detector for a per-RBW level.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise CaptureError(f"{path} cannot be read as text ({err})") from err
    settings: dict[str, str] = {}
    rows: list[str] = []
    for raw in text.splitlines():
        line = raw.strip()
        if not line:
            continue
        if line.startswith("#"):
            m = re.match(r"#\s*([A-Za-z_]+)\s*[=:]\s*(.+)$", line)
            if m and m.group(1).lower() in _SETTINGS:
                settings[m.group(1).lower()] = m.group(2).strip()
            continue
        rows.append(line)
    if len(rows) < 3:
        raise CaptureError(f"{path} holds fewer than two data rows under a header: nothing to analyse")
    delimiter = _guess_delimiter(rows[0])
    header = _split(rows[0], delimiter)
    if len(header) != 2:
        raise CaptureError(f"{path}: expected two columns (time and voltage, or frequency and level), "
                           f"found {len(header)} in the header {rows[0]!r}")
    (n0, u0), (n1, u1) = (_name_and_unit(c) for c in header)
    start = 1
    unit_row = _split(rows[1], delimiter)
    try:
        [float(c.replace(",", ".")) for c in unit_row]
    except ValueError:
        if len(unit_row) != 2:
            raise CaptureError(f"{path}: the line after the header is neither units nor data") from None
        u0, u1 = u0 or unit_row[0].lower(), u1 or unit_row[1].lower()
        start = 2
    decimal_comma = delimiter == ";"
    try:
        data = np.array([[_number(c, decimal_comma) for c in _split(r, delimiter)] for r in rows[start:]])
    except ValueError as err:
        raise CaptureError(f"{path}: a data row is not two numbers ({err}); mixed units or text in "
                           f"the data are not accepted") from err
    if data.ndim != 2 or data.shape[1] != 2:
        raise CaptureError(f"{path}: every data row must hold exactly two numbers")
    if not np.all(np.isfinite(data)):
        raise CaptureError(f"{path}: the data hold NaN or infinite values")
    if n0 in _TIME_NAMES or (u0 in _TIME_UNITS and n0 not in _FREQ_NAMES):
        return _time_series(path, data, u0, n1, u1, settings)
    if n0 in _FREQ_NAMES or u0 in _FREQ_UNITS:
        return _trace(path, data, u0, u1, settings, rbw_hz=rbw_hz, detector=detector,
                      reference_ohm=reference_ohm, enbw_ratio=enbw_ratio)
    raise CaptureError(f"{path}: the first column {header[0]!r} is neither time nor frequency: name it "
                       f"'time (s)' or 'frequency (Hz)'")


def _time_series(path: Path, data: np.ndarray, u_time: str | None, name: str, u_volt: str | None,
                 settings: dict[str, str]) -> Capture:
    if u_time not in _TIME_UNITS:
        raise CaptureError(f"{path}: the time column's unit {u_time!r} is not one of "
                           f"{', '.join(_TIME_UNITS)}")
    if u_volt not in _VOLT_UNITS:
        raise CaptureError(f"{path}: the column {name!r} has unit {u_volt!r}; a voltage in "
                           f"{', '.join(_VOLT_UNITS)} is needed")
    t = data[:, 0] * _TIME_UNITS[u_time]
    v = data[:, 1] * _VOLT_UNITS[u_volt]
    dt = np.diff(t)
    if np.any(dt <= 0):
        raise CaptureError(f"{path}: the time column does not increase steadily")
    step = float(np.median(dt))
    if np.max(np.abs(dt - step)) > 1e-3 * step + 1e-12:
        raise CaptureError(f"{path}: the samples are not uniformly spaced in time (steps from "
                           f"{dt.min():.3g} to {dt.max():.3g} s): resample on the instrument, benchnf "
                           f"will not guess")
    # Samples are held in full-scale units; the scale is chosen so that they stay below 0.5
    # (a CSV says nothing about the instrument's range, so clipping cannot be checked).
    peak = float(np.max(np.abs(v))) or 1.0
    vpfs = 2.0 * peak
    condition = settings.get("condition")
    check_condition(condition)
    return Capture.from_array(v / vpfs, sample_rate_hz=1.0 / step, volts_per_fs=vpfs,
                              condition=condition, metadata={"source": str(path), "kind": "time series"})


def _trace(path: Path, data: np.ndarray, u_freq: str | None, u_level: str | None, settings: dict[str, str], *,
           rbw_hz: float | None, detector: str | None, reference_ohm: float | None,
           enbw_ratio: float | None) -> Psd:
    if u_freq not in _FREQ_UNITS:
        raise CaptureError(f"{path}: the frequency unit {u_freq!r} is not one of {', '.join(_FREQ_UNITS)}")
    if u_level not in _LEVEL_UNITS:
        raise CaptureError(f"{path}: the level unit {u_level!r} is not one of {', '.join(_LEVEL_UNITS)}")
    f = data[:, 0] * _FREQ_UNITS[u_freq]
    level = data[:, 1]
    df = np.diff(f)
    if np.any(df <= 0):
        raise CaptureError(f"{path}: the frequency column is not strictly increasing")
    step = float(np.median(df))
    if np.max(np.abs(df - step)) > 1e-3 * step:
        raise CaptureError(f"{path}: the frequency points are not evenly spaced")

    def setting(name: str, given: Any, kind=float):
        value = given if given is not None else settings.get(name)
        if value is None:
            return None
        try:
            return kind(value)
        except ValueError:
            raise CaptureError(f"{path}: setting {name} = {value!r} is not a valid {kind.__name__}") from None

    density_units = ("v/rthz", "nv/rthz", "uv/rthz", "v2/hz", "dbv/rthz", "dbm/hz")
    ref_ohm = setting("reference_ohm", reference_ohm) or 50.0
    det = (detector or settings.get("detector") or "").lower()
    rbw = setting("rbw_hz", rbw_hz)
    if u_level in density_units:
        s = {"v/rthz": level ** 2, "nv/rthz": (level * 1e-9) ** 2, "uv/rthz": (level * 1e-6) ** 2,
             "v2/hz": level, "dbv/rthz": 10 ** (level / 10),
             "dbm/hz": 10 ** (level / 10) * 1e-3 * ref_ohm}[u_level]
        noise_bw = rbw if rbw else step
        corr_db = 0.0
    else:
        if rbw is None:
            raise CaptureError(f"{path}: a level in {u_level} needs the RBW: add '# rbw_hz = ...' or give "
                               f"--rbw-hz")
        if not rbw > 0:
            raise CaptureError(f"{path}: rbw_hz must be > 0")
        if det not in _DETECTORS:
            raise CaptureError(f"{path}: state the trace's detector ('# detector = rms', 'sample' or 'log'): "
                               f"a log-averaged trace reads noise {LOG_AVERAGE_CORRECTION_DB:.2f} dB low")
        ratio = setting("enbw_ratio", enbw_ratio) or 1.0
        v2 = {"dbm": 10 ** (level / 10) * 1e-3 * ref_ohm, "dbv": 10 ** (level / 10),
              "dbu": 0.6 * 10 ** (level / 10), "v": level ** 2, "mv": (level * 1e-3) ** 2,
              "uv": (level * 1e-6) ** 2}[u_level]
        noise_bw = rbw * ratio
        corr_db = LOG_AVERAGE_CORRECTION_DB if det == "log" else 0.0
        s = v2 / noise_bw * 10 ** (corr_db / 10)
    averages = setting("averages", None, int) or 1
    seg = int(round(2 * f[-1] / step)) + 2
    return Psd(frequency_hz=f, psd_per_hz=s, unit="V", sample_rate_hz=seg * step, segment_length=seg,
               hop=seg, window=f"instrument trace ({det or 'density'}, +{corr_db:.2f} dB)", enbw_hz=noise_bw,
               n_averages=averages, dof=2.0 * averages)
